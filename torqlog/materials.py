"""Materials for flywheels and shafts: density, elastic constants, strength, rim-speed limit.

Every value names where it comes from. Strengths are the minimum values of the open EN
material standards for the stated section size; elastic constants and densities are
handbook or standard typical values. Where the exact figure is recalled rather than read
from the document at hand, the source text says "from memory" -- check it against your
copy of the standard and against the mill or foundry certificate before relying on it.
Rim-speed limits are common practice for the kind of construction, not a standard.

References
----------
.. [1] EN 1561:2011, Founding -- Grey cast irons (tensile strength grades EN-GJL-xxx;
   informative annex with typical physical properties).
.. [2] EN 1563:2018, Founding -- Spheroidal graphite cast irons (EN-GJS-400-15).
.. [3] EN 10083-2:2006, Steels for quenching and tempering -- Part 2: non-alloy steels (C45).
.. [4] EN 10025-2:2019, Hot rolled products of structural steels -- Part 2: non-alloy
   structural steels (S355).
.. [5] EN 1993-1-1:2005, Eurocode 3, clause 3.2.6: E = 210 000 N/mm^2, nu = 0.3 for steel.
.. [6] EN 1991-1-1:2002, Eurocode 1, Annex A: unit weight of steel 77.0-78.5 kN/m^3.
"""

from __future__ import annotations

import types
from collections.abc import Mapping
from dataclasses import dataclass, replace

from torqlog.errors import UsageError

STRENGTH_KINDS = ("yield", "tensile")


@dataclass(frozen=True)
class Material:
    """An isotropic, linear-elastic material with one design strength.

    Attributes
    ----------
    name : str
        Table key, e.g. ``"ductile-iron"``.
    density : float [kg/m^3]
    modulus : float [Pa]
        Young's modulus E.
    poisson : float [-]
        Poisson's ratio nu.
    strength : float [Pa]
        Minimum yield strength (ductile materials) or minimum tensile strength
        (brittle grey cast iron), see ``strength_kind``.
    strength_kind : str
        ``"yield"`` or ``"tensile"``.
    brittle : bool
        True for grey cast iron: checked with the maximum principal stress against the
        tensile strength; ductile materials with the von Mises stress against yield.
    rim_speed_limit : float or None [m/s]
        Common-practice limit of the rim (peripheral) speed; None when none is known.
    source : str
        Where each value comes from.
    designation : str
        Standard designation, e.g. ``"EN-GJS-400-15 (EN 1563)"``.
    """

    name: str
    density: float
    modulus: float
    poisson: float
    strength: float
    strength_kind: str
    brittle: bool
    rim_speed_limit: float | None
    source: str
    designation: str = ""

    def __post_init__(self) -> None:
        if self.strength_kind not in STRENGTH_KINDS:
            raise UsageError(f"material {self.name!r}: strength_kind must be one of "
                             f"{', '.join(STRENGTH_KINDS)}, got {self.strength_kind!r}")
        for label, value in (("density", self.density), ("modulus", self.modulus),
                             ("strength", self.strength)):
            if not value > 0:
                raise UsageError(f"material {self.name!r}: {label} must be positive, "
                                 f"got {value!r}")
        if not 0.0 <= self.poisson < 0.5:
            raise UsageError(f"material {self.name!r}: poisson must be in [0, 0.5), "
                             f"got {self.poisson!r}")
        if self.rim_speed_limit is not None and not self.rim_speed_limit > 0:
            raise UsageError(f"material {self.name!r}: rim_speed_limit must be positive, "
                             f"got {self.rim_speed_limit!r}")

    @property
    def shear_modulus(self) -> float:
        """Shear modulus G = E / (2 (1 + nu)) [Pa] (isotropic elasticity)."""
        return self.modulus / (2.0 * (1.0 + self.poisson))


_MPA = 1e6
_GPA = 1e9

_GREY_NOTE = ("E, nu and density: EN 1561 informative annex typical values, from memory; "
              "rim-speed limit 30 m/s: common practice for cast-iron flywheels, from memory. "
              "Strength in a thick casting section is lower than in the test bar.")
_STEEL_ELASTIC = ("E = 210 GPa, nu = 0.3: EN 1993-1-1 cl. 3.2.6; density 7850 kg/m^3: "
                  "EN 1991-1-1 Annex A")

_TABLE: tuple[Material, ...] = (
    Material(
        name="grey-iron-200", designation="EN-GJL-200 (EN 1561)",
        density=7150.0, modulus=100 * _GPA, poisson=0.26,
        strength=200 * _MPA, strength_kind="tensile", brittle=True, rim_speed_limit=30.0,
        source="Rm min 200 MPa: EN 1561 (separately cast 30 mm test bar). " + _GREY_NOTE,
    ),
    Material(
        name="grey-iron-250", designation="EN-GJL-250 (EN 1561)",
        density=7200.0, modulus=110 * _GPA, poisson=0.26,
        strength=250 * _MPA, strength_kind="tensile", brittle=True, rim_speed_limit=30.0,
        source="Rm min 250 MPa: EN 1561 (separately cast 30 mm test bar). " + _GREY_NOTE,
    ),
    Material(
        name="ductile-iron", designation="EN-GJS-400-15 (EN 1563)",
        density=7100.0, modulus=169 * _GPA, poisson=0.275,
        strength=250 * _MPA, strength_kind="yield", brittle=False, rim_speed_limit=50.0,
        source=("Rp0.2 min 250 MPa (Rm min 400 MPa, A min 15 %): EN 1563; E, nu, density: "
                "EN 1563 informative annex typical values, from memory; rim-speed limit "
                "50 m/s: common practice, from memory."),
    ),
    Material(
        name="steel-c45", designation="C45+N (EN 10083-2)",
        density=7850.0, modulus=210 * _GPA, poisson=0.3,
        strength=305 * _MPA, strength_kind="yield", brittle=False, rim_speed_limit=60.0,
        source=("ReH min 305 MPa, normalised, 16 < d <= 100 mm: EN 10083-2, from memory; "
                + _STEEL_ELASTIC + "; rim-speed limit 60 m/s: common practice for a "
                "forged or rolled steel disc, from memory."),
    ),
    Material(
        name="steel-s355", designation="S355 (EN 10025-2)",
        density=7850.0, modulus=210 * _GPA, poisson=0.3,
        strength=335 * _MPA, strength_kind="yield", brittle=False, rim_speed_limit=50.0,
        source=("ReH min 335 MPa for 40 < t <= 63 mm: EN 10025-2; " + _STEEL_ELASTIC
                + "; rim-speed limit 50 m/s: common practice for a steel-plate flywheel, "
                "from memory."),
    ),
)

_ALIASES: dict[str, str] = {"steel": "steel-c45"}

#: Read-only table of materials by name; ``"steel"`` is an alias of ``"steel-c45"``
#: (the default shaft material).
MATERIALS: Mapping[str, Material] = types.MappingProxyType(
    {**{m.name: m for m in _TABLE},
     **{alias: next(m for m in _TABLE if m.name == target)
        for alias, target in _ALIASES.items()}}
)


def get_material(name: str) -> Material:
    """Look a material up by name.

    Parameters
    ----------
    name : str
        A key of :data:`MATERIALS` (case and surrounding blanks are ignored).

    Returns
    -------
    Material

    Raises
    ------
    UsageError
        ``unknown material 'xyz'; known: ...`` listing every name.

    Examples
    --------
    >>> m = get_material("steel-c45")
    >>> m.density, m.strength / 1e6, m.designation
    (7850.0, 305.0, 'C45+N (EN 10083-2)')
    """
    key = str(name).strip().lower()
    if key not in MATERIALS:
        raise UsageError(f"unknown material {name!r}; known: {', '.join(MATERIALS)}")
    return MATERIALS[key]


_SHOWN = {"density": (1.0, "kg/m^3"), "modulus": (1e9, "GPa"), "strength": (1e6, "MPa"),
          "rim_speed_limit": (1.0, "m/s")}


def _describe(key: str, value: object) -> str:
    if key in _SHOWN and isinstance(value, int | float):
        factor, unit = _SHOWN[key]
        return f"{key}={value / factor:g} {unit}"
    return f"{key}={value}"


def custom_material(base: Material | str | None = None, *, density: float | None = None,
                    modulus: float | None = None, poisson: float | None = None,
                    strength: float | None = None, strength_kind: str | None = None,
                    brittle: bool | None = None,
                    rim_speed_limit: float | None = None) -> Material:
    """A material from a base with some values overridden, or built from scratch.

    Parameters
    ----------
    base : Material, str or None
        Start from this material (or table name); None builds a new ductile material and
        then ``density``, ``modulus``, ``poisson`` and ``strength`` are all required.
    density : float [kg/m^3], optional
    modulus : float [Pa], optional
    poisson : float [-], optional
    strength : float [Pa], optional
    strength_kind : str, optional
        ``"yield"`` or ``"tensile"``.
    brittle : bool, optional
    rim_speed_limit : float [m/s], optional

    Returns
    -------
    Material
        Named ``"<base>+custom"`` (or ``"custom"``); ``source`` lists the overrides.

    Raises
    ------
    UsageError
        If a required value is missing or a value is out of range.
    """
    given = {k: v for k, v in dict(density=density, modulus=modulus, poisson=poisson,
                                   strength=strength, strength_kind=strength_kind,
                                   brittle=brittle, rim_speed_limit=rim_speed_limit).items()
             if v is not None}
    changed = ", ".join(_describe(k, v) for k, v in given.items())
    if base is None:
        missing = [k for k in ("density", "modulus", "poisson", "strength") if k not in given]
        if missing:
            raise UsageError(f"a custom material without a base needs {', '.join(missing)}; "
                             "give them or start from a known material")
        values = {"strength_kind": "yield", "brittle": False, "rim_speed_limit": None,
                  **given}
        return Material(name="custom", source=f"user values: {changed}", **values)
    mat = get_material(base) if isinstance(base, str) else base
    if not given:
        return mat
    return replace(mat, name=f"{mat.name}+custom",
                   source=f"user values: {changed}; other values: {mat.source}", **given)
