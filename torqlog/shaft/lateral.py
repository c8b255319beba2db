"""Shaft lateral natural frequencies (Rayleigh, Dunkerley, beam finite elements), and the
shaft check that holds them, with the torsional modes of :mod:`torqlog.shaft.torsion`, against
the running speed and its orders.

Lateral model
-------------
A stepped, possibly hollow shaft on simple supports (zero deflection at each bearing,
free rotation), carrying point masses anywhere along it, overhung ones included. It is
meshed with Euler-Bernoulli beam elements (two degrees of freedom per node, deflection
and slope, Hermite cubic shape functions) with nodes at every segment end, bearing and
mass position. The shaft's own mass enters through the consistent element mass matrix,
the point masses are lumped at their nodes. Modes are those of the non-rotating shaft:
gyroscopic stiffening, shear deformation and bearing flexibility are neglected.

The beam finite elements (element matrices, assembly, supports, static and eigenvalue
solution) live in :mod:`torqlog.shaft.beam`. The torsional chain, its modes and their check
against the orders live in :mod:`torqlog.shaft.torsion`; :func:`torqlog.shaft.check.check_shaft`
combines both (with strength and the forced response) for
one machine profile.

Every result here is a preliminary engineering estimate; see :data:`CAUTIONS`.

References
----------
.. [1] J. M. Gere and S. P. Timoshenko, *Mechanics of Materials*, beam deflection tables.
.. [2] W. C. Young and R. G. Budynas, *Roark's Formulas for Stress and Strain*, 7th ed.,
   Table 8.1 (beams: shear, moment and deflection formulas).
.. [3] W. T. Thomson and M. D. Dahleh, *Theory of Vibration with Applications*, 5th ed.:
   Rayleigh's method, Dunkerley's equation.
.. [4] R. D. Blevins, *Formulas for Natural Frequency and Mode Shape*, Table 8-1.
.. [5] J. S. Przemieniecki, *Theory of Matrix Structural Analysis*, 1968: beam element
   stiffness and consistent mass matrices.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import scipy.linalg

from torqlog.errors import DataError, UsageError
from torqlog.io.notebook import result_html
from torqlog.io.profile import MachineProfile
from torqlog.shaft.beam import (
    BeamMesh,
    assemble_beam,
    load_vector,
    mesh_nodes,
    midpoint_deflection,
    nearest_nodes,
    solve_modes,
    solve_static,
)
from torqlog.shaft.geometry import PointMass, ShaftSegment

#: Standard acceleration of gravity [m/s^2] (CGPM 1901; NIST SP 811).
GRAVITY = 9.80665

#: Carbon steel (E [Pa], rho [kg/m^3], nu [-]): the defaults of a ShaftModel built in code.
#: Typical handbook values for carbon steel, quoted from memory.
_STEEL = (207e9, 7850.0, 0.3)

#: Cautions carried by every shaft result.
CAUTIONS: tuple[str, ...] = (
    "Preliminary engineering estimate only, not a design approval.",
    "Simple supports idealise real bearings: bearing, housing and foundation flexibility "
    "lower the natural frequencies below these figures; gyroscopic and shear effects "
    "are neglected.",
    "A shaft that fails can injure people: the final design follows the applicable codes "
    "and standards and is approved by a qualified, licensed engineer.",
)

LATERAL_METHODS = ("fe", "rayleigh", "dunkerley")




def _model_problem(segments: Sequence[ShaftSegment], bearings: Sequence[float],
                   masses: Sequence[PointMass], modulus: float, density: float) -> str | None:
    """First reason the model cannot be solved, or None."""
    if not segments:
        return "needs at least one segment"
    for i, s in enumerate(segments):
        if not (s.length > 0 and s.diameter > 0):
            return f"segments[{i}] needs a positive length and diameter"
        if not 0 <= s.bore < s.diameter:
            return (f"segments[{i}] bore {s.bore * 1e3:g} mm must be at least 0 and smaller "
                    f"than the diameter {s.diameter * 1e3:g} mm")
        if (s.modulus is not None and s.modulus <= 0) or (s.density is not None
                                                          and s.density < 0):
            return f"segments[{i}] needs a positive modulus and a density of 0 or more"
    if not modulus > 0 or not density >= 0:
        return "needs a positive modulus and a density of 0 or more"
    length = float(sum(s.length for s in segments))
    tol = 1e-9 * length
    for b in bearings:
        if not -tol <= b <= length + tol:
            return (f"bearing at {b:g} m is not on the shaft (0 to {length:g} m); "
                    f"bearings_m must lie within the segments")
    if len({round(b / length, 9) for b in bearings}) < 2:
        return "needs at least two bearings at different positions (bearings_m)"
    for m in masses:
        if not -tol <= m.at <= length + tol:
            return (f"mass {m.name!r} at {m.at:g} m is outside the shaft (0 to {length:g} m); "
                    f"at_m must lie within the segments")
        if not m.mass >= 0 or not m.inertia >= 0:
            return f"mass {m.name!r} needs a mass and inertia of 0 or more"
    return None


@dataclass(frozen=True)
class ShaftModel:
    """A shaft on simple supports carrying point masses.

    Attributes
    ----------
    segments : tuple of ShaftSegment
        Laid end to end from x = 0.
    bearings : tuple of float [m]
        x positions of the simple supports (two or more; overhangs allowed).
    masses : tuple of PointMass
    modulus : float [Pa]
        Young's modulus E.
    density : float [kg/m^3]
        Density of the shaft material (0 for a massless shaft).

    Raises
    ------
    DataError
        If the layout cannot be solved (bearing or mass off the shaft, one bearing only,
        bore not smaller than the diameter, non-positive sizes).
    """

    segments: tuple[ShaftSegment, ...]
    bearings: tuple[float, ...]
    masses: tuple[PointMass, ...] = ()
    modulus: float = _STEEL[0]
    density: float = _STEEL[1]

    def __post_init__(self) -> None:
        object.__setattr__(self, "segments", tuple(self.segments))
        object.__setattr__(self, "bearings", tuple(float(b) for b in self.bearings))
        object.__setattr__(self, "masses", tuple(self.masses))
        problem = _model_problem(self.segments, self.bearings, self.masses,
                                 self.modulus, self.density)
        if problem:
            raise DataError(f"shaft model {problem}")

    @property
    def length(self) -> float:
        """Overall length [m]."""
        return float(sum(s.length for s in self.segments))

    def with_mass(self, mass: PointMass) -> ShaftModel:
        """A copy carrying one more point mass."""
        return dataclasses.replace(self, masses=(*self.masses, mass))

    def without_masses(self) -> ShaftModel:
        """The bare shaft (no point masses)."""
        return dataclasses.replace(self, masses=())


def material_properties(spec: str | Mapping[str, Any] | None,
                        table: Mapping[str, Any] | None = None,
                        where: str = "[shaft] material") -> tuple[float, float, float]:
    """Young's modulus [Pa], density [kg/m^3] and shear modulus [Pa] of a shaft material.

    ``spec`` is a material name or a table of its properties, read by
    :func:`torqlog.rotor.materials.shaft_material` (the parser a flywheel material goes
    through); ``table`` is the plant's own materials (``--materials FILE``).
    """
    from torqlog.rotor.materials import shaft_material

    mat = shaft_material(spec, table=table, where=where)
    return float(mat.modulus), float(mat.density), float(mat.shear_modulus)


def _number(item: Mapping[str, Any], key: str, where: str, default: float | None = None
            ) -> float:
    if key not in item:
        if default is not None:
            return default
        raise DataError(f"{where} needs {key}")
    value = item[key]
    if isinstance(value, bool) or not isinstance(value, int | float):
        raise DataError(f"{where} {key} must be a number, not {value!r}")
    return float(value)


def shaft_model_from_profile(profile: MachineProfile,
                             material: str | Mapping[str, Any] | None = None, *,
                             materials: Mapping[str, Any] | None = None) -> ShaftModel:
    """Build the lateral model from the profile's ``[shaft]`` section.

    Parameters
    ----------
    profile : MachineProfile
    material : str or mapping, optional
        Material name or table of properties overriding ``[shaft] material`` (default
        ``"steel"``); a segment's own ``material`` overrides it for that segment.
    materials : mapping of str to Material, optional
        The plant's own materials (``--materials FILE``), where names are looked up too.

    Returns
    -------
    ShaftModel

    Raises
    ------
    DataError
        Naming the file when the section is missing or incomplete, or the layout is
        impossible (bearing or mass off the shaft).
    """
    src = profile.source or "<profile>"
    sec = profile.shaft
    if not sec:
        raise DataError(f"{src}: no [shaft] section; add one with bearings_m, segments "
                        f"and masses to check the shaft")
    for key in ("segments", "bearings_m"):
        if not sec.get(key):
            raise DataError(f"{src}: [shaft] needs {key}")
    modulus, density, _ = material_properties(material or sec.get("material", "steel"),
                                              materials, f"{src}: [shaft] material")
    segments = []
    for i, item in enumerate(sec["segments"]):
        where = f"{src}: [shaft] segments[{i}]"
        seg_e = seg_rho = None
        if "material" in item:
            seg_e, seg_rho, _ = material_properties(item["material"], materials,
                                                    f"{where} material")
        segments.append(ShaftSegment(_number(item, "length_m", where),
                                     _number(item, "diameter_m", where),
                                     _number(item, "bore_m", where, 0.0), seg_e, seg_rho))
    bearings = []
    for b in sec["bearings_m"]:
        if isinstance(b, bool) or not isinstance(b, int | float):
            raise DataError(f"{src}: [shaft] bearings_m must be numbers, not {b!r}")
        bearings.append(float(b))
    masses = []
    for i, item in enumerate(sec.get("masses", [])):
        where = f"{src}: [shaft] masses[{i}]"
        masses.append(PointMass(str(item.get("name", f"mass {i + 1}")),
                                _number(item, "mass_kg", where), _number(item, "at_m", where),
                                _number(item, "inertia_kgm2", where, 0.0)))
    try:
        return ShaftModel(tuple(segments), tuple(bearings), tuple(masses), modulus, density)
    except DataError as exc:
        raise DataError(f"{src}: [shaft] {str(exc).removeprefix('shaft model ')}") from None


# --------------------------------------------------------------------------- beam FE
def _mesh(model: ShaftModel, max_element: float | None = None) -> tuple[BeamMesh, np.ndarray]:
    """The shaft as assembled beam elements (:mod:`torqlog.shaft.beam`), and the node of each
    point mass; nodes at every segment end, bearing and mass."""
    ends = np.concatenate([[0.0], np.cumsum([s.length for s in model.segments])])
    x = mesh_nodes(np.concatenate([ends, model.bearings, [m.at for m in model.masses]]),
                   model.length, max_element)
    le = np.diff(x)
    seg = np.clip(np.searchsorted(ends, x[:-1] + le / 2, side="right") - 1,
                  0, len(model.segments) - 1)
    segs = model.segments
    e = np.array([s.modulus if s.modulus is not None else model.modulus for s in segs])[seg]
    rho = np.array([s.density if s.density is not None else model.density for s in segs])[seg]
    area = np.array([s.area for s in segs])[seg]
    ei = e * np.array([s.second_moment for s in segs])[seg]
    beam = assemble_beam(x, ei, rho * area, model.bearings)
    return beam, nearest_nodes(x, np.array([m.at for m in model.masses]))


def _static(model: ShaftModel, beam: BeamMesh, mass_nodes: np.ndarray,
            include_self_weight: bool) -> np.ndarray:
    """Displacements under the weights of the point masses (and of the shaft)."""
    weights = GRAVITY * np.array([m.mass for m in model.masses])
    line = beam.element_mass / beam.element_length * GRAVITY if include_self_weight else None
    load = load_vector(len(beam.nodes), mass_nodes, weights, beam.element_length, line)
    return solve_static(beam.stiffness, load, beam.free)


def _require_masses(model: ShaftModel, include_self_weight: bool, method: str) -> None:
    if not model.masses and not include_self_weight:
        raise UsageError(f"{method} needs masses on the shaft or its self weight")


def support_reactions(model: ShaftModel) -> np.ndarray:
    """Upward reaction [N] at each bearing under the weights of the point masses.

    From the finite-element solution (R = K u - f at the supported deflections), so it
    holds for two bearings and for statically indeterminate shafts on more.

    References
    ----------
    Przemieniecki (1968), reactions from the assembled stiffness matrix.
    """
    beam, mass_nodes = _mesh(model)
    weights = GRAVITY * np.array([m.mass for m in model.masses])
    load = load_vector(len(beam.nodes), mass_nodes, weights, beam.element_length, None)
    u = solve_static(beam.stiffness, load, beam.free)
    r = beam.stiffness @ u - load
    nodes = nearest_nodes(beam.nodes, np.asarray(model.bearings))
    # deflection is positive down in the load vector: the reaction pushes up
    return -r[2 * nodes]


def bending_moment(model: ShaftModel, x: np.ndarray) -> np.ndarray:
    """Bending moment [N*m] along the shaft under the weights of the point masses.

    Statics of the free body left of x with the reactions of :func:`support_reactions`
    (shaft self weight neglected).
    """
    x = np.atleast_1d(np.asarray(x, float))
    pos = np.concatenate([np.asarray(model.bearings), [m.at for m in model.masses]])
    force = np.concatenate([support_reactions(model),
                            [-GRAVITY * m.mass for m in model.masses]])
    arm = x[:, None] - pos[None, :]
    return np.where(arm > 0, arm * force[None, :], 0.0).sum(axis=1)


def shaft_mesh(model: ShaftModel, max_element: float | None = None) -> np.ndarray:
    """Node positions [m] of the finite-element mesh (rows of the mode shapes)."""
    return _mesh(model, max_element)[0].nodes


def static_deflection(model: ShaftModel, include_self_weight: bool = False, *,
                      max_element: float | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Static deflection under the weights of the point masses (and the shaft).

    Parameters
    ----------
    model : ShaftModel
    include_self_weight : bool
        Add the shaft's own weight as a distributed load.
    max_element : float, optional [m]
        Longest element (default: overall length / 60).

    Returns
    -------
    x : array [m]
        Node positions.
    deflection : array [m]
        Downward deflection at the nodes (positive down); exact at the nodes for point
        loads and uniform loads on Hermite cubic elements.

    References
    ----------
    Gere and Timoshenko, *Mechanics of Materials* (elastic curve); Przemieniecki (1968).
    """
    beam, mass_nodes = _mesh(model, max_element)
    return beam.nodes, _static(model, beam, mass_nodes, include_self_weight)[0::2]


def rayleigh(model: ShaftModel, include_self_weight: bool = False, *,
             max_element: float | None = None) -> float:
    """First lateral natural frequency by Rayleigh's method with the static deflection.

    omega^2 = g * sum(W_i y_i) / sum(W_i y_i^2), y the static deflection under the
    weights W_i. With ``include_self_weight`` each element's mass is lumped at its
    midpoint (deflection there from the Hermite interpolation) and joins the sums.

    Parameters
    ----------
    model : ShaftModel
    include_self_weight : bool
        Include the shaft's own mass and weight.

    Returns
    -------
    float [Hz]
        An upper bound of the first natural frequency (inf when every mass sits on a
        bearing of a massless shaft).

    References
    ----------
    Thomson and Dahleh, *Theory of Vibration with Applications*, Rayleigh's method.
    """
    _require_masses(model, include_self_weight, "Rayleigh's method")
    beam, mass_nodes = _mesh(model, max_element)
    u = _static(model, beam, mass_nodes, include_self_weight)
    y = u[2 * mass_nodes]
    m = np.array([pm.mass for pm in model.masses])
    if include_self_weight:
        y_mid = midpoint_deflection(u, beam.element_length)
        y, m = np.concatenate([y, y_mid]), np.concatenate([m, beam.element_mass])
    den = np.sum(m * y**2)
    if den == 0:  # every mass sits on a bearing: nothing deflects
        return math.inf
    omega2 = GRAVITY * np.sum(m * y) / den
    return float(np.sqrt(omega2) / (2 * math.pi))


def dunkerley(model: ShaftModel, include_self_weight: bool = False, *,
              max_element: float | None = None) -> float:
    """First lateral natural frequency by Dunkerley's equation.

    1/omega^2 = sum(1/omega_i^2), omega_i^2 = k_ii / m_i = 1 / (alpha_ii m_i), alpha_ii the
    influence coefficient (deflection at mass i under a unit load there) of the massless
    shaft. With ``include_self_weight`` the shaft's own mass enters through one more
    term: the fundamental of the bare shaft from the finite-element model.

    Returns
    -------
    float [Hz]
        A lower bound of the first natural frequency (inf when every mass sits on a
        bearing of a massless shaft).

    References
    ----------
    Thomson and Dahleh, *Theory of Vibration with Applications*, Dunkerley's equation.
    """
    _require_masses(model, include_self_weight, "Dunkerley's equation")
    inv = 0.0
    if model.masses:
        beam, mass_nodes = _mesh(model, max_element)
        f = beam.free
        dof = 2 * np.asarray(mass_nodes)
        free = np.isin(dof, f)  # a mass on a bearing does not deflect: no term
        if free.any():
            pos = np.searchsorted(f, dof[free])
            k = int(free.sum())
            unit = np.zeros((len(f), k))
            unit[pos, np.arange(k)] = 1.0
            flex = scipy.linalg.solve(beam.stiffness[np.ix_(f, f)], unit, assume_a="pos")
            alpha = flex[pos, np.arange(k)]
            masses = np.array([m.mass for m in model.masses])[free]
            inv += float(np.sum(alpha * masses))
    if include_self_weight:
        f_bare = fe_modes(model.without_masses(), 1, max_element=max_element)[0]
        if len(f_bare):
            inv += 1.0 / (2 * math.pi * f_bare[0]) ** 2
    if inv == 0:  # every mass sits on a bearing: nothing deflects
        return math.inf
    return float(1.0 / np.sqrt(inv) / (2 * math.pi))


def fe_modes(model: ShaftModel, n: int = 3, *, rotary_inertia: bool = False,
             max_element: float | None = None) -> tuple[np.ndarray, np.ndarray]:
    """Lateral natural frequencies and mode shapes by beam finite elements.

    Solves K phi = omega^2 M phi (``scipy.linalg.eigh(K, M)``) after removing the
    deflection at the bearings. M is the consistent mass of the shaft plus the lumped
    point masses. For a massless shaft (density 0) M is singular and the flexibility
    form M phi = (1/omega^2) K phi is solved instead; it has as many finite modes as
    masses.

    Parameters
    ----------
    model : ShaftModel
    n : int
        Number of modes wanted (fewer are returned when fewer exist).
    rotary_inertia : bool
        Add each mass's diametral inertia (thin disc: polar / 2).

    Returns
    -------
    freqs : array [Hz]
        Ascending.
    shapes : array, shape (n_modes, n_nodes)
        Deflection at the nodes of :func:`shaft_mesh`, scaled to a peak of +1.

    References
    ----------
    Przemieniecki (1968); Blevins, *Formulas for Natural Frequency and Mode Shape*.
    """
    beam, mass_nodes = _mesh(model, max_element)
    M = beam.mass.copy()
    if model.masses:
        idx = 2 * mass_nodes
        np.add.at(M, (idx, idx), [m.mass for m in model.masses])
        if rotary_inertia:  # thin disc: diametral inertia = polar / 2
            np.add.at(M, (idx + 1, idx + 1), [m.inertia / 2.0 for m in model.masses])
    return solve_modes(beam.stiffness, M, beam.free, n, beam.mass_definite)


@dataclass(frozen=True, eq=False)
class LateralResult:
    """Lateral check of one shaft layout. ``to_dict()`` is the JSON contract.

    ``forcing_hz`` is the running speed of the shaft itself (1×, unbalance) and
    ``forcing_2x_hz`` twice that (misalignment); ``ratio`` is the first lateral natural
    frequency over 1×. Torque orders do not drive lateral modes and are not used here.
    """

    rayleigh_hz: float
    dunkerley_hz: float
    fe_hz: tuple[float, ...]
    static_deflection_max: float          # [m]
    forcing_hz: float
    ratio: float
    required_ratio: float
    verdict: str
    margin_text: str
    method: str
    model: ShaftModel
    x: np.ndarray = field(repr=False)           # node positions [m]
    deflection: np.ndarray = field(repr=False)  # static deflection [m]
    mode_shapes: np.ndarray = field(repr=False)  # (n_modes, n_nodes)
    margin: float = 0.15
    regime: str = "stiff"
    separation: tuple[dict[str, Any], ...] = ()

    @property
    def forcing_2x_hz(self) -> float:
        """Twice the shaft speed (misalignment) [Hz]."""
        return 2.0 * self.forcing_hz

    _repr_html_ = result_html  # the notebook view

    def to_dict(self) -> dict[str, Any]:
        """The JSON contract (frequencies in Hz, deflection in mm)."""
        return {
            "rayleigh_hz": self.rayleigh_hz,
            "dunkerley_hz": self.dunkerley_hz,
            "fe_hz": list(self.fe_hz),
            "static_deflection_max_mm": self.static_deflection_max * 1e3,
            "forcing_hz": self.forcing_hz,
            "forcing_2x_hz": self.forcing_2x_hz,
            "ratio": self.ratio,
            "required_ratio": self.required_ratio,
            "separation_margin": self.margin,
            "regime": self.regime,
            "separation": [dict(d) for d in self.separation],
            "verdict": self.verdict,
            "margin_text": self.margin_text,
            "method": self.method,
        }


def lateral_check(model: ShaftModel, shaft_speed_hz: float, required_ratio: float = 3.0,
                  *, margin: float = 0.15, include_self_weight: bool = False,
                  method: str = "fe", n_modes: int = 3, rotary_inertia: bool = False
                  ) -> LateralResult:
    """Hold the lateral natural frequencies against 1× and 2× the shaft's own speed.

    Lateral modes are driven by unbalance (once per revolution of the shaft that carries
    the masses) and misalignment (twice per revolution); the orders of the torque drive
    torsional modes and are held against those in :mod:`torqlog.shaft.torsion`.

    Two rules, both common practice (no published source):

    * a *stiff* shaft runs below its first critical speed, and the first critical must be
      at least ``required_ratio`` × the running speed (3 to 4 is usual; default 3);
    * a shaft whose first critical lies below 1× (a *flexible* shaft, run through its
      first critical) needs every lateral mode at least ``margin`` (default ±15 %) away
      from 1× and 2×.

    A shaft whose first critical lies between 1× and ``required_ratio`` × fails the stiff
    rule.

    Parameters
    ----------
    model : ShaftModel
    shaft_speed_hz : float [Hz]
        Running speed of this shaft (the flywheel shaft speed ratio already applied).
    required_ratio : float
        Required first critical / running speed for a stiff shaft (default 3).
    margin : float
        Separation margin of every mode from 1× and 2× for a flexible shaft (default 0.15).
    include_self_weight : bool
        Include the shaft's own mass in Rayleigh and Dunkerley and its weight in the
        static deflection (the finite-element modes always include the shaft's mass).
    method : {"fe", "rayleigh", "dunkerley"}
        Whose first frequency decides the verdict (default the finite elements).

    Returns
    -------
    LateralResult

    References
    ----------
    Thomson and Dahleh, *Theory of Vibration with Applications*, whirling of rotating
    shafts (critical speed at the lateral natural frequency, excited by unbalance at 1×).
    """
    if method not in LATERAL_METHODS:
        raise UsageError(f"unknown lateral method {method!r}; valid: "
                         f"{', '.join(LATERAL_METHODS)}")
    speed_hz = float(shaft_speed_hz)
    if not speed_hz > 0:
        raise UsageError(f"shaft speed must be positive, got {speed_hz:g} Hz")
    if not required_ratio > 1:
        raise UsageError(f"required ratio must be greater than 1, got {required_ratio:g}")
    if not 0 < margin < 1:
        raise UsageError(f"separation margin must be a fraction between 0 and 1, "
                         f"got {margin:g}")
    has_mass = bool(model.masses) or include_self_weight
    f_r = rayleigh(model, include_self_weight) if has_mass else math.nan
    f_d = dunkerley(model, include_self_weight) if has_mass else math.nan
    freqs, shapes = fe_modes(model, n_modes, rotary_inertia=rotary_inertia)
    x, y = static_deflection(model, include_self_weight)
    first = {"fe": float(freqs[0]) if len(freqs) else math.nan,
             "rayleigh": f_r, "dunkerley": f_d}[method]
    ratio = first / speed_hz
    label = {"fe": "first lateral mode", "rayleigh": "Rayleigh estimate",
             "dunkerley": "Dunkerley estimate"}[method]
    modes = np.array([first, *[float(f) for f in freqs[1:]]]) if method == "fe" else \
        np.array([first])
    sep = []
    for f in modes:
        for mult in (1, 2):
            sep.append({"mode_hz": float(f), "multiple": mult,
                        "forcing_hz": mult * speed_hz,
                        "separation": float(f / (mult * speed_hz) - 1.0)})
    if ratio >= required_ratio:
        regime, verdict = "stiff", "pass"
        text = (f"{label} {first:.1f} Hz is {ratio:.1f}× the shaft speed {speed_hz:.2f} Hz "
                f"(stiff shaft, required {required_ratio:g}×): pass")
    elif ratio > 1.0:
        regime, verdict = "stiff", "fail"
        text = (f"{label} {first:.1f} Hz is only {ratio:.1f}× the shaft speed "
                f"{speed_hz:.2f} Hz (stiff shaft, required {required_ratio:g}×): fail")
    else:
        regime = "flexible"
        worst = min(sep, key=lambda d: abs(d["separation"]))
        verdict = "pass" if abs(worst["separation"]) >= margin else "fail"
        text = (f"{label} {first:.1f} Hz lies below the shaft speed {speed_hz:.2f} Hz "
                f"(flexible shaft); nearest: mode {worst['mode_hz']:.1f} Hz is "
                f"{worst['separation'] * 100:+.0f} % from {worst['multiple']}× "
                f"(required ±{margin * 100:g} %): {verdict}")
    return LateralResult(f_r, f_d, tuple(float(f) for f in freqs),
                         float(np.max(np.abs(y))), speed_hz, float(ratio),
                         float(required_ratio), verdict, text, method, model, x, y, shapes,
                         float(margin), regime, tuple(sep))


__all__ = [
    "CAUTIONS", "GRAVITY", "LATERAL_METHODS", "LateralResult", "PointMass", "ShaftModel",
    "ShaftSegment", "dunkerley", "fe_modes",
    "lateral_check", "material_properties", "rayleigh", "shaft_mesh",
    "shaft_model_from_profile", "static_deflection", "support_reactions", "bending_moment",
]
