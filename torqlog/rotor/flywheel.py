"""Flywheel geometry, burst margin, rim speed and shrink-fit check, and flywheel design.

The rotating-disc stress theory these checks use lives in :mod:`torqlog.rotor.discs`.

Model
-----
* Shapes: ``solid-disc`` (no bore; a shaft end or an integral disc), ``annular-disc``
  (uniform face width, shaft bore), ``rim`` (a rim ring of face width ``width`` between
  ``rim_inner_diameter`` and ``outer_diameter`` carried by a flat web of thickness
  ``web_width`` from the bore to the rim).
* Rim simplification: the rim and web are treated as a *stepped disc* -- two concentric
  uniform-thickness annuli joined at the rim's inner radius with continuous radial
  displacement and radial force per unit circumference (the stepped-disc method for discs
  of variable thickness, Timoshenko, Strength of Materials Part II). The web counts in
  inertia, mass and stresses. Without ``web_width`` the web is neglected: the rim is a free
  ring (inertia, mass and stresses of the ring alone; hub and fit are then not checked).
  The fillet at the web-to-rim junction, spokes, bolt holes and keyways are not modelled.
* Stresses: linear-elastic, plane stress, uniform thickness within each step, free
  outer edge, free bore (Timoshenko & Goodier section 32). Rotational stresses grow with
  speed squared.
* Where the speed enters: stresses are evaluated at the **operating speed**; the
  overspeed enters the required factor. The stress safety factor is
  ``n = strength / max criterion stress`` at the operating speed and must reach
  ``material_factor * overspeed**2`` (so at the overspeed the material still keeps
  ``material_factor``). Because stress grows with speed squared, the yield speed is
  ``speed * sqrt(n)`` and the speed safety factor ``sqrt(n)`` must reach
  ``overspeed * sqrt(material_factor)``.
* Criterion: von Mises for ductile materials against yield; maximum principal stress
  (Rankine) for brittle grey cast iron against tensile strength.
* Rim speed is checked at the operating speed against the material's common-practice limit.
* Shrink fit: a solid shaft in the bore, both in plane stress. The fit loosens when the
  free radial growth of the bore from rotation minus the free growth of the (rotating)
  shaft equals half the diametral interference; shaft growth is included. The bore stress
  with the fit is checked at rest and at the overspeed (the largest of the two bounds it
  between them, the stress state being affine in speed squared).

References
----------
.. [1] S. P. Timoshenko and J. N. Goodier, *Theory of Elasticity*, 3rd ed., McGraw-Hill,
   1970, section 32 "Rotating disks of uniform thickness".
.. [2] W. C. Young and R. G. Budynas, *Roark's Formulas for Stress and Strain*, 7th ed.,
   McGraw-Hill, 2002, Table 16.2 (rotating disks).
.. [3] S. P. Timoshenko, *Strength of Materials, Part II*, 3rd ed., Van Nostrand, 1956,
   chapter on rotating disks of variable thickness (stepped-disc approximation).
.. [4] R. G. Budynas and J. K. Nisbett, *Shigley's Mechanical Engineering Design*, 9th ed.,
   McGraw-Hill, 2011, section 3-16 "Press and shrink fits" (fit pressure).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field, replace
from functools import partial
from typing import Any

import numpy as np
import pandas as pd
from scipy.optimize import brentq

from torqlog.errors import DataError, UsageError
from torqlog.io.notebook import result_html
from torqlog.rotor.discs import (
    max_principal,
    profile_radii,
    rim_hoop_stress,
    step_constants,
    step_stresses,
    von_mises,
)
from torqlog.rotor.materials import Material, get_material

SHAPES = ("solid-disc", "annular-disc", "rim")
CRITERIA = ("von-mises", "max-principal")

#: Material factor on strength at the overspeed (common practice, no published source):
#: 1.5 on yield for ductile materials, 3.0 on tensile strength for brittle grey iron.
MATERIAL_FACTOR_DUCTILE = 1.5
MATERIAL_FACTOR_BRITTLE = 3.0

_RPM = 2.0 * math.pi / 60.0

#: Caution of a brittle (grey cast iron) flywheel; common practice.
BRITTLE_CAUTION = (
    "Cast iron is brittle: casting flaws, porosity, shrinkage stresses and thick sections "
    "lower its strength below the test-bar value; inspect castings before use.")

#: Caution of a ductile cast iron (spheroidal graphite, EN 1563) flywheel; common practice.
CASTING_CAUTION = (
    "Ductile iron is a casting: casting flaws, porosity and thick sections lower its "
    "strength below the test-bar value; inspect castings before use.")

#: Cautions carried by every flywheel result (a cast material adds its own).
CAUTIONS: tuple[str, ...] = (
    "Burst hazard: a flywheel stores kinetic energy that is released violently if it "
    "bursts; fragments can kill.",
    "Run the flywheel behind a guard or containment able to stop its fragments, and "
    "spin-test it above its maximum speed before service; an overspeed trip must hold the "
    "overspeed assumed here.",
    "Keep the rim speed within the limit for the material and construction (common "
    "practice, e.g. about 30 m/s for grey cast iron).",
    "Preliminary engineering estimate from elastic rotating-disc formulas (keyways, bolt "
    "holes, fillets and fatigue not included); the final design, guards, spin testing and "
    "inspection follow the applicable codes and standards and are approved by a "
    "qualified, licensed engineer.",
)


# --------------------------------------------------------------------------- geometry
@dataclass(frozen=True)
class DiscGeometry:
    """Flywheel dimensions [m].

    Attributes
    ----------
    shape : str
        ``"solid-disc"``, ``"annular-disc"`` or ``"rim"``.
    outer_diameter : float [m]
    bore : float [m]
        Bore diameter (0 for a solid disc).
    width : float [m]
        Face width (axial) of the disc, or of the rim for the ``rim`` shape.
    rim_inner_diameter : float or None [m]
        ``rim`` only: inner diameter of the rim ring.
    web_width : float or None [m]
        ``rim`` only: axial thickness of the web; None neglects the web.
    """

    shape: str
    outer_diameter: float
    bore: float
    width: float
    rim_inner_diameter: float | None = None
    web_width: float | None = None

    def __post_init__(self) -> None:
        if self.shape not in SHAPES:
            raise UsageError(f"unknown shape {self.shape!r}; valid: {', '.join(SHAPES)}")
        for label, value in (("outer diameter", self.outer_diameter),
                             ("width", self.width)):
            if not (math.isfinite(value) and value > 0):
                raise UsageError(f"{label} must be positive, got {value!r} m")
        if not (math.isfinite(self.bore) and self.bore >= 0):
            raise UsageError(f"bore must be zero or positive, got {self.bore!r} m")
        if self.bore >= self.outer_diameter:
            raise UsageError(f"bore ({self.bore:g} m) must be smaller than the outer "
                             f"diameter ({self.outer_diameter:g} m)")
        if self.shape == "solid-disc" and self.bore > 0:
            raise UsageError(f"a solid-disc has no bore; use shape 'annular-disc' for a disc "
                             f"with a {self.bore:g} m bore (a bore about doubles the "
                             f"centre stress)")
        if self.shape == "annular-disc" and self.bore == 0:
            raise UsageError("an annular-disc needs a bore > 0; use shape 'solid-disc' "
                             "for a disc without one")
        if self.shape != "rim":
            if self.rim_inner_diameter is not None or self.web_width is not None:
                raise UsageError("only the 'rim' shape takes rim_inner_diameter and "
                                 "web_width")
            return
        rid = self.rim_inner_diameter
        if rid is None:
            raise UsageError("shape 'rim' needs rim_inner_diameter (between the bore and "
                             "the outer diameter)")
        if not self.bore < rid < self.outer_diameter:
            raise UsageError(f"rim inner diameter ({rid:g} m) must lie between the bore "
                             f"({self.bore:g} m) and the outer diameter "
                             f"({self.outer_diameter:g} m)")
        if self.web_width is not None and not 0 < self.web_width <= self.width:
            raise UsageError(f"web width ({self.web_width:g} m) must be positive and not "
                             f"more than the rim width ({self.width:g} m)")

    @property
    def outer_radius(self) -> float:
        """Outer radius [m]."""
        return self.outer_diameter / 2.0

    @property
    def inner_radius(self) -> float:
        """Bore radius [m] (0 for a solid disc)."""
        return self.bore / 2.0

    def steps(self) -> tuple[np.ndarray, np.ndarray]:
        """Radial steps of uniform thickness: ``(edges [m], widths [m])``.

        ``edges`` has one more entry than ``widths``; a rim without a web is one step
        from the rim's inner radius.
        """
        if self.shape != "rim":
            return (np.array([self.inner_radius, self.outer_radius]), np.array([self.width]))
        ri = self.rim_inner_diameter / 2.0
        if self.web_width is None:
            return np.array([ri, self.outer_radius]), np.array([self.width])
        return (np.array([self.inner_radius, ri, self.outer_radius]),
                np.array([self.web_width, self.width]))

    @property
    def models_bore(self) -> bool:
        """True when the stress model reaches the shaft bore (not a web-less rim)."""
        return not (self.shape == "rim" and self.web_width is None)


def inertia(geometry: DiscGeometry, density: float) -> float:
    """Polar mass moment of inertia of the flywheel.

    I = pi * rho * b * (R^4 - r^4) / 2 per uniform step (= m (R^2 + r^2) / 2).

    Parameters
    ----------
    geometry : DiscGeometry
    density : float [kg/m^3]

    Returns
    -------
    float [kg*m^2]

    Examples
    --------
    A solid steel disc 1 m across and 0.1 m wide, I = m r^2 / 2:

    >>> round(inertia(DiscGeometry("solid-disc", 1.0, 0.0, 0.1), 7850.0), 2)
    77.07

    References
    ----------
    .. [1] Roark's Formulas for Stress and Strain, 7th ed., Appendix (mass moments of
       inertia: hollow circular cylinder about its axis).
    """
    edges, widths = geometry.steps()
    return float(np.sum(0.5 * math.pi * density * widths * (edges[1:] ** 4 - edges[:-1] ** 4)))


def mass(geometry: DiscGeometry, density: float) -> float:
    """Mass of the flywheel, m = rho * pi * b * (R^2 - r^2) per uniform step.

    Parameters
    ----------
    geometry : DiscGeometry
    density : float [kg/m^3]

    Returns
    -------
    float [kg]
    """
    edges, widths = geometry.steps()
    return float(np.sum(math.pi * density * widths * (edges[1:] ** 2 - edges[:-1] ** 2)))


def _material(material: Material | str) -> Material:
    return get_material(material) if isinstance(material, str) else material


def solve_geometry(required_inertia: float, material: Material | str, shape: str,
                   outer_diameter: float | None = None, bore: float = 0.0,
                   width: float | None = None, max_width: float | None = None,
                   max_outer_diameter: float | None = None, rim_depth: float | None = None,
                   rim_inner_diameter: float | None = None,
                   web_width: float | None = None) -> DiscGeometry:
    """Solve the one missing dimension so the flywheel holds ``required_inertia``.

    Give the outer diameter to solve the face width (closed form), or the width to solve
    the outer diameter (closed form for discs; ``scipy.optimize.brentq`` for a rim, whose
    inner diameter moves with the outer one: give ``rim_depth``).

    Parameters
    ----------
    required_inertia : float [kg*m^2]
    material : Material or str
    shape : str
        ``"solid-disc"``, ``"annular-disc"`` or ``"rim"``.
    outer_diameter, bore, width : float [m]
        Exactly one of ``outer_diameter`` and ``width`` is None (the one solved).
    max_width, max_outer_diameter : float [m], optional
        Envelope limits.
    rim_depth : float [m], optional
        ``rim``: radial depth of the rim ring (rim inner diameter = OD - 2 depth).
    rim_inner_diameter : float [m], optional
        ``rim``: alternative to ``rim_depth`` when the width is solved.
    web_width : float [m], optional
        ``rim``: web thickness (None neglects the web).

    Returns
    -------
    DiscGeometry

    Raises
    ------
    UsageError
        Missing or conflicting dimensions.
    DataError
        The envelope cannot hold the inertia; the message says what it would need.
    """
    mat = _material(material)
    _check_request(required_inertia, shape, outer_diameter, width, bore)
    if shape == "rim" and rim_depth is None and rim_inner_diameter is None:
        raise UsageError("shape 'rim' needs rim_depth or rim_inner_diameter")
    make = partial(_sized_geometry, shape, bore, rim_depth, rim_inner_diameter, web_width)
    what = f"{shape} in {mat.name} holding {required_inertia:.4g} kg*m^2"
    if width is None:  # solve the face width: I is linear in it
        return _solve_width(required_inertia, mat.density, make, outer_diameter, max_width,
                            max_outer_diameter, what)
    if max_width is not None and width > max_width:
        raise DataError(f"width {width:g} m exceeds the envelope {max_width:g} m")
    od = _solve_outer_diameter(required_inertia, mat.density, make, shape, bore, width,
                               rim_depth)
    if max_outer_diameter is not None and od > max_outer_diameter:
        raise DataError(f"a {width:g} m wide {what} needs an outer diameter of {od:.3g} m; "
                        f"the envelope allows {max_outer_diameter:.3g} m")
    return make(od, width)


# ------------------------------------------------------------ steps of solve_geometry
def _check_request(required_inertia: float, shape: str, outer_diameter: float | None,
                   width: float | None, bore: float) -> None:
    """Refuse a bad inertia, shape or dimension, or a request that solves nothing."""
    if not (math.isfinite(required_inertia) and required_inertia > 0):
        raise UsageError(f"required inertia must be positive, got {required_inertia!r} "
                         "kg*m^2")
    if (outer_diameter is None) == (width is None):
        raise UsageError("give either the outer diameter or the width, not both and not "
                         "neither; the other one is solved from the inertia")
    if shape not in SHAPES:
        raise UsageError(f"unknown shape {shape!r}; valid: {', '.join(SHAPES)}")
    for name, value in (("outer diameter", outer_diameter), ("width", width),
                        ("bore", bore)):
        if value is not None and not (math.isfinite(value) and value >= 0
                                      and (value > 0 or name == "bore")):
            raise UsageError(f"{name} must be {'zero or more' if name == 'bore' else 'positive'}"
                             f", got {value!r} m")


def _sized_geometry(shape: str, bore: float, rim_depth: float | None,
                    rim_inner_diameter: float | None, web_width: float | None, od: float,
                    w: float) -> DiscGeometry:
    """The geometry of a trial outer diameter and width [m]; a rim keeps its depth."""
    rid = None
    if shape == "rim":
        rid = od - 2.0 * rim_depth if rim_depth is not None else rim_inner_diameter
    return DiscGeometry(shape, od, bore, w, rim_inner_diameter=rid,
                        web_width=web_width if shape == "rim" else None)


def _solve_width(required_inertia: float, rho: float, make: Callable[..., DiscGeometry],
                 outer_diameter: float, max_width: float | None,
                 max_outer_diameter: float | None, what: str) -> DiscGeometry:
    """Face width for a given outer diameter (closed form: inertia is linear in it)."""
    if max_outer_diameter is not None and outer_diameter > max_outer_diameter:
        raise DataError(f"outer diameter {outer_diameter:g} m exceeds the envelope "
                        f"{max_outer_diameter:g} m")
    probe = make(outer_diameter, 1.0)  # validates the diameters
    edges, widths = probe.steps()
    if probe.shape == "rim" and probe.web_width is not None:
        web = 0.5 * math.pi * rho * probe.web_width * (edges[1] ** 4 - edges[0] ** 4)
        per_width = 0.5 * math.pi * rho * (edges[2] ** 4 - edges[1] ** 4)
    else:
        web = 0.0
        per_width = 0.5 * math.pi * rho * (edges[-1] ** 4 - edges[0] ** 4)
    if web >= required_inertia:
        raise DataError(f"the web alone holds {web:.4g} kg*m^2, more than the "
                        f"{required_inertia:.4g} kg*m^2 required; use a thinner web "
                        f"or a smaller diameter")
    w = (required_inertia - web) / per_width
    if max_width is not None and w > max_width:
        raise DataError(f"a {outer_diameter:g} m {what} needs a width of {w:.3g} m; "
                        f"the envelope allows {max_width:.3g} m")
    return make(outer_diameter, w)


def _solve_outer_diameter(required_inertia: float, rho: float,
                          make: Callable[..., DiscGeometry], shape: str, bore: float,
                          width: float, rim_depth: float | None) -> float:
    """Outer diameter [m] for a given width: closed form for a disc, brentq for a rim."""
    r = bore / 2.0
    if shape != "rim":
        return 2.0 * (2.0 * required_inertia / (math.pi * rho * width) + r ** 4) ** 0.25
    if rim_depth is None:
        raise UsageError("to solve the outer diameter of a rim give rim_depth (the rim "
                         "inner diameter moves with the outer one)")
    if not rim_depth > 0:
        raise UsageError(f"rim depth must be positive, got {rim_depth!r} m")

    def excess(radius: float) -> float:
        g = make(2.0 * radius, width)
        return inertia(g, rho) - required_inertia

    lo = r + rim_depth * (1.0 + 1e-9) + 1e-9
    if excess(lo) >= 0:
        raise DataError(f"a rim {rim_depth:g} m deep on a {bore:g} m bore already "
                        f"holds more than {required_inertia:.4g} kg*m^2; give a "
                        f"smaller rim depth or width")
    hi = 2.0 * lo
    while excess(hi) < 0:
        hi *= 2.0
    return 2.0 * brentq(excess, lo, hi, xtol=1e-12, rtol=1e-12)


# --------------------------------------------------------------------------- result
@dataclass(frozen=True)
class Check:
    """One pass/fail check; ``value`` and ``limit`` in the unit named by ``name``."""

    name: str
    value: float | None
    limit: float | None
    ok: bool

    def to_dict(self) -> dict[str, Any]:
        """JSON form ``{name, value, limit, ok}``."""
        return {"name": self.name, "value": self.value, "limit": self.limit, "ok": self.ok}


@dataclass(frozen=True, eq=False)
class FlywheelResult:
    """Outcome of a flywheel check (SI attributes; ``to_dict`` gives the JSON contract).

    ``radius``, ``radial``, ``tangential`` hold the rotational stress profile at the
    operating speed [m, Pa] for plots; ``step`` the step index of each point.
    """

    geometry: DiscGeometry
    material: Material
    speed: float
    mass: float
    inertia: float
    rim_speed: float
    stored_energy: float
    energy_released: float | None
    energy_released_share: float | None
    stress_tangential_bore: float | None
    stress_radial_max: float
    stress_von_mises_max: float
    stress_max_principal_max: float
    stress_critical: float
    critical_radius: float
    criterion: str
    rim_hoop_stress_thin: float
    material_factor: float
    required_stress_factor: float
    stress_safety_factor: float
    yield_speed: float
    speed_safety_factor: float
    fit_loosening_speed: float | None
    fit_pressure_rest: float | None
    stress_bore_with_fit: float | None
    checks: tuple[Check, ...]
    cautions: tuple[str, ...]
    options: dict[str, Any]
    radius: np.ndarray = field(repr=False)
    radial: np.ndarray = field(repr=False)
    tangential: np.ndarray = field(repr=False)
    step: np.ndarray = field(repr=False)

    @property
    def verdict(self) -> str:
        """``"pass"`` when every check is ok, else ``"fail"``."""
        return "pass" if all(c.ok for c in self.checks) else "fail"

    @property
    def failed(self) -> list[str]:
        """Names of the failed checks."""
        return [c.name for c in self.checks if not c.ok]

    @property
    def allowable_stress(self) -> float:
        """Allowable criterion stress at the operating speed, strength / required factor
        [Pa]."""
        return self.material.strength / self.required_stress_factor

    _repr_html_ = result_html  # the notebook view

    def to_dict(self) -> dict[str, Any]:
        """The JSON contract (units in the key names)."""
        g = self.geometry

        def mpa(x: float | None) -> float | None:
            return None if x is None else x / 1e6

        def rpm(x: float | None) -> float | None:
            return None if x is None else x / _RPM

        return {
            "shape": g.shape,
            "material": self.material.name,
            "material_designation": self.material.designation,
            "material_source": self.material.source,
            "outer_diameter_m": g.outer_diameter,
            "bore_m": g.bore,
            "width_m": g.width,
            "rim_inner_diameter_m": g.rim_inner_diameter,
            "web_width_m": g.web_width,
            "mass_kg": self.mass,
            "inertia_kgm2": self.inertia,
            "speed_rpm": rpm(self.speed),
            "rim_speed_m_s": self.rim_speed,
            "rim_speed_limit_m_s": self.material.rim_speed_limit,
            "stored_energy_J": self.stored_energy,
            "energy_released_J": self.energy_released,
            "energy_released_share": self.energy_released_share,
            "stress_tangential_bore_MPa": mpa(self.stress_tangential_bore),
            "stress_radial_max_MPa": mpa(self.stress_radial_max),
            "stress_von_mises_max_MPa": mpa(self.stress_von_mises_max),
            "stress_max_principal_max_MPa": mpa(self.stress_max_principal_max),
            "stress_critical_MPa": mpa(self.stress_critical),
            "critical_radius_m": self.critical_radius,
            "criterion": self.criterion,
            "rim_hoop_stress_thin_MPa": mpa(self.rim_hoop_stress_thin),
            "strength_MPa": mpa(self.material.strength),
            "strength_kind": self.material.strength_kind,
            "stress_allowable_MPa": mpa(self.allowable_stress),
            "stress_safety_factor": self.stress_safety_factor,
            "stress_safety_factor_required": self.required_stress_factor,
            "yield_speed_rpm": rpm(self.yield_speed),
            "speed_safety_factor": self.speed_safety_factor,
            "speed_safety_factor_required": math.sqrt(self.required_stress_factor),
            "fit_loosening_rpm": rpm(self.fit_loosening_speed),
            "fit_pressure_rest_MPa": mpa(self.fit_pressure_rest),
            "stress_bore_with_fit_MPa": mpa(self.stress_bore_with_fit),
            "checks": [c.to_dict() for c in self.checks],
            "verdict": self.verdict,
            "failed": self.failed,
            "cautions": list(self.cautions),
            "options": dict(self.options),
        }

    def to_pandas(self) -> pd.DataFrame:
        """Rotational stress profile at the operating speed, one row per radius."""
        return pd.DataFrame({
            "radius_m": self.radius,
            "stress_radial_MPa": self.radial / 1e6,
            "stress_tangential_MPa": self.tangential / 1e6,
            "stress_von_mises_MPa": von_mises(self.radial, self.tangential) / 1e6,
            "stress_max_principal_MPa": max_principal(self.radial, self.tangential) / 1e6,
        })


# --------------------------------------------------------------------------- checks
#: Largest face width / outer diameter a flywheel may have (common practice). The disc
#: formulas used here assume plane stress, true of a disc thin against its diameter
#: (Timoshenko & Goodier, 3rd ed., sec. 32); a part wider than its diameter is a long
#: cylinder (plane strain, same section) and no flywheel a shop would make.
MAX_WIDTH_TO_DIAMETER = 1.0


def _validate_speed(speed: float) -> None:
    if not (math.isfinite(speed) and speed > 0):
        raise UsageError(f"speed must be positive, got {speed / _RPM:g} rpm "
                         f"({speed:g} rad/s)")


def check_flywheel(geometry: DiscGeometry, material: Material | str, speed: float,
                   overspeed: float = 1.2, slowdown: float | None = None,
                   interference: float | None = None, shaft_modulus: float | None = None,
                   *, shaft_material: Material | str = "steel",
                   material_factor: float | None = None, criterion: str | None = None,
                   required_inertia: float | None = None) -> FlywheelResult:
    """Check a flywheel for burst margin, rim speed, energy and shrink fit.

    Parameters
    ----------
    geometry : DiscGeometry
    material : Material or str
    speed : float [rad/s]
        Operating speed of the flywheel shaft.
    overspeed : float [-]
        Highest speed / operating speed the flywheel must survive (>= 1).
    slowdown : float [-], optional
        Fractional speed drop over the working stroke (0.1: down to 90 %); gives the
        energy released, 1/2 I w^2 (1 - (1 - slowdown)^2).
    interference : float [m], optional
        Diametral interference of a shrink fit on a solid shaft.
    shaft_modulus : float [Pa], optional
        Overrides the Young's modulus of ``shaft_material``.
    shaft_material : Material or str
        Shaft material for the fit (default ``"steel"``).
    material_factor : float [-], optional
        Factor on strength kept at the overspeed; default 1.5 (ductile, on yield) or 3.0
        (brittle, on tensile strength), common practice.
    criterion : str, optional
        ``"von-mises"`` or ``"max-principal"``; default by the material's brittleness.
    required_inertia : float [kg*m^2], optional
        Adds a check that the flywheel holds it.

    Returns
    -------
    FlywheelResult

    References
    ----------
    .. [1] Timoshenko & Goodier, Theory of Elasticity, 3rd ed., section 32.
    .. [2] Shigley's Mechanical Engineering Design, 9th ed., section 3-16
       (pressure of a shrink fit between a hub and a solid shaft).
    """
    mat = _material(material)
    criterion, material_factor = _checked_options(geometry, mat, speed, overspeed, slowdown,
                                                  interference, material_factor, criterion)
    crit_fn = von_mises if criterion == "von-mises" else max_principal
    rotation = _rotation_stresses(geometry, mat, speed)
    margin = _burst_margin(rotation, mat, crit_fn, material_factor, overspeed)
    energy = _mass_and_energy(geometry, mat.density, speed, slowdown)
    fit = _shrink_fit(geometry, mat, rotation, speed, overspeed, interference, crit_fn,
                      material_factor, shaft_material, shaft_modulus)
    checks = _design_checks(geometry, mat, margin, energy, required_inertia) + list(fit.checks)
    cautions = _design_cautions(geometry, mat) + list(fit.cautions)
    options = _check_record(geometry, overspeed, slowdown, interference, material_factor,
                            criterion, required_inertia, fit.shaft, shaft_modulus)
    return _assemble_result(geometry, mat, speed, criterion, material_factor, rotation,
                            margin, energy, fit, checks, cautions, options)


# ------------------------------------------------------------ steps of check_flywheel
@dataclass(frozen=True)
class _Rotation:
    """Rotational stress profile at the operating speed on the disc's steps [m, Pa]."""

    edges: np.ndarray
    widths: np.ndarray
    radius: np.ndarray
    step: np.ndarray
    radial: np.ndarray
    tangential: np.ndarray


@dataclass(frozen=True)
class _Margin:
    """Burst margin: peak criterion stress [Pa], its radius [m] and the factors [-]."""

    stress_critical: float
    critical_radius: float
    stress_factor: float
    speed_factor: float
    required_factor: float


@dataclass(frozen=True)
class _Energy:
    """Mass [kg], inertia [kg*m^2], rim speed [m/s] and kinetic energies [J]."""

    mass: float
    inertia: float
    rim_speed: float
    stored: float
    released_share: float | None
    released: float | None


@dataclass(frozen=True)
class _Fit:
    """Shrink-fit outcome [rad/s, Pa] with its checks and cautions (empty: not checked)."""

    loosening_speed: float | None = None
    pressure_rest: float | None = None
    bore_stress: float | None = None
    shaft: Material | None = None
    checks: tuple[Check, ...] = ()
    cautions: tuple[str, ...] = ()


def _checked_options(geometry: DiscGeometry, mat: Material, speed: float, overspeed: float,
                     slowdown: float | None, interference: float | None,
                     material_factor: float | None, criterion: str | None) -> tuple[str, float]:
    """Refuse bad options; fill the criterion and material factor the material implies."""
    _validate_speed(speed)
    if not (math.isfinite(overspeed) and overspeed >= 1.0):
        raise UsageError(f"overspeed must be 1 or more (a factor on the operating speed), "
                         f"got {overspeed!r}")
    if slowdown is not None and not 0.0 < slowdown < 1.0:
        raise UsageError(f"slowdown must be a fraction between 0 and 1 (e.g. 0.1 for a "
                         f"10 % speed drop), got {slowdown!r}")
    if criterion is None:
        criterion = "max-principal" if mat.brittle else "von-mises"
    if criterion not in CRITERIA:
        raise UsageError(f"unknown criterion {criterion!r}; valid: {', '.join(CRITERIA)}")
    if material_factor is None:
        material_factor = MATERIAL_FACTOR_BRITTLE if mat.brittle else MATERIAL_FACTOR_DUCTILE
    if not (math.isfinite(material_factor) and material_factor >= 1.0):
        raise UsageError(f"material factor must be 1 or more, got {material_factor!r}")
    if interference is not None:
        if not (math.isfinite(interference) and interference > 0):
            raise UsageError(f"interference must be positive, got {interference!r} m")
        if geometry.bore == 0:
            raise UsageError("an interference fit needs a bore; the geometry has none")
    return criterion, material_factor


def _rotation_stresses(geometry: DiscGeometry, mat: Material, speed: float) -> _Rotation:
    """Radial and hoop stresses from rotation at the operating speed, free bore and rim."""
    rho, nu = mat.density, mat.poisson
    edges, widths = geometry.steps()
    a_c, b_c = step_constants(edges, widths, speed, rho, nu, 0.0)
    radius, step = profile_radii(edges, a_c, b_c, speed, rho, nu)
    s_r, s_t = step_stresses(radius, a_c[step], b_c[step], speed, rho, nu)
    return _Rotation(edges, widths, radius, step, s_r, s_t)


def _burst_margin(rotation: _Rotation, mat: Material, crit_fn: Any, material_factor: float,
                  overspeed: float) -> _Margin:
    """Safety factors on stress and speed, and the stress factor the overspeed requires."""
    crit = crit_fn(rotation.radial, rotation.tangential)
    i_crit = int(np.argmax(crit))
    stress_critical = float(crit[i_crit])
    stress_factor = mat.strength / stress_critical
    return _Margin(stress_critical=stress_critical,
                   critical_radius=float(rotation.radius[i_crit]),
                   stress_factor=stress_factor, speed_factor=math.sqrt(stress_factor),
                   required_factor=material_factor * overspeed ** 2)


def _mass_and_energy(geometry: DiscGeometry, rho: float, speed: float,
                     slowdown: float | None) -> _Energy:
    """Mass, inertia, rim speed, stored energy and the energy a stroke's slowdown releases."""
    i_total = inertia(geometry, rho)
    m_total = mass(geometry, rho)
    rim_speed = speed * geometry.outer_radius
    stored = 0.5 * i_total * speed ** 2
    share = None if slowdown is None else 1.0 - (1.0 - slowdown) ** 2
    released = None if share is None else stored * share
    return _Energy(mass=m_total, inertia=i_total, rim_speed=rim_speed, stored=stored,
                   released_share=share, released=released)


def _shrink_fit(geometry: DiscGeometry, mat: Material, rotation: _Rotation, speed: float,
                overspeed: float, interference: float | None, crit_fn: Any,
                material_factor: float, shaft_material: Material | str,
                shaft_modulus: float | None) -> _Fit:
    """Fit pressure, loosening speed and bore stress of a shrink fit on a solid shaft."""
    if interference is None:
        return _Fit()
    if not geometry.models_bore:
        return _Fit(cautions=("The interference fit was not checked: the rim model has no "
                              "web reaching the bore (give a web width).",))
    rho, nu, e = mat.density, mat.poisson, mat.modulus
    shaft = _material(shaft_material)
    e_s = shaft_modulus if shaft_modulus is not None else shaft.modulus
    if not e_s > 0:
        raise UsageError(f"shaft modulus must be positive, got {e_s!r} Pa")
    a = geometry.inner_radius
    s_r, s_t = rotation.radial, rotation.tangential
    # hub: bore growth from rotation (free bore) and per unit bore pressure
    hub_rot = a * s_t[0] / e
    a_p, b_p = step_constants(rotation.edges, rotation.widths, 0.0, rho, nu, 1.0)
    p_r, p_t = step_stresses(rotation.radius, a_p[rotation.step], b_p[rotation.step], 0.0,
                             rho, nu)
    hub_per_p = a * (p_t[0] - nu * p_r[0]) / e
    # solid shaft: growth from rotation (solid disc at r = a) and per unit pressure
    shaft_rot = a * (1.0 - shaft.poisson) / 4.0 * shaft.density * speed ** 2 * a ** 2 / e_s
    shaft_per_p = a * (1.0 - shaft.poisson) / e_s
    compliance = hub_per_p + shaft_per_p
    half = interference / 2.0
    fit_p0 = half / compliance
    growth = hub_rot - shaft_rot  # at the operating speed; grows with speed^2
    loosening = speed * math.sqrt(half / growth) if growth > 0 else math.inf
    w_over = overspeed * speed
    p_over = max(0.0, (half - growth * overspeed ** 2) / compliance)
    rest = crit_fn(fit_p0 * p_r, fit_p0 * p_t)
    over = crit_fn(overspeed ** 2 * s_r + p_over * p_r, overspeed ** 2 * s_t + p_over * p_t)
    bore_with_fit = float(max(rest.max(), over.max()))
    checks = (Check("fit_loosening_rpm", loosening / _RPM, w_over / _RPM, loosening >= w_over),
              Check("stress_bore_with_fit_MPa", bore_with_fit / 1e6,
                    mat.strength / material_factor / 1e6,
                    bore_with_fit <= mat.strength / material_factor))
    return _Fit(loosening_speed=loosening, pressure_rest=fit_p0, bore_stress=bore_with_fit,
                shaft=shaft, checks=checks)


def _design_checks(geometry: DiscGeometry, mat: Material, margin: _Margin, energy: _Energy,
                   required_inertia: float | None) -> list[Check]:
    """Checks of burst margin, rim speed, proportions and (if asked) the inertia held."""
    stress_factor, required_factor = margin.stress_factor, margin.required_factor
    checks = [Check("stress_safety_factor", stress_factor, required_factor,
                    stress_factor >= required_factor)]
    if mat.rim_speed_limit is not None:
        checks.append(Check("rim_speed_m_s", energy.rim_speed, mat.rim_speed_limit,
                            energy.rim_speed <= mat.rim_speed_limit))
    proportion = geometry.width / geometry.outer_diameter
    checks.append(Check("width_to_outer_diameter", proportion, MAX_WIDTH_TO_DIAMETER,
                        proportion <= MAX_WIDTH_TO_DIAMETER))
    if required_inertia is not None:
        checks.append(Check("inertia_kgm2", energy.inertia, required_inertia,
                            energy.inertia >= required_inertia * (1.0 - 1e-9)))
    return checks


def _design_cautions(geometry: DiscGeometry, mat: Material) -> list[str]:
    """The cautions every result carries, with those its proportions, shape and material add."""
    cautions = list(CAUTIONS)
    if mat.brittle:
        cautions.append(BRITTLE_CAUTION)
    elif "EN-GJS" in mat.designation:  # a spheroidal-graphite (ductile) iron casting
        cautions.append(CASTING_CAUTION)
    if geometry.width / geometry.outer_diameter > MAX_WIDTH_TO_DIAMETER:
        cautions.insert(0, (
            f"The face width ({geometry.width:.4g} m) is more than "
            f"{MAX_WIDTH_TO_DIAMETER:g} x the outer diameter ({geometry.outer_diameter:.4g} m):"
            " this is a long cylinder, not a disc, so the disc stresses above do not apply and"
            " it cannot be built as a flywheel; give a larger outer diameter or a smaller "
            "inertia."))
    if geometry.shape == "rim":
        cautions.append(
            "Rim shape: web and rim are modelled as a stepped disc; the stress raiser at "
            "the web-to-rim fillet is not included." if geometry.web_width is not None else
            "Rim shape without a web width: the rim is checked as a free ring; the web, "
            "hub and shaft fit are not checked.")
    if mat.rim_speed_limit is None:
        cautions.append(f"No rim-speed limit is known for {mat.name}; rim speed not checked.")
    return cautions


def _stress_model(geometry: DiscGeometry) -> str:
    """The stress model the shape is checked with, and its source."""
    if geometry.shape == "solid-disc":
        return "uniform solid disc (Timoshenko & Goodier sec. 32)"
    if geometry.shape == "annular-disc":
        return "uniform disc with free bore (Timoshenko & Goodier sec. 32)"
    if geometry.web_width is None:
        return "free rim ring, web neglected (Timoshenko & Goodier sec. 32)"
    return "stepped disc: web and rim (Timoshenko, Strength of Materials II)"


def _check_record(geometry: DiscGeometry, overspeed: float, slowdown: float | None,
                  interference: float | None, material_factor: float, criterion: str,
                  required_inertia: float | None, shaft: Material | None,
                  shaft_modulus: float | None) -> dict[str, Any]:
    """The options that made the check, for ``FlywheelResult.options``."""
    return {
        "overspeed": overspeed,
        "slowdown": slowdown,
        "interference_m": interference,
        "material_factor": material_factor,
        "criterion": criterion,
        "stress_model": _stress_model(geometry),
        "stresses_at": "operating speed; required stress factor = material_factor x "
                       "overspeed^2",
        "rim_speed_checked_at": "operating speed",
        "required_inertia_kgm2": required_inertia,
        "shaft_material": shaft.name if shaft is not None else None,
        "shaft_modulus_Pa": (shaft_modulus if shaft_modulus is not None
                             else (shaft.modulus if shaft is not None else None)),
        "fit_model": ("solid shaft, plane stress; shaft growth from rotation included"
                      if shaft is not None else None),
    }


def _assemble_result(geometry: DiscGeometry, mat: Material, speed: float, criterion: str,
                     material_factor: float, rotation: _Rotation, margin: _Margin,
                     energy: _Energy, fit: _Fit, checks: list[Check], cautions: list[str],
                     options: dict[str, Any]) -> FlywheelResult:
    """The figures of every step in one :class:`FlywheelResult`."""
    s_r, s_t = rotation.radial, rotation.tangential
    return FlywheelResult(
        geometry=geometry, material=mat, speed=speed, mass=energy.mass,
        inertia=energy.inertia, rim_speed=energy.rim_speed, stored_energy=energy.stored,
        energy_released=energy.released, energy_released_share=energy.released_share,
        stress_tangential_bore=float(s_t[0]) if geometry.models_bore else None,
        stress_radial_max=float(s_r.max()), stress_von_mises_max=float(von_mises(s_r, s_t).max()),
        stress_max_principal_max=float(max_principal(s_r, s_t).max()),
        stress_critical=margin.stress_critical, critical_radius=margin.critical_radius,
        criterion=criterion, rim_hoop_stress_thin=rim_hoop_stress(mat.density, energy.rim_speed),
        material_factor=material_factor, required_stress_factor=margin.required_factor,
        stress_safety_factor=margin.stress_factor, yield_speed=speed * margin.speed_factor,
        speed_safety_factor=margin.speed_factor, fit_loosening_speed=fit.loosening_speed,
        fit_pressure_rest=fit.pressure_rest, stress_bore_with_fit=fit.bore_stress,
        checks=tuple(checks), cautions=tuple(cautions), options=options,
        radius=rotation.radius, radial=s_r, tangential=s_t, step=rotation.step,
    )


def design_flywheel(required_inertia: float, speed: float, material: Material | str,
                    shape: str, outer_diameter: float | None, bore: float,
                    width: float | None = None, max_width: float | None = None,
                    overspeed: float = 1.2, slowdown: float | None = None,
                    interference: float | None = None, *,
                    max_outer_diameter: float | None = None, rim_depth: float | None = None,
                    rim_inner_diameter: float | None = None, web_width: float | None = None,
                    material_factor: float | None = None, criterion: str | None = None,
                    shaft_material: Material | str = "steel",
                    shaft_modulus: float | None = None) -> FlywheelResult:
    """Size a flywheel for an inertia and check it (geometry from :func:`solve_geometry`).

    When both ``outer_diameter`` and ``width`` are given nothing is solved: the given
    flywheel is checked, with an added check that it holds ``required_inertia``.

    Parameters
    ----------
    required_inertia : float [kg*m^2]
    speed : float [rad/s]
    material : Material or str
    shape : str
    outer_diameter, bore, width, max_width, max_outer_diameter : float [m]
    overspeed, slowdown, interference
        See :func:`check_flywheel`.
    rim_depth, rim_inner_diameter, web_width : float [m], optional
        ``rim`` shape, see :func:`solve_geometry`.
    material_factor, criterion, shaft_material, shaft_modulus
        See :func:`check_flywheel`.

    Returns
    -------
    FlywheelResult
        ``options["solved"]`` names the solved dimension (or None).

    References
    ----------
    .. [1] Timoshenko & Goodier, Theory of Elasticity, 3rd ed., section 32.
    """
    mat = _material(material)
    _validate_speed(speed)
    if outer_diameter is not None and width is not None:
        if max_width is not None and width > max_width:
            raise DataError(f"width {width:g} m exceeds the envelope {max_width:g} m")
        if max_outer_diameter is not None and outer_diameter > max_outer_diameter:
            raise DataError(f"outer diameter {outer_diameter:g} m exceeds the envelope "
                            f"{max_outer_diameter:g} m")
        rid = rim_inner_diameter
        if shape == "rim" and rid is None and rim_depth is not None:
            rid = outer_diameter - 2.0 * rim_depth
        geometry = DiscGeometry(shape, outer_diameter, bore, width,
                                rim_inner_diameter=rid, web_width=web_width)
        solved = None
    else:
        geometry = solve_geometry(required_inertia, mat, shape, outer_diameter=outer_diameter,
                                  bore=bore, width=width, max_width=max_width,
                                  max_outer_diameter=max_outer_diameter, rim_depth=rim_depth,
                                  rim_inner_diameter=rim_inner_diameter, web_width=web_width)
        solved = "width" if width is None else "outer_diameter"
    result = check_flywheel(geometry, mat, speed, overspeed, slowdown, interference,
                            shaft_modulus, shaft_material=shaft_material,
                            material_factor=material_factor, criterion=criterion,
                            required_inertia=required_inertia)
    options = {**result.options, "solved": solved, "max_width_m": max_width,
               "max_outer_diameter_m": max_outer_diameter, "rim_depth_m": rim_depth}
    return replace(result, options=options)


def requirement_from_size(data: dict[str, Any], source: str = "<size result>",
                          flywheel_speed_ratio: float | None = None) -> tuple[float, float,
                                                                               dict[str, Any]]:
    """Required inertia and flywheel speed from a ``torqlog size --format json`` result.

    Inertia is ``added_inertia_at_flywheel_kgm2`` when present, else
    ``added_inertia_kgm2`` (referred to the logged shaft) divided by the square of the
    flywheel speed ratio (the same number when the ratio is 1, the usual case). Speed is
    ``speed_mean_rpm`` times the ratio. The ratio is ``flywheel_speed_ratio`` from the
    file (top level or its ``options``), else the argument, else 1.

    Parameters
    ----------
    data : dict
        The parsed JSON.
    source : str
        File name for messages.
    flywheel_speed_ratio : float, optional
        Flywheel shaft speed / logged shaft speed, used when the file has none.

    Returns
    -------
    (required_inertia [kg*m^2], speed [rad/s], info)
        ``info`` records the keys and ratio used.

    Raises
    ------
    DataError
        A key is missing or not a positive number.
    """
    if not isinstance(data, dict):
        raise DataError(f"{source}: expected a JSON object written by "
                        "'torqlog size --format json'")
    options = data.get("options") if isinstance(data.get("options"), dict) else {}
    ratio = data.get("flywheel_speed_ratio", options.get("flywheel_speed_ratio"))
    if ratio is None:
        ratio = 1.0 if flywheel_speed_ratio is None else flywheel_speed_ratio

    def number(key: str) -> float:
        value = data[key]
        if isinstance(value, bool) or not isinstance(value, int | float) or not value > 0:
            raise DataError(f"{source}: {key} must be a positive number, got {value!r}")
        return float(value)

    if "speed_mean_rpm" not in data:
        raise DataError(f"{source}: no 'speed_mean_rpm'; write the file with "
                        "'torqlog size --format json' or give --speed-rpm")
    if isinstance(ratio, bool) or not isinstance(ratio, int | float) or not ratio > 0:
        raise DataError(f"{source}: flywheel_speed_ratio must be a positive number, "
                        f"got {ratio!r}")
    if "added_inertia_at_flywheel_kgm2" in data:
        key = "added_inertia_at_flywheel_kgm2"
        required = number(key)
    elif "added_inertia_kgm2" in data:
        key = "added_inertia_kgm2"
        required = number(key) / ratio ** 2
    else:
        raise DataError(f"{source}: no 'added_inertia_at_flywheel_kgm2' or "
                        "'added_inertia_kgm2'; write the file with 'torqlog size --format "
                        "json' or give --inertia")
    speed = number("speed_mean_rpm") * _RPM * ratio
    return required, speed, {"from_size": source, "inertia_key": key,
                             "flywheel_speed_ratio": float(ratio)}


def flywheel_from_profile(profile: Any = None, *, inertia: float | None = None,
                          speed: float | None = None, size: dict[str, Any] | None = None,
                          size_source: str = "<size result>", material: str | None = None,
                          shape: str | None = None, outer_diameter: float | None = None,
                          bore: float | None = None, width: float | None = None,
                          max_width: float | None = None,
                          max_outer_diameter: float | None = None,
                          rim_inner_diameter: float | None = None,
                          rim_depth: float | None = None, web_width: float | None = None,
                          overspeed: float | None = None, slowdown: float | None = None,
                          interference: float | None = None, density: float | None = None,
                          strength: float | None = None, poisson: float | None = None,
                          modulus: float | None = None,
                          material_factor: float | None = None,
                          brittle: bool | None = None, material_name: str | None = None,
                          materials: Mapping[str, Material] | None = None,
                          ) -> FlywheelResult:
    """Size or check a flywheel from given values over a profile and a sizing result.

    What ``torqlog flywheel`` and the report both run. A value given here wins; None
    takes the profile's ``[flywheel]`` value, then the default. The inertia and speed come
    from the arguments, else from ``size`` (see :func:`requirement_from_size`), the speed
    else from ``[machine] speed_rpm`` × ``flywheel_speed_ratio``. Without an inertia the
    given geometry (``outer_diameter`` and ``width``) is checked.

    Parameters
    ----------
    profile : MachineProfile, optional
    inertia : float, optional [kg*m^2]
        Required inertia at the flywheel shaft.
    speed : float, optional [rad/s]
        Operating speed of the flywheel shaft.
    size : dict, optional
        The JSON contract of ``torqlog size`` (:func:`torqlog.sizing.inertia.size_log_dict`).
    size_source : str
        Where ``size`` came from, for messages and ``options["from_size"]``.
    material : str or mapping, optional
        A name of :data:`torqlog.rotor.materials.MATERIALS` or of ``materials``, or a table of
        properties (the profile's ``[flywheel] material = { ... }``).
    shape, outer_diameter, bore, width, max_width, max_outer_diameter,
    rim_inner_diameter, rim_depth, web_width : [m] for lengths
        See :func:`design_flywheel`.
    overspeed, slowdown, interference, material_factor
        See :func:`check_flywheel` (overspeed default 1.2).
    density [kg/m^3], strength [Pa], poisson, modulus [Pa] : float, optional
        Override the material's values; with no material named, all four make a
        material of its own (:func:`torqlog.rotor.materials.resolve_material`).
    brittle : bool, optional
        The ductile/brittle choice for a material given by its properties.
    material_name : str, optional
        The user's name for a material given by its properties (default ``"custom"``).
    materials : mapping of str to Material, optional
        A plant's own materials table (:func:`torqlog.rotor.materials.load_materials`).

    Returns
    -------
    FlywheelResult
        ``options`` also records where the inertia and speed came from.

    Raises
    ------
    UsageError
        No speed, no material, or neither an inertia nor a full geometry.

    References
    ----------
    Timoshenko & Goodier, *Theory of Elasticity*, 3rd ed., section 32.
    """
    from torqlog.rotor.materials import resolve_material

    fw = profile.flywheel if profile is not None else {}
    mach = profile.machine if profile is not None else {}
    inertia, speed, size_info = _requirement(mach, inertia, speed, size, size_source)
    given = _over_profile(fw, material=material, shape=shape, outer_diameter=outer_diameter,
                          bore=bore, width=width, max_width=max_width,
                          interference=interference, overspeed=overspeed)
    mat = resolve_material(given["material"], table=materials, density=density,
                           modulus=modulus, poisson=poisson, strength=strength,
                           brittle=brittle, name=material_name,
                           where=f"{getattr(profile, 'source', '<profile>')} [flywheel] material")
    common = dict(overspeed=given["overspeed"], slowdown=slowdown,
                  interference=given["interference"], material_factor=material_factor)
    if inertia is None:
        geometry = _given_geometry(given["shape"], given["outer_diameter"], given["bore"],
                                   given["width"], rim_inner_diameter, rim_depth, web_width)
        result = check_flywheel(geometry, mat, speed, **common)
    else:
        result = design_flywheel(inertia, speed, mat, given["shape"], given["outer_diameter"],
                                 given["bore"], given["width"], given["max_width"],
                                 max_outer_diameter=max_outer_diameter, rim_depth=rim_depth,
                                 rim_inner_diameter=rim_inner_diameter, web_width=web_width,
                                 **common)
    if size_info:
        result = replace(result, options={**result.options, **size_info})
    return result


# ----------------------------------------------------- steps of flywheel_from_profile
def _requirement(machine: Mapping[str, Any], inertia: float | None, speed: float | None,
                 size: dict[str, Any] | None,
                 size_source: str) -> tuple[float | None, float, dict[str, Any]]:
    """Inertia [kg*m^2] and speed [rad/s]: as given, else the size result, else the profile."""
    ratio = machine.get("flywheel_speed_ratio")
    size_info: dict[str, Any] = {}
    if size is not None:
        size_inertia, size_speed, size_info = requirement_from_size(size, size_source, ratio)
        inertia = inertia if inertia is not None else size_inertia
        speed = speed if speed is not None else size_speed
    if speed is None and "speed" in machine:
        speed = machine["speed"] * (ratio if ratio is not None else 1.0)
    if speed is None:
        raise UsageError("give --speed-rpm (or a --profile with [machine] speed_rpm, or "
                         "--from-size)")
    return inertia, speed, size_info


def _over_profile(flywheel: Mapping[str, Any], **given: Any) -> dict[str, Any]:
    """Each value as given, else the profile's ``[flywheel]`` value, else the default."""
    defaults = {"shape": "annular-disc", "bore": 0.0, "overspeed": 1.2}
    return {key: value if value is not None else flywheel.get(key, defaults.get(key))
            for key, value in given.items()}


def _given_geometry(shape: str, outer_diameter: float | None, bore: float,
                    width: float | None, rim_inner_diameter: float | None,
                    rim_depth: float | None, web_width: float | None) -> DiscGeometry:
    """The flywheel to check when no inertia is asked for: its full dimensions [m]."""
    if outer_diameter is None or width is None:
        raise UsageError("give --inertia or --from-size to size a flywheel, or both "
                         "--outer-diameter and --width to check a given one")
    rid = rim_inner_diameter
    if shape == "rim" and rid is None and rim_depth is not None:
        rid = outer_diameter - 2.0 * rim_depth
    return DiscGeometry(shape, outer_diameter, bore, width,
                        rim_inner_diameter=rid, web_width=web_width)
