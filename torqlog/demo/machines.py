"""Demo machines of the invented Brindlemoor Works plant: drive and load torque models.

Three invented machines are modelled well enough that their logs obey the physics the
rest of torqlog measures (energy swing, speed fluctuation, cycle period):

``press``
    "Press 4, line B": a mechanical press, 45 strokes/min, with a die-force pulse over
    the last 75 degrees before bottom dead centre, driven by a 22 kW induction motor
    through a 32:1 reduction. The logged torque is the load torque at the crank.
``compressor``
    "Compressor K2": a two-stage reciprocating air compressor (LP and HP cylinders,
    cranks 90 degrees apart) at about 600 rpm, belt-driven by an 11 kW induction motor.
    The logged torque is the load torque at the crank.
``engine``
    "Genset G1": a single-cylinder four-stroke diesel engine at 1500 rpm driving a
    generator. The logged torque is the crankshaft (engine) torque.

Each machine is one rigid inertia between a drive and a load,
``I dω/dt = T_drive(θ, ω) − T_load(θ, ω)``; :mod:`torqlog.demo.simulate` integrates it and
writes the logs. :data:`PROFILE_PARTS` holds the invented shaft, flywheel and torsional
data of each machine for its profile.

Angle conventions: the crank angle [rad] is zero at top dead centre (for the engine: TDC
at the start of the intake stroke, so the firing TDC is at 4π·k + 2π).

References
----------
.. [1] J. B. Heywood, *Internal Combustion Engine Fundamentals*, McGraw-Hill, 1988,
   sec. 2.2 (slider-crank geometry, cylinder volume) and ch. 9 (Wiebe burn-fraction
   function, a = 5, m = 2).
.. [2] J. J. Uicker, G. R. Pennock, J. E. Shigley, *Theory of Machines and Mechanisms*,
   5th ed., Oxford University Press, 2017, chapter on the dynamics of reciprocating
   engines (gas-force and inertia torque of the slider-crank).
.. [3] T. D. Eastop, A. McConkey, *Applied Thermodynamics for Engineering
   Technologists*, 5th ed., Longman, 1993, chapter on reciprocating compressors
   (ideal cycle with clearance, polytropic compression and re-expansion).
.. [4] A. E. Fitzgerald, C. Kingsley, S. D. Umans, *Electric Machinery*, 6th ed.,
   McGraw-Hill, 2003, ch. 6 (induction motor torque proportional to slip at small slip).
.. [5] R. G. Budynas, J. K. Nisbett, *Shigley's Mechanical Engineering Design*, 10th ed.,
   McGraw-Hill, 2015, sec. 16-12 (flywheels: equation of motion of a rotating inertia).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np
from scipy.integrate import quad

from torqlog.errors import UsageError

_RPM = 2.0 * math.pi / 60.0
_TWO_PI = 2.0 * math.pi


# ============================================================================ kinematics
def slider_crank(angle: np.ndarray | float, crank_radius: float,
                 rod_length: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Slider position and its first two angle derivatives for a slider-crank.

    Parameters
    ----------
    angle : array [rad]
        Crank angle measured from the dead centre where the slider is farthest from the
        crank axis (engine top dead centre).
    crank_radius : float [m]
        Crank throw ``r`` (half the stroke).
    rod_length : float [m]
        Connecting-rod length ``l`` between centres (``l > r``).

    Returns
    -------
    x : array [m]
        Distance from the crank axis to the slider (gudgeon) pin,
        ``x = r cos θ + sqrt(l² − r² sin² θ)``.
    dx : array [m/rad]
        ``dx/dθ``; the slider velocity is ``dx/dθ · ω``.
    d2x : array [m/rad^2]
        ``d²x/dθ²``; at constant speed the slider acceleration is ``d2x · ω²``.

    References
    ----------
    Heywood (1988), sec. 2.2; Uicker, Pennock and Shigley (2017), slider-crank
    kinematics (see module references).
    """
    th = np.asarray(angle, dtype=float)
    r, l = crank_radius, rod_length
    s, c = np.sin(th), np.cos(th)
    q = np.sqrt(l * l - (r * s) ** 2)
    x = r * c + q
    dx = -r * s - r * r * s * c / q
    d2x = -r * c - r * r * ((c * c - s * s) / q + r * r * s * s * c * c / q**3)
    return x, dx, d2x


class SliderCrankCylinder:
    """Piston area, swept volume and cylinder volume of a slider-crank cylinder.

    The base of :class:`Cylinder` and :class:`FourStrokeEngine`, which give ``bore``,
    ``crank_radius`` and ``rod_length`` [m], ``phase`` [rad] (crank angle at which the
    cylinder is at top dead centre) and ``clearance_volume`` [m^3].

    References
    ----------
    Heywood (1988), sec. 2.2: cylinder volume of the slider-crank (see module
    references).
    """

    bore: float
    crank_radius: float
    rod_length: float
    phase: float
    clearance_volume: float

    @property
    def area(self) -> float:
        """Piston area [m^2]."""
        return math.pi * self.bore**2 / 4.0

    @property
    def swept_volume(self) -> float:
        """Swept volume [m^3]."""
        return self.area * 2.0 * self.crank_radius

    def volume(self, angle: np.ndarray | float) -> np.ndarray:
        """Cylinder volume [m^3] at crank ``angle`` [rad], ``V = V_c + A (l + r − x)``."""
        x, _, _ = slider_crank(np.asarray(angle) - self.phase, self.crank_radius,
                               self.rod_length)
        return self.clearance_volume + self.area * (self.rod_length + self.crank_radius - x)


# ============================================================================ drives
@dataclass(frozen=True)
class InductionMotor:
    """Induction motor in its linear slip region, referred to the logged shaft.

    Attributes
    ----------
    power : float [W]
        Rated output power.
    sync_speed : float [rad/s]
        Synchronous speed of the motor shaft.
    rated_speed : float [rad/s]
        Motor shaft speed at rated power.
    speed_ratio : float
        Motor speed / logged shaft speed (reduction ratio of belt and gears).
    rotor_inertia : float [kg*m^2]
        Rotor inertia on the motor shaft (for the profile; it is already part of the
        machine's inertia referred to the logged shaft).
    """

    power: float
    sync_speed: float
    rated_speed: float
    speed_ratio: float
    rotor_inertia: float = 0.0

    @property
    def rated_torque(self) -> float:
        """Rated torque on the motor shaft, ``P / ω_rated`` [N*m]."""
        return self.power / self.rated_speed

    @property
    def stiffness(self) -> float:
        """Slope of the torque–speed line referred to the logged shaft [N*m*s/rad]."""
        return (self.speed_ratio**2 * self.rated_torque
                / (self.sync_speed - self.rated_speed))

    def torque(self, angle: np.ndarray | float, speed: np.ndarray | float) -> np.ndarray:
        """Drive torque at the logged shaft.

        Parameters
        ----------
        angle : array [rad]
            Shaft angle (unused: the motor torque depends on speed only).
        speed : array [rad/s]
            Logged shaft speed.

        Returns
        -------
        array [N*m]
            ``T = n · T_rated · (ω_sync − n ω) / (ω_sync − ω_rated)``, ``n`` the speed
            ratio; transmission losses are neglected.

        References
        ----------
        Fitzgerald, Kingsley and Umans (2003), ch. 6: at small slip the induction-motor
        torque is proportional to slip.
        """
        w = np.asarray(speed, dtype=float)
        n = self.speed_ratio
        return n * self.rated_torque * (self.sync_speed - n * w) / (
            self.sync_speed - self.rated_speed)

    def scaled(self, factor: float) -> InductionMotor:
        """The motor is not changed by the load scale."""
        return self


@dataclass(frozen=True)
class GeneratorLoad:
    """Generator load on an engine, ``T = T0 + c (ω − ω0)``.

    Attributes
    ----------
    torque0 : float [N*m]
        Load torque at the reference speed.
    damping : float [N*m*s/rad]
        Rise of load torque with speed ``c``.
    speed0 : float [rad/s]
        Reference speed ``ω0``.
    """

    torque0: float
    damping: float
    speed0: float

    def torque(self, angle: np.ndarray | float, speed: np.ndarray | float) -> np.ndarray:
        """Load torque [N*m] at shaft ``speed`` [rad/s]; ``angle`` [rad] is unused."""
        return self.torque0 + self.damping * (np.asarray(speed, dtype=float) - self.speed0)

    def scaled(self, factor: float) -> GeneratorLoad:
        """The same generator with its electrical load scaled by ``factor``."""
        return dataclasses.replace(self, torque0=self.torque0 * factor)


# ============================================================================ loads
@dataclass(frozen=True)
class PressLoad:
    """Load torque at the crank of a mechanical press.

    A constant friction torque plus the die force acting over a working window before
    bottom dead centre, times the slider-crank lever arm. The die force rises as a
    half raised cosine from zero at the start of the window to its peak at bottom dead
    centre; the lever arm is zero there, so the torque pulse is smooth at both ends.

    Attributes
    ----------
    friction : float [N*m]
        Constant friction torque at the crank.
    work : float [J]
        Energy the die takes per stroke.
    window : float [rad]
        Crank angle before bottom dead centre over which the die works.
    crank_radius, rod_length : float [m]
        Slider-crank geometry (stroke = 2 · crank radius).

    Notes
    -----
    Press angle: 0 at top dead centre (slide nearest the crank axis), π at bottom dead
    centre.
    """

    friction: float
    work: float
    window: float
    crank_radius: float
    rod_length: float
    peak_force: float = field(init=False, default=0.0)

    def __post_init__(self) -> None:
        unit_work, _ = quad(lambda a: float(self._shape(a) * self._lever(a)),
                            math.pi - self.window, math.pi, epsabs=0.0, epsrel=1e-12)
        object.__setattr__(self, "peak_force", self.work / unit_work)

    def _shape(self, angle: np.ndarray | float) -> np.ndarray:
        phase = np.mod(np.asarray(angle, dtype=float), _TWO_PI)
        u = (phase - (math.pi - self.window)) / self.window
        inside = (u >= 0.0) & (u <= 1.0)
        return np.where(inside, 0.5 * (1.0 - np.cos(math.pi * np.clip(u, 0, 1))), 0.0)

    def _lever(self, angle: np.ndarray | float) -> np.ndarray:
        # slide travel away from the crank axis per radian: d/dφ of x(φ + π)
        _, dx, _ = slider_crank(np.asarray(angle, dtype=float) + math.pi,
                                self.crank_radius, self.rod_length)
        return dx

    def die_force(self, angle: np.ndarray | float) -> np.ndarray:
        """Die force on the slide [N] at crank ``angle`` [rad]."""
        return self.peak_force * self._shape(angle)

    def torque(self, angle: np.ndarray | float,
               speed: np.ndarray | float | None = None) -> np.ndarray:
        """Load torque at the crank.

        Parameters
        ----------
        angle : array [rad]
            Crank angle (0 at top dead centre).
        speed : array [rad/s], optional
            Unused (the slide mass is neglected).

        Returns
        -------
        array [N*m]
            ``friction + F_die(θ) · dx/dθ``.

        References
        ----------
        Uicker, Pennock and Shigley (2017): torque = slider force × dx/dθ (virtual work).
        """
        return self.friction + self.die_force(angle) * self._lever(angle)

    def scaled(self, factor: float) -> PressLoad:
        """The same press with the die work scaled by ``factor``."""
        return dataclasses.replace(self, work=self.work * factor)


@dataclass(frozen=True)
class Cylinder(SliderCrankCylinder):
    """One single-acting reciprocating-compressor cylinder (ideal cycle with clearance).

    Attributes
    ----------
    bore : float [m]
    crank_radius : float [m]
    rod_length : float [m]
    clearance : float
        Clearance volume / swept volume.
    suction : float [Pa]
        Suction pressure (absolute).
    discharge : float [Pa]
        Discharge pressure (absolute).
    exponent : float
        Polytropic exponent ``n`` of compression and re-expansion.
    phase : float [rad]
        Crank angle at which this cylinder is at top dead centre.
    reciprocating_mass : float [kg]
        Piston, pin and the reciprocating share of the rod.
    """

    bore: float
    crank_radius: float
    rod_length: float
    clearance: float
    suction: float
    discharge: float
    exponent: float
    phase: float
    reciprocating_mass: float

    @property
    def clearance_volume(self) -> float:
        """Clearance volume [m^3]."""
        return self.clearance * self.swept_volume

    def pressure(self, angle: np.ndarray | float) -> np.ndarray:
        """Cylinder pressure [Pa] of the ideal cycle with clearance.

        Re-expansion from ``discharge`` after top dead centre until the suction pressure
        is reached, suction to bottom dead centre, polytropic compression until the
        discharge pressure is reached, discharge to top dead centre (valves without
        losses).

        References
        ----------
        Eastop and McConkey (1993), reciprocating compressors (see module references).
        """
        th = np.mod(np.asarray(angle, dtype=float) - self.phase, _TWO_PI)
        v = self.volume(th + self.phase)
        vc = self.clearance_volume
        vmax = vc + self.swept_volume
        n = self.exponent
        outward = th <= math.pi
        p_out = np.maximum(self.suction, self.discharge * (vc / v) ** n)
        p_in = np.minimum(self.discharge, self.suction * (vmax / v) ** n)
        return np.where(outward, p_out, p_in)

    def indicated_work(self) -> float:
        """Indicated work per revolution [J], closed form of the ideal cycle.

        ``W = n/(n−1) · p_s · (V1 − V4) · ((p_d/p_s)^((n−1)/n) − 1)`` with ``V1`` the
        volume at bottom dead centre and ``V4 = V_c (p_d/p_s)^(1/n)`` the volume at the
        end of re-expansion.

        References
        ----------
        Eastop and McConkey (1993), reciprocating compressors, work with clearance.
        """
        n = self.exponent
        vc = self.clearance_volume
        v1 = vc + self.swept_volume
        ratio = self.discharge / self.suction
        v4 = vc * ratio ** (1.0 / n)
        return n / (n - 1.0) * self.suction * (v1 - v4) * (ratio ** ((n - 1.0) / n) - 1.0)


@dataclass(frozen=True)
class CompressorLoad:
    """Load torque at the crank of a reciprocating compressor.

    Attributes
    ----------
    cylinders : tuple of Cylinder
        The cylinders, each with its crank phase.
    friction : float [N*m]
        Constant friction torque.
    crankcase : float [Pa]
        Pressure on the back of the pistons (absolute).
    scale : float
        Factor on the gas torque (capacity control; 1.0 = full load).
    """

    cylinders: tuple[Cylinder, ...]
    friction: float
    crankcase: float = 1.013e5
    scale: float = 1.0

    def gas_torque(self, angle: np.ndarray | float) -> np.ndarray:
        """Torque the crank must supply against the gas forces [N*m].

        ``Σ (p − p_cc) A · dx/dθ`` over the cylinders (virtual work); positive while a
        piston compresses.
        """
        th = np.asarray(angle, dtype=float)
        total = np.zeros_like(th)
        for cyl in self.cylinders:  # loop over the two cylinders, not over samples
            _, dx, _ = slider_crank(th - cyl.phase, cyl.crank_radius, cyl.rod_length)
            total = total + (cyl.pressure(th) - self.crankcase) * cyl.area * dx
        return self.scale * total

    def inertia_torque(self, angle: np.ndarray | float,
                       speed: np.ndarray | float) -> np.ndarray:
        """Torque the crank must supply to move the reciprocating masses [N*m].

        ``Σ m · dx/dθ · d²x/dθ² · ω²`` (rate of change of the slider kinetic energy at
        constant speed; zero mean over a revolution).

        References
        ----------
        Uicker, Pennock and Shigley (2017), inertia torque of the slider-crank.
        """
        th = np.asarray(angle, dtype=float)
        w2 = np.asarray(speed, dtype=float) ** 2
        total = np.zeros_like(th)
        for cyl in self.cylinders:
            _, dx, d2x = slider_crank(th - cyl.phase, cyl.crank_radius, cyl.rod_length)
            total = total + cyl.reciprocating_mass * dx * d2x
        return total * w2

    def torque(self, angle: np.ndarray | float,
               speed: np.ndarray | float) -> np.ndarray:
        """Total load torque at the crank [N*m]: friction + gas + inertia."""
        return self.friction + self.gas_torque(angle) + self.inertia_torque(angle, speed)

    def scaled(self, factor: float) -> CompressorLoad:
        """The same compressor with its gas load scaled by ``factor``."""
        return dataclasses.replace(self, scale=self.scale * factor)


@dataclass(frozen=True)
class FourStrokeEngine(SliderCrankCylinder):
    """Crankshaft torque of a single-cylinder four-stroke engine.

    The cylinder pressure over the 720-degree cycle is: intake at ``intake`` pressure;
    polytropic compression from bottom dead centre; combustion as the motored pressure
    times ``1 + fuel · x_b(θ)`` with a Wiebe burned fraction ``x_b``; polytropic
    expansion; blow-down from exhaust-valve opening to the ``exhaust`` pressure over
    ``blowdown``; exhaust stroke at ``exhaust`` pressure.

    Attributes
    ----------
    bore, crank_radius, rod_length : float [m]
    compression_ratio : float
    exponent : float
        Polytropic exponent of compression and expansion.
    intake, exhaust, crankcase : float [Pa]
        Absolute pressures.
    fuel : float
        Fired-to-motored pressure ratio minus one once combustion is complete.
    burn_start, burn_duration : float [rad]
        Start (cycle angle, firing TDC at 2π) and duration of combustion.
    valve_open : float [rad]
        Cycle angle of exhaust-valve opening.
    blowdown : float [rad]
        Angle over which the pressure falls to the exhaust pressure.
    reciprocating_mass : float [kg]
    friction : float [N*m]
        Constant friction torque subtracted from the crankshaft torque.
    """

    bore: float
    crank_radius: float
    rod_length: float
    compression_ratio: float
    exponent: float
    intake: float
    exhaust: float
    crankcase: float
    fuel: float
    burn_start: float
    burn_duration: float
    valve_open: float
    blowdown: float
    reciprocating_mass: float
    friction: float

    @property
    def phase(self) -> float:
        """Crank angle of top dead centre [rad]: 0, the start of the intake stroke."""
        return 0.0

    @property
    def clearance_volume(self) -> float:
        """Clearance volume [m^3], ``V_s / (r_c − 1)``."""
        return self.swept_volume / (self.compression_ratio - 1.0)

    def burned_fraction(self, angle: np.ndarray | float) -> np.ndarray:
        """Wiebe burned fraction ``1 − exp(−a ((θ−θ0)/Δθ)^(m+1))``, a = 5, m = 2.

        References
        ----------
        Heywood (1988), ch. 9 (Wiebe function with a = 5, m = 2).
        """
        psi = np.mod(np.asarray(angle, dtype=float), 2.0 * _TWO_PI)
        u = np.clip((psi - self.burn_start) / self.burn_duration, 0.0, None)
        return 1.0 - np.exp(-5.0 * u**3)

    def pressure(self, angle: np.ndarray | float, fuel: float | None = None) -> np.ndarray:
        """Cylinder pressure [Pa] at crank ``angle`` [rad] (cycle angle 0–4π)."""
        k = self.fuel if fuel is None else fuel
        psi = np.mod(np.asarray(angle, dtype=float), 2.0 * _TWO_PI)
        v = self.volume(psi)
        vmax = self.swept_volume * self.compression_ratio / (self.compression_ratio - 1.0)
        p_closed = self.intake * (vmax / v) ** self.exponent * (
            1.0 + k * self.burned_fraction(psi))
        u = np.clip((psi - self.valve_open) / self.blowdown, 0.0, 1.0)
        taper = np.cos(0.5 * math.pi * u) ** 2
        p_open = self.exhaust + (p_closed - self.exhaust) * taper
        return np.select([psi < math.pi, psi < self.valve_open, psi < 2.0 * _TWO_PI],
                         [np.full_like(psi, self.intake), p_closed, p_open])

    def gas_torque(self, angle: np.ndarray | float, fuel: float | None = None) -> np.ndarray:
        """Gas-force torque on the crank [N*m], ``−(p − p_cc) A dx/dθ``.

        References
        ----------
        Uicker, Pennock and Shigley (2017): gas-force torque of the slider-crank.
        """
        _, dx, _ = slider_crank(angle, self.crank_radius, self.rod_length)
        return -(self.pressure(angle, fuel) - self.crankcase) * self.area * dx

    def inertia_torque(self, angle: np.ndarray | float,
                       speed: np.ndarray | float) -> np.ndarray:
        """Inertia torque of the reciprocating mass on the crank [N*m].

        ``−m · dx/dθ · d²x/dθ² · ω²`` (constant-speed approximation; zero mean).

        References
        ----------
        Uicker, Pennock and Shigley (2017), inertia torque of the slider-crank.
        """
        _, dx, d2x = slider_crank(angle, self.crank_radius, self.rod_length)
        return -self.reciprocating_mass * dx * d2x * np.asarray(speed, dtype=float) ** 2

    def torque(self, angle: np.ndarray | float, speed: np.ndarray | float) -> np.ndarray:
        """Crankshaft torque [N*m]: gas + inertia − friction."""
        return self.gas_torque(angle) + self.inertia_torque(angle, speed) - self.friction

    def mean_torque(self, fuel: float | None = None) -> float:
        """Cycle-mean crankshaft torque [N*m] (inertia torque has zero mean)."""
        grid = np.linspace(0.0, 2.0 * _TWO_PI, 28801)
        gas = self.gas_torque(grid, fuel)
        return float(np.trapezoid(gas, grid) / (2.0 * _TWO_PI)) - self.friction

    def fuel_for(self, torque: float) -> float:
        """Fuel factor that gives a cycle-mean crankshaft ``torque`` [N*m].

        The mean torque is linear in the fuel factor, so two evaluations suffice.
        """
        t0 = self.mean_torque(0.0)
        t1 = self.mean_torque(1.0)
        return (torque - t0) / (t1 - t0)

    def scaled(self, factor: float) -> FourStrokeEngine:
        """The engine with fuel trimmed to ``factor`` times its mean torque (governor)."""
        k = self.fuel_for(factor * self.mean_torque())
        if k < 0:
            raise UsageError(f"load scale {factor:g} is too small for the engine model "
                             "(it would need negative fuel); use 0.3 or more")
        return dataclasses.replace(self, fuel=k)


TorqueModel = InductionMotor | GeneratorLoad | PressLoad | CompressorLoad | FourStrokeEngine


# ============================================================================ machine
@dataclass(frozen=True)
class DemoMachine:
    """An invented demo machine: one rigid inertia between a drive and a load.

    Attributes
    ----------
    key : str
        Short name (``"press"``, ``"compressor"``, ``"engine"``).
    name : str
        Plant name of the machine.
    revs_per_cycle : int
        Shaft revolutions per machine cycle.
    speed : float [rad/s]
        Mean steady-state speed of the logged shaft at ``load_scale = 1``.
    inertia : float [kg*m^2]
        All rotating inertia referred to the logged shaft.
    drive : InductionMotor or FourStrokeEngine
        Drive torque model ``drive.torque(angle, speed)``.
    load : PressLoad, CompressorLoad or GeneratorLoad
        Load torque model ``load.torque(angle, speed)``.
    logged : {"load", "drive"}
        Which torque the logger measures.
    settle : float [s]
        Simulated time discarded before the log starts.
    description : str
        One line on the machine.
    """

    key: str
    name: str
    revs_per_cycle: int
    speed: float
    inertia: float
    drive: InductionMotor | FourStrokeEngine
    load: PressLoad | CompressorLoad | GeneratorLoad
    logged: str
    settle: float
    description: str = ""

    @property
    def cycle_angle(self) -> float:
        """Shaft angle of one machine cycle, ``2π · revs_per_cycle`` [rad]."""
        return _TWO_PI * self.revs_per_cycle

    @property
    def motor(self) -> InductionMotor | None:
        """The induction motor, or None for an engine-driven machine."""
        return self.drive if isinstance(self.drive, InductionMotor) else None

    def drive_torque(self, angle: np.ndarray | float,
                     speed: np.ndarray | float) -> np.ndarray:
        """Drive torque at the logged shaft [N*m] at ``angle`` [rad], ``speed`` [rad/s]."""
        return self.drive.torque(angle, speed)

    def load_torque(self, angle: np.ndarray | float,
                    speed: np.ndarray | float | None = None) -> np.ndarray:
        """Load torque at the logged shaft [N*m]; ``speed`` [rad/s] defaults to nominal."""
        return self.load.torque(angle, self.speed if speed is None else speed)

    def logged_torque(self, angle: np.ndarray | float,
                      speed: np.ndarray | float) -> np.ndarray:
        """The torque the logger measures [N*m] (load or drive, see ``logged``)."""
        if self.logged == "drive":
            return self.drive_torque(angle, speed)
        return self.load_torque(angle, speed)

    def acceleration(self, angle: np.ndarray | float,
                     speed: np.ndarray | float) -> np.ndarray:
        """``dω/dt = (T_drive − T_load) / I`` [rad/s^2].

        References
        ----------
        Budynas and Nisbett (2015), sec. 16-12 (equation of motion of a flywheel).
        """
        return (self.drive_torque(angle, speed) - self.load_torque(angle, speed)) / self.inertia

    def with_load_scale(self, factor: float) -> DemoMachine:
        """The machine with its working load scaled by ``factor`` (``> 0``)."""
        if not (factor > 0 and math.isfinite(factor)):
            raise UsageError(f"load scale must be a positive number, got {factor!r}")
        if factor == 1.0:
            return self
        return dataclasses.replace(self, drive=self.drive.scaled(factor),
                                   load=self.load.scaled(factor))

    def with_inertia(self, inertia: float) -> DemoMachine:
        """The machine with another inertia [kg*m^2] at the logged shaft."""
        if not (inertia > 0 and math.isfinite(inertia)):
            raise UsageError(f"inertia must be a positive number in kg*m^2, got {inertia!r}")
        return dataclasses.replace(self, inertia=float(inertia))


def _press() -> DemoMachine:
    motor = InductionMotor(power=22e3, sync_speed=1500 * _RPM, rated_speed=1440 * _RPM,
                           speed_ratio=32.0, rotor_inertia=0.12)
    load = PressLoad(friction=1500.0, work=10e3, window=math.radians(75.0),
                     crank_radius=0.10, rod_length=0.60)
    return DemoMachine(
        key="press", name="Press 4, line B", revs_per_cycle=1, speed=45.57 * _RPM,
        inertia=310.0, drive=motor, load=load, logged="load", settle=3.0,
        description="mechanical press, 45 strokes/min, 22 kW motor via 32:1 reduction")


def _compressor() -> DemoMachine:
    common = dict(crank_radius=0.05, rod_length=0.22, clearance=0.06, exponent=1.3)
    lp = Cylinder(bore=0.23, suction=1.0e5, discharge=3.2e5, phase=0.0,
                  reciprocating_mass=9.0, **common)
    hp = Cylinder(bore=0.13, suction=3.1e5, discharge=9.0e5, phase=math.pi / 2,
                  reciprocating_mass=6.0, **common)
    motor = InductionMotor(power=11e3, sync_speed=1500 * _RPM, rated_speed=1465 * _RPM,
                           speed_ratio=2.45, rotor_inertia=0.07)
    load = CompressorLoad(cylinders=(lp, hp), friction=12.0, crankcase=1.0e5)
    return DemoMachine(
        key="compressor", name="Compressor K2", revs_per_cycle=1, speed=598.66 * _RPM,
        inertia=4.5, drive=motor, load=load, logged="load", settle=1.0,
        description="two-stage reciprocating air compressor, belt-driven 11 kW motor")


def _engine() -> DemoMachine:
    speed0 = 1500 * _RPM
    engine = FourStrokeEngine(
        bore=0.12, crank_radius=0.07, rod_length=0.25, compression_ratio=17.0,
        exponent=1.35, intake=0.98e5, exhaust=1.08e5, crankcase=1.0e5, fuel=1.0,
        burn_start=math.radians(345.0), burn_duration=math.radians(40.0),
        valve_open=math.radians(500.0), blowdown=math.radians(60.0),
        reciprocating_mass=2.2, friction=8.0)
    torque0 = 15e3 / speed0  # 15 kW electrical load at 1500 rpm
    engine = dataclasses.replace(engine, fuel=engine.fuel_for(torque0))
    load = GeneratorLoad(torque0=torque0, damping=20.0 * torque0 / speed0, speed0=speed0)
    return DemoMachine(
        key="engine", name="Genset G1", revs_per_cycle=2, speed=speed0, inertia=3.0,
        drive=engine, load=load, logged="drive", settle=6.0,
        description="single-cylinder four-stroke diesel engine driving a 15 kW generator")


#: The demo machines by key (read-only).
MACHINES: Mapping[str, DemoMachine] = MappingProxyType(
    {m.key: m for m in (_press(), _compressor(), _engine())})


def get_machine(key: str) -> DemoMachine:
    """Return the demo machine ``key``.

    Raises
    ------
    UsageError
        For an unknown key; the message lists the valid keys.
    """
    try:
        return MACHINES[key]
    except (KeyError, TypeError):
        raise UsageError(f"unknown demo machine {key!r}; valid machines: "
                         f"{', '.join(MACHINES)}") from None


# ============================================================================ profiles
#: Invented geometry of each demo machine for its profile (TOML fragments and numbers,
#: read-only). The torsional inertias add up to the nominal machine inertia and are scaled
#: with it, so the profile always matches the simulation (also with an inertia override).
PROFILE_PARTS: Mapping[str, Mapping[str, Any]] = MappingProxyType({
    "press": MappingProxyType({
        "target_cs": 0.10,
        "flywheel_speed_ratio": 32.0,
        "flywheel": ('shape = "annular-disc"\nmaterial = "steel"\n'
                     "outer_diameter_m = 0.70\nbore_m = 0.075\nmax_width_m = 0.12\n"
                     "interference_m = 0.00006\n"),
        "shaft": ('material = "steel"\nbearings_m = [0.0, 0.52]\n'
                  "segments = [ { length_m = 0.14, diameter_m = 0.065 },\n"
                  "             { length_m = 0.38, diameter_m = 0.075 },\n"
                  "             { length_m = 0.26, diameter_m = 0.065 } ]\n"
                  'masses = [ { name = "flywheel", mass_kg = 9.5, at_m = 0.70, seat = "shrink",'
                  " hub_length_m = 0.12 },\n"
                  '           { name = "belt pulley", mass_kg = 14.0, at_m = 0.06, seat = "key",'
                  " key_width_m = 0.018, key_height_m = 0.011, key_length_m = 0.08,"
                  " hub_length_m = 0.10 } ]\n"
                  "ultimate_strength_MPa = 630.0   # AISI 1045 cold drawn\n"
                  "yield_strength_MPa = 530.0\nbearing_ratings_N = [52000.0, 52000.0]\n"),
        "torsional_names": ("motor", "flywheel", "crank"),
        "torsional_inertias": (123.0, 155.0, 32.0),
        "stiffness": (4.0e6, 1.2e7),
    }),
    "compressor": MappingProxyType({
        "target_cs": 0.02,
        "flywheel_speed_ratio": 1.0,
        "flywheel": ('shape = "annular-disc"\nmaterial = "ductile-iron"\n'
                     "outer_diameter_m = 0.75\nbore_m = 0.06\nmax_width_m = 0.14\n"),
        # a lighter shaft than the others: its keyed flywheel seat is the marginal section
        "shaft": ('material = "steel"\nbearings_m = [0.0, 0.42]\n'
                  "segments = [ { length_m = 0.12, diameter_m = 0.040, fillet_m = 0.001 },\n"
                  "             { length_m = 0.30, diameter_m = 0.045 },\n"
                  "             { length_m = 0.16, diameter_m = 0.040, fillet_m = 0.001 } ]\n"
                  'masses = [ { name = "flywheel", mass_kg = 55.0, at_m = 0.54, seat = "key",'
                  " key_width_m = 0.012, key_height_m = 0.008, key_length_m = 0.10,"
                  " hub_length_m = 0.12 },\n"
                  '           { name = "crank webs", mass_kg = 18.0, at_m = 0.21 } ]\n'
                  "ultimate_strength_MPa = 630.0   # AISI 1045 cold drawn\n"
                  "yield_strength_MPa = 530.0\nbearing_ratings_N = [30700.0, 30700.0]\n"),
        "torsional_names": ("motor", "flywheel", "crank"),
        "torsional_inertias": (0.42, 3.6, 0.48),
        "stiffness": (3.5e4, 6.0e5),
    }),
    "engine": MappingProxyType({
        "target_cs": 0.005,
        "flywheel_speed_ratio": 1.0,
        "flywheel": ('shape = "annular-disc"\nmaterial = "steel"\n'
                     "outer_diameter_m = 0.55\nbore_m = 0.08\nmax_width_m = 0.18\n"),
        "shaft": ('material = "steel"\nbearings_m = [0.0, 0.36]\n'
                  "segments = [ { length_m = 0.10, diameter_m = 0.06 },\n"
                  "             { length_m = 0.26, diameter_m = 0.07 },\n"
                  "             { length_m = 0.14, diameter_m = 0.06 } ]\n"
                  'masses = [ { name = "flywheel", mass_kg = 50.0, at_m = 0.48, seat = "key",'
                  " key_width_m = 0.018, key_height_m = 0.011, key_length_m = 0.10,"
                  " hub_length_m = 0.12 },\n"
                  '           { name = "crank webs", mass_kg = 14.0, at_m = 0.18 } ]\n'
                  "ultimate_strength_MPa = 630.0   # AISI 1045 cold drawn\n"
                  "yield_strength_MPa = 530.0\nbearing_ratings_N = [47500.0, 47500.0]\n"),
        "torsional_names": ("crank", "flywheel", "generator"),
        "torsional_inertias": (0.25, 1.9, 0.85),
        "stiffness": (1.2e6, 2.5e5),
    }),
})
