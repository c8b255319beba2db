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
from pathlib import Path

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
    ultimate : float or None [Pa]
        Minimum ultimate tensile strength Sut of a ductile material, when known: a shaft's
        fatigue check needs it (endurance limit and Goodman line, Shigley 10th ed.
        eqs. 6-8, 7-8). None when not given.
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
    ultimate: float | None = None

    def __post_init__(self) -> None:
        if self.strength_kind not in STRENGTH_KINDS:
            raise UsageError(f"material {self.name!r}: strength_kind must be one of "
                             f"{', '.join(STRENGTH_KINDS)}, got {self.strength_kind!r}")
        for label, value in (("density", self.density), ("modulus", self.modulus),
                             ("strength", self.strength)):
            if not value > 0:
                raise UsageError(f"material {self.name!r}: {label} must be positive, "
                                 f"got {value!r}")
        if self.ultimate is not None and not self.ultimate > 0:
            raise UsageError(f"material {self.name!r}: ultimate strength must be positive, "
                             f"got {self.ultimate!r}")
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
        ultimate=400 * _MPA,
        source=("Rp0.2 min 250 MPa (Rm min 400 MPa, A min 15 %): EN 1563; E, nu, density: "
                "EN 1563 informative annex typical values, from memory; rim-speed limit "
                "50 m/s: common practice, from memory."),
    ),
    Material(
        name="steel-c45", designation="C45+N (EN 10083-2)",
        density=7850.0, modulus=210 * _GPA, poisson=0.3,
        strength=305 * _MPA, strength_kind="yield", brittle=False, rim_speed_limit=60.0,
        ultimate=580 * _MPA,
        source=("ReH min 305 MPa, Rm min 580 MPa, normalised, 16 < d <= 100 mm: EN 10083-2, "
                "from memory; "
                + _STEEL_ELASTIC + "; rim-speed limit 60 m/s: common practice for a "
                "forged or rolled steel disc, from memory."),
    ),
    Material(
        name="steel-s355", designation="S355 (EN 10025-2)",
        density=7850.0, modulus=210 * _GPA, poisson=0.3,
        strength=335 * _MPA, strength_kind="yield", brittle=False, rim_speed_limit=50.0,
        ultimate=470 * _MPA,
        source=("ReH min 335 MPa for 40 < t <= 63 mm, Rm min 470 MPa for 3 <= t <= 100 mm "
                "(from memory): EN 10025-2; " + _STEEL_ELASTIC
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


def get_material(name: str, table: Mapping[str, Material] | None = None) -> Material:
    """Look a material up by name.

    Parameters
    ----------
    name : str
        A key of :data:`MATERIALS` or of ``table`` (case and surrounding blanks are
        ignored).
    table : mapping of str to Material, optional
        A plant's own materials (:func:`load_materials`), searched after the built-in table.

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
    if key in MATERIALS:
        return MATERIALS[key]
    if table and key in table:
        return table[key]
    known = [*MATERIALS, *(table or {})]
    raise UsageError(f"unknown material {name!r}; known: {', '.join(known)}")


_SHOWN = {"density": (1.0, "kg/m^3"), "modulus": (1e9, "GPa"), "strength": (1e6, "MPa"),
          "rim_speed_limit": (1.0, "m/s")}


def _describe(key: str, value: object) -> str:
    if key in _SHOWN and isinstance(value, int | float):
        factor, unit = _SHOWN[key]
        return f"{key}={value / factor:g} {unit}"
    return f"{key}={value}"


USER_SOURCE = "properties as given by the user"

#: How each property of a material is given: field -> (command-line option, profile /
#: materials-file key, unit of a bare number in that key, quantity kind).
PROPERTY_KEYS: dict[str, tuple[str, str, str, str]] = {
    "density": ("--density", "density_kg_per_m3", "kg/m**3", "density"),
    "modulus": ("--modulus", "modulus_GPa", "GPa", "stress"),
    "poisson": ("--poisson", "poisson", "", "dimensionless"),
    "strength": ("--yield", "yield_MPa (tensile_MPa if brittle)", "MPa", "stress"),
}
_BEHAVIOURS = ("ductile", "brittle")
_FILE_KEYS = ("name", "density_kg_per_m3", "modulus_GPa", "poisson", "yield_MPa",
              "tensile_MPa", "behaviour", "rim_speed_limit_m_s", "designation", "source")


def _missing_message(missing: list[str], name: str) -> str:
    parts = [f"{k} ({PROPERTY_KEYS[k][0]} on the command line, {PROPERTY_KEYS[k][1]} in a "
             f"profile or materials file)" for k in missing]
    return (f"material {name!r} is given by its properties and lacks "
            + "; ".join(f"{i}. {p}" for i, p in enumerate(parts, 1))
            + "; give each, or name a known material")


def _behaviour_message(name: str) -> str:
    return (f"material {name!r}: say whether it is ductile or brittle (--behaviour "
            "ductile|brittle, or behaviour = \"ductile\" in the file); it decides the "
            "failure criterion (von Mises against yield, or maximum principal stress "
            "against tensile strength) and the default material factor")


def material_from_properties(*, density: float | None = None, modulus: float | None = None,
                             poisson: float | None = None, strength: float | None = None,
                             brittle: bool | None = None,
                             rim_speed_limit: float | None = None, name: str = "custom",
                             source: str = USER_SOURCE, designation: str = "",
                             need_behaviour: bool = True,
                             ultimate: float | None = None) -> Material:
    """A material of its own, from properties the user gives (no table entry behind it).

    Parameters
    ----------
    density : float [kg/m^3]
    modulus : float [Pa]
    poisson : float [-]
    strength : float [Pa]
        Minimum yield strength (ductile) or minimum tensile strength (brittle).
    brittle : bool or None
        Decides the failure criterion; None is refused when ``need_behaviour``.
    rim_speed_limit : float [m/s], optional
        Common-practice limit of the rim speed, if the user knows one.
    name : str
        The user's name for it (default ``"custom"``).
    source : str
        Where the values come from; default ``"properties as given by the user"``.
    designation : str
        A standard designation only when the user gives one; none is claimed otherwise.
    need_behaviour : bool
        Refuse ``brittle=None`` (True where it decides the criterion); else ductile.
    ultimate : float [Pa], optional
        Ultimate tensile strength Sut of a ductile material (beside its yield strength).

    Returns
    -------
    Material

    Raises
    ------
    UsageError
        Naming every missing property, one by one, with the option and key that give it;
        or asking for the ductile/brittle choice.

    Examples
    --------
    >>> m = material_from_properties(density=7850.0, modulus=210e9, poisson=0.3,
    ...                              strength=305e6, brittle=False, name="shop steel")
    >>> (m.name, m.designation, m.source)
    ('shop steel', '', 'properties as given by the user')
    """
    values = {"density": density, "modulus": modulus, "poisson": poisson,
              "strength": strength}
    missing = [k for k, v in values.items() if v is None]
    if missing:
        raise UsageError(_missing_message(missing, name))
    if brittle is None:
        if need_behaviour:
            raise UsageError(_behaviour_message(name))
        brittle = False
    return Material(name=name, density=float(density), modulus=float(modulus),
                    poisson=float(poisson), strength=float(strength),
                    strength_kind="tensile" if brittle else "yield", brittle=bool(brittle),
                    rim_speed_limit=rim_speed_limit, source=source, designation=designation,
                    ultimate=None if ultimate is None or brittle else float(ultimate))


def custom_material(base: Material | str | None = None, *, density: float | None = None,
                    modulus: float | None = None, poisson: float | None = None,
                    strength: float | None = None, strength_kind: str | None = None,
                    brittle: bool | None = None,
                    rim_speed_limit: float | None = None) -> Material:
    """A material from a base with some values overridden, or built from scratch.

    Parameters
    ----------
    base : Material, str or None
        Start from this material (or table name); None builds a material of its own
        (:func:`material_from_properties`, ductile unless ``brittle``).
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
        Named ``"<base>+custom"`` (or ``"custom"``); ``source`` lists the overrides. A
        changed material claims no standard designation: its numbers are not the
        standard's.

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
        mat = material_from_properties(density=density, modulus=modulus, poisson=poisson,
                                       strength=strength, brittle=brittle,
                                       rim_speed_limit=rim_speed_limit,
                                       source=f"{USER_SOURCE}: {changed}",
                                       need_behaviour=False)
        return replace(mat, strength_kind=strength_kind) if strength_kind else mat
    mat = get_material(base) if isinstance(base, str) else base
    if not given:
        return mat
    return replace(mat, name=f"{mat.name}+custom", designation="",
                   source=f"user values: {changed}; other values: {mat.source}", **given)


def _quantity(value: object, unit: str, kind: str, where: str) -> float:
    from torqlog.io.units import parse_quantity

    if isinstance(value, bool) or not isinstance(value, int | float | str):
        raise UsageError(f"{where}: give a number or a number with its unit, not {value!r}")
    return parse_quantity(value, unit, kind, name=where)


def material_from_mapping(spec: Mapping[str, object], where: str,
                          source: str = USER_SOURCE, need_behaviour: bool = True,
                          **overrides: float | bool | None) -> Material:
    """A material of its own from a profile or materials-file table.

    Parameters
    ----------
    spec : mapping
        Keys ``name``, ``density_kg_per_m3``, ``modulus_GPa``, ``poisson``, ``yield_MPa``
        (ductile; with ``tensile_MPa`` beside it, its ultimate tensile strength) or
        ``tensile_MPa`` alone (brittle), ``behaviour`` (``"ductile"`` or
        ``"brittle"``), optional ``rim_speed_limit_m_s``, ``designation``, ``source``.
        A number is in the key's unit; text with a unit (``"0.26 lb/in^3"``) is converted.
    where : str
        Where the table is (file and section) for messages.
    source : str
        Default source text.
    need_behaviour : bool
        See :func:`material_from_properties`.
    **overrides
        ``density``, ``modulus``, ``poisson``, ``strength`` [SI], ``brittle``: values
        given on the command line, which win over the table.

    Returns
    -------
    Material

    Raises
    ------
    UsageError
        An unknown key (named), a bad value, a missing property or behaviour.
    """
    unknown = [k for k in spec if k not in _FILE_KEYS]
    if unknown:
        raise UsageError(f"{where}: unknown material key {unknown[0]!r}; valid keys: "
                         f"{', '.join(_FILE_KEYS)}")
    name = str(spec.get("name", "custom")).strip() or "custom"
    behaviour = spec.get("behaviour")
    if behaviour is not None and behaviour not in _BEHAVIOURS:
        raise UsageError(f"{where}: behaviour must be \"ductile\" or \"brittle\", "
                         f"got {behaviour!r}")
    brittle = overrides.get("brittle")
    if brittle is None and behaviour is not None:
        brittle = behaviour == "brittle"
    both = "yield_MPa" in spec and "tensile_MPa" in spec
    if both and brittle is None:
        brittle = False  # a yield strength is given: a ductile material
    if brittle is True and "yield_MPa" in spec:
        raise UsageError(f"{where}: a brittle material is checked against its tensile "
                         "strength; give tensile_MPa instead of yield_MPa")
    if brittle is not True and "tensile_MPa" in spec and "yield_MPa" not in spec:
        raise UsageError(f"{where}: a ductile material is checked against its yield "
                         "strength; give yield_MPa too (tensile_MPa is then its ultimate "
                         "tensile strength), or behaviour = \"brittle\" for a cast iron")
    values: dict[str, float | None] = {}
    for field_name, key, unit, kind in (
            ("density", "density_kg_per_m3", "kg/m**3", "density"),
            ("modulus", "modulus_GPa", "GPa", "stress"),
            ("poisson", "poisson", "", "dimensionless"),
            ("strength", "yield_MPa", "MPa", "stress"),
            ("ultimate" if both else "strength", "tensile_MPa", "MPa", "stress"),
            ("rim_speed_limit", "rim_speed_limit_m_s", "m/s", "velocity")):
        if key in spec:
            values[field_name] = _quantity(spec[key], unit, kind, f"{where} {key}")
    for k in ("density", "modulus", "poisson", "strength"):
        if overrides.get(k) is not None:
            values[k] = float(overrides[k])  # type: ignore[arg-type]
    ult, sy = values.get("ultimate"), values.get("strength")
    if ult is not None and sy is not None and sy > ult:
        raise UsageError(f"{where}: yield_MPa {sy / 1e6:g} is above tensile_MPa {ult / 1e6:g}; "
                         "the yield strength of a ductile material is below its ultimate "
                         "tensile strength")
    return material_from_properties(
        **{k: values.get(k) for k in ("density", "modulus", "poisson", "strength",
                                      "rim_speed_limit", "ultimate")},
        brittle=brittle, name=name, source=str(spec.get("source", source)),
        designation=str(spec.get("designation", "")), need_behaviour=need_behaviour)


def load_materials(path: str | Path) -> dict[str, Material]:
    """Read a plant's own materials table (TOML).

    One table per material, its header the name::

        ["brindlemoor-iron"]
        behaviour = "brittle"
        density_kg_per_m3 = 7200
        modulus_GPa = 105
        poisson = 0.26
        tensile_MPa = 220
        rim_speed_limit_m_s = 30
        source = "foundry certificate 2026-114"

    Parameters
    ----------
    path : str or Path
        The TOML file.

    Returns
    -------
    dict of str to Material
        By lower-case name; the source defaults to ``"properties as given in <path>"``.

    Raises
    ------
    UsageError
        Missing file; a name that is also a built-in material; any refusal of
        :func:`material_from_mapping`.
    DataError
        Not valid TOML.
    """
    import tomllib

    from torqlog.errors import DataError

    p = Path(path)
    if not p.is_file():
        raise UsageError(f"{p}: materials file does not exist")
    try:
        data = tomllib.loads(p.read_text(encoding="utf-8"))
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise DataError(f"{p}: not a valid TOML materials file ({exc})") from None
    out: dict[str, Material] = {}
    for name, spec in data.items():
        key = name.strip().lower()
        if not isinstance(spec, dict):
            raise DataError(f"{p}: {name!r} must be a table of properties, e.g. "
                            f"[\"{name}\"] with density_kg_per_m3 = ...")
        if key in MATERIALS:
            raise UsageError(f"{p}: {name!r} is a built-in material; give the plant's own "
                             "material another name")
        out[key] = material_from_mapping({**spec, "name": key}, f"{p} [{name}]",
                                         source=f"properties as given in {p}")
    return out


def resolve_material(material: str | Mapping[str, object] | None, *,
                     table: Mapping[str, Material] | None = None,
                     density: float | None = None, modulus: float | None = None,
                     poisson: float | None = None, strength: float | None = None,
                     brittle: bool | None = None, name: str | None = None,
                     where: str = "material", need_behaviour: bool = True) -> Material:
    """The material a command uses: a known name, a table of properties, or properties alone.

    Parameters
    ----------
    material : str, mapping or None
        A name (built-in or in ``table``), a profile table of properties
        (:func:`material_from_mapping`), or None.
    table : mapping of str to Material, optional
        The plant's own materials (``--materials FILE``).
    density [kg/m^3], modulus [Pa], poisson [-], strength [Pa] : float, optional
        Properties given on the command line. With a named material they override its
        values (the result is ``"<name>+custom"`` and claims no designation); without
        one they make a material of their own, and then all four are needed.
    brittle : bool, optional
        The ductile/brittle choice (asked for when the material has none).
    name : str, optional
        The user's name for a material given by properties.
    where : str
        Where a profile table came from, for messages.
    need_behaviour : bool
        Ask for the ductile/brittle choice of a material given by its properties (True
        where it decides the failure criterion, as for a flywheel; a shaft's stiffness
        and mass do not depend on it, so :func:`shaft_material` passes False).

    Returns
    -------
    Material

    Raises
    ------
    UsageError
        Unknown name; missing properties named one by one; no ductile/brittle choice.
    """
    props = dict(density=density, modulus=modulus, poisson=poisson, strength=strength)
    given = {k: v for k, v in props.items() if v is not None}
    if isinstance(material, Mapping):
        spec = dict(material)
        if name:
            spec["name"] = name
        return material_from_mapping(spec, where, brittle=brittle,
                                     need_behaviour=need_behaviour, **given)
    if material is None:
        if not given and brittle is None:
            known = [*MATERIALS, *(table or {})]
            raise UsageError(f"give --material (known: {', '.join(known)}) or the "
                             "material's properties --density, --modulus, --poisson, "
                             "--yield and --behaviour")
        return material_from_properties(**props, brittle=brittle, name=name or "custom",
                                        need_behaviour=need_behaviour)
    base = get_material(material, table)
    if not given and brittle is None:
        return base
    return custom_material(base, brittle=brittle,
                           strength_kind=None if brittle is None else
                           ("tensile" if brittle else "yield"), **given)


def shaft_material(spec: str | Mapping[str, object] | None, *,
                   table: Mapping[str, Material] | None = None,
                   where: str = "[shaft] material") -> Material:
    """The material of a shaft (or of one shaft segment), by the same rules as a flywheel's.

    Parameters
    ----------
    spec : str, mapping or None
        A material name (built-in, or in ``table``), or a table of properties with the
        keys a flywheel material takes (``name``, ``density_kg_per_m3``, ``modulus_GPa``,
        ``poisson``, ``yield_MPa`` | ``tensile_MPa``, ``behaviour``, ``designation``,
        ``source``; :func:`material_from_mapping`). None is ``"steel"``.
    table : mapping of str to Material, optional
        The plant's own materials (``--materials FILE``, :func:`load_materials`).
    where : str
        Where the spec is (file and key), for messages.

    Returns
    -------
    Material
        A material given by its properties is named as the user named it (or "custom"),
        with "properties as given by the user" as its source and no standard designation.
        The shaft's lateral and torsional checks read its modulus, density and shear
        modulus; the ductile/brittle choice is not asked for (it decides nothing there).

    Examples
    --------
    >>> m = shaft_material({"name": "bar stock", "density_kg_per_m3": 7850,
    ...                     "modulus_GPa": 210, "poisson": 0.3, "yield_MPa": 305})
    >>> m.name, m.designation, m.modulus, m.source
    ('bar stock', '', 210000000000.0, 'properties as given by the user')
    """
    return resolve_material("steel" if spec is None else spec, table=table, where=where,
                            need_behaviour=False)
