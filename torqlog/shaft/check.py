"""The shaft check of one machine: lateral modes against 1x and 2x the shaft speed,
torsional modes and forced response against the log's orders, and shaft strength, before
and after a flywheel is added.

It combines :mod:`torqlog.shaft.lateral` (lateral), :mod:`torqlog.shaft.torsion`,
:mod:`torqlog.shaft.torsional_response` and :mod:`torqlog.shaft.sections`; each holds its
physics and references, this module only assembles them for one machine profile.
Every result here is a preliminary engineering estimate; see
:data:`torqlog.shaft.lateral.CAUTIONS`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from torqlog.errors import DataError, UsageError
from torqlog.io.notebook import result_html
from torqlog.io.profile import MachineProfile
from torqlog.shaft.geometry import PointMass
from torqlog.shaft.lateral import (
    CAUTIONS,
    LateralResult,
    ShaftModel,
    lateral_check,
    shaft_model_from_profile,
)
from torqlog.shaft.sections import StrengthOptions, details_from_profile, shaft_strength
from torqlog.shaft.strength import DEFAULT_SHAFT_STEEL, FATIGUE_METHODS
from torqlog.shaft.torsion import (
    ASSUMED_MAX_ORDER,
    TorsionalChain,
    TorsionalResult,
    significant_orders,
    torsional_chain_from_profile,
    torsional_check,
)
from torqlog.shaft.torsional_response import (
    DEFAULT_DAMPING_RATIO,
    complex_orders,
    forced_response,
)

# --------------------------------------------------------------------------- the check
_RANK = {"fail": 0, "marginal": 1, "pass": 2}


@dataclass(frozen=True, eq=False)
class ShaftState:
    """Lateral and torsional results of one configuration (torsional may be None), and
    with a log the torsional forced response and the shaft strength."""

    lateral: LateralResult
    torsional: TorsionalResult | None
    response: Any = None   # ForcedResponse or None
    strength: Any = None   # StrengthResult or None

    def to_dict(self) -> dict[str, Any]:
        return {"lateral": self.lateral.to_dict(),
                "torsional": self.torsional.to_dict() if self.torsional else None,
                "forced_response": self.response.to_dict() if self.response else None,
                "strength": self.strength.to_dict() if self.strength else None}


@dataclass(frozen=True, eq=False)
class ShaftResult:
    """Shaft check before (and after, when parts are added). ``to_dict()`` is the JSON
    contract; ``current`` is the after state when there is one, else the before, and the
    ``verdict`` is that of the current state."""

    before: ShaftState
    after: ShaftState | None
    cautions: tuple[str, ...]
    options: dict[str, Any]
    speed: float  # [rad/s]

    @property
    def current(self) -> ShaftState:
        return self.after if self.after is not None else self.before

    @property
    def failures(self) -> dict[str, str]:
        """Failed checks of the current state: {"lateral" | "torsional": margin text}."""
        checks = {"lateral": self.current.lateral, "torsional": self.current.torsional,
                  "strength": self.current.strength}
        return {name: res.margin_text for name, res in checks.items()
                if res is not None and res.verdict == "fail"}

    def _checks(self) -> list[tuple[str, str, str]]:
        """(name, verdict, margin text) of the current state's checks, worst first: fail,
        marginal, pass; among equals the strength check (its governing check is named)
        before lateral before torsional. A check that could not be made is left out."""
        st = self.current
        out = []
        if st.strength is not None:
            name, verdict, _ = st.strength.checks[0]
            out.append((name, verdict, st.strength.margin_text))
        out += [(n, r.verdict, r.margin_text) for n, r in (("lateral", st.lateral),
                                                           ("torsional", st.torsional))
                if r is not None and r.verdict in _RANK]
        return sorted(out, key=lambda c: _RANK[c[1]])

    @property
    def marginals(self) -> dict[str, str]:
        """Marginal checks of the current state (safety factor between 1 and the required
        one): {"strength": margin text}."""
        st = self.current.strength
        return {"strength": st.margin_text} if st is not None and st.verdict == "marginal" \
            else {}

    @property
    def verdict(self) -> str:
        """The worst check of the current state: "fail" over "marginal" over "pass" (a
        torsional check that could not be made does not count)."""
        checks = self._checks()
        return checks[0][1] if checks else "pass"

    @property
    def governing_check(self) -> str | None:
        """The check that sets the verdict: ``"lateral"``, ``"torsional"`` or the strength
        check's own name (e.g. ``"fatigue at keyseat under flywheel"``)."""
        checks = self._checks()
        return checks[0][0] if checks else None

    def to_pandas(self) -> pd.DataFrame:
        """One row per frequency: ``state``, ``check``, ``estimate``, ``frequency_Hz``."""
        rows: list[tuple[str, str, str, float]] = []
        states = [("before", self.before)] + ([("after", self.after)] if self.after else [])
        for label, st in states:
            lat = st.lateral
            rows += [(label, "lateral", "Rayleigh", lat.rayleigh_hz),
                     (label, "lateral", "Dunkerley", lat.dunkerley_hz)]
            rows += [(label, "lateral", f"FE mode {i + 1}", f) for i, f in enumerate(lat.fe_hz)]
            if st.torsional is not None:
                tor = st.torsional
                rows += [(label, "torsional", "rigid body" if r else f"mode {i}", f)
                         for i, (f, r) in enumerate(zip(tor.modes_hz, tor.rigid_body,
                                                        strict=True))]
        return pd.DataFrame(rows, columns=["state", "check", "estimate", "frequency_Hz"])

    _repr_html_ = result_html  # the notebook view

    def to_dict(self) -> dict[str, Any]:
        cur = self.current.to_dict()
        strength = self.current.strength
        return {"before": self.before.to_dict(),
                "after": self.after.to_dict() if self.after else None,
                "lateral": cur["lateral"], "torsional": cur["torsional"],
                "forced_response": cur["forced_response"], "strength": cur["strength"],
                "fatigue_safety_factor": strength.fatigue_safety_factor if strength else None,
                "governing_section": strength.to_dict()["governing_section"]
                if strength else None,
                "verdict": self.verdict, "governing_check": self.governing_check,
                "failed": list(self.failures), "marginal": list(self.marginals),
                "cautions": list(self.cautions), "options": dict(self.options)}


def check_shaft(profile: MachineProfile, *, speed: float | None = None, orders: Any = None,
                add_mass: float | None = None, add_mass_at: float | None = None,
                add_inertia: float | None = None, add_inertia_at: str | None = None,
                required_ratio: float | None = None, band: float | None = None,
                min_share: float | None = None, self_weight: bool | None = None,
                material: str | Mapping[str, Any] | None = None,
                revs_per_cycle: int | None = None,
                margin: float | None = None, cycle_torque: np.ndarray | None = None,
                torque_peak_logged: float | None = None, damping_ratio: float | None = None,
                fatigue_method: str | None = None, excitation_at: str | None = None,
                materials: Mapping[str, Any] | None = None) -> ShaftResult:
    """Check a machine's shaft, lateral and torsional, before and after adding parts.

    Parameters
    ----------
    profile : MachineProfile
        Needs ``[shaft]``; ``[torsional]`` is optional.
    speed : float, optional [rad/s]
        Shaft speed; default the profile's ``[machine] speed_rpm``.
    orders : OrderSpectrum, mapping, sequence or None
        Orders of the shaft speed present in the torque (see
        :func:`torqlog.shaft.torsion.torsional_check`); they are held against the torsional
        modes only. The lateral modes are held against 1× (unbalance) and 2×
        (misalignment) the speed of the ``[shaft]`` itself, which turns at
        ``[machine] flywheel_speed_ratio`` × ``speed`` (the shaft described is the one that
        carries the flywheel).
    add_mass : float, optional [kg]
        A part added to the shaft (e.g. a flywheel).
    add_mass_at : float, optional [m]
        Its position; default the position of the shaft mass named ``add_inertia_at``
        (``"flywheel"``).
    add_inertia : float, optional [kg*m^2]
        Inertia added to the chain element named ``add_inertia_at`` (default
        ``"flywheel"``); also the polar inertia of the added mass.
    required_ratio, band, min_share, self_weight
        Default: the profile's ``[shaft]`` / ``[torsional]`` values, else 3.0 (common
        practice), 0.10 (common practice), 0.05 and False.
    margin : float, optional
        Lateral separation margin from 1× and 2× for a shaft running above its first
        critical; default the profile's ``[shaft] separation_margin``, else 0.15 (common
        practice).
    material : str or mapping, optional
        Overrides ``[shaft] material``: a name, or a table of properties with the keys a
        flywheel material takes (:func:`torqlog.rotor.materials.shaft_material`).
    materials : mapping of str to Material, optional
        The plant's own materials (``--materials FILE``), where names are looked up too.
    revs_per_cycle : int, optional
        Shaft revolutions per machine cycle (steps of the assumed orders when no
        spectrum is given); default the profile's ``[machine] revs_per_cycle``, else 1.

    Returns
    -------
    ShaftResult
    """
    from torqlog.rotor.materials import shaft_material

    spec = material or profile.shaft.get("material", "steel")
    mat = shaft_material(spec, table=materials,
                         where=f"{profile.source or '<profile>'}: [shaft] material")
    model = shaft_model_from_profile(profile, material, materials=materials)
    chain = torsional_chain_from_profile(profile)
    if speed is None:
        speed = profile.machine.get("speed")
    if speed is None:
        raise UsageError("no running speed: give --speed-rpm or set speed_rpm in the "
                         "profile's [machine] section")
    if not speed > 0:
        raise UsageError(f"running speed must be positive, got {speed * 60 / (2 * math.pi):g} rpm")
    required_ratio = _pick(required_ratio, profile.shaft.get("required_ratio"), 3.0)
    band = _pick(band, profile.torsional.get("band"), 0.10)
    min_share = _pick(min_share, profile.torsional.get("min_share"), 0.05)
    self_weight = bool(_pick(self_weight, profile.shaft.get("self_weight"), False))
    revs = int(_pick(revs_per_cycle, profile.machine.get("revs_per_cycle"), 1))
    if revs < 1:
        raise UsageError(f"revs per cycle must be a whole number of 1 or more, got {revs}")
    at_name = add_inertia_at or "flywheel"

    o, _, orders_source = significant_orders(orders, min_share, revs)
    forcing_order = float(o.max()) if len(o) else math.nan
    speed_hz = speed / (2 * math.pi)
    # [shaft] describes the shaft that carries the flywheel, turning at
    # flywheel_speed_ratio × the logged speed: its 1× (unbalance) and 2× (misalignment)
    # drive the lateral modes; the torque orders drive only the torsional ones
    shaft_ratio = float(profile.machine.get("flywheel_speed_ratio", 1.0))
    shaft_speed_hz = shaft_ratio * speed_hz
    margin = _pick(margin, profile.shaft.get("separation_margin"), 0.15)

    strength_ctx = (_strength_context(profile, model, damping_ratio, fatigue_method,
                                      excitation_at, speed, shaft_ratio, spec, mat)
                    if cycle_torque is not None else None)

    def state(m: ShaftModel, c: TorsionalChain | None) -> ShaftState:
        lat = lateral_check(m, shaft_speed_hz, required_ratio, margin=margin,
                            include_self_weight=self_weight)
        tor = (torsional_check(c, orders, speed, band, min_share, revs_per_cycle=revs)
               if c is not None else None)
        if strength_ctx is None:
            return ShaftState(lat, tor)
        resp, strength = _response_and_strength(strength_ctx, m, c, cycle_torque, revs,
                                                torque_peak_logged)
        return ShaftState(lat, tor, resp, strength)

    before = state(model, chain)
    after = None
    if add_mass_at is not None and add_mass is None:
        raise UsageError("a position for an added mass (--at) was given without the mass "
                         "(--add-mass)")
    if add_mass is not None or add_inertia is not None:
        new_model, new_chain = model, chain
        if add_mass is not None:
            if not add_mass > 0:
                raise UsageError(f"added mass must be positive, got {add_mass:g} kg")
            if add_mass_at is None:
                named = [m.at for m in model.masses if m.name == at_name]
                if not named:
                    raise UsageError(f"an added mass needs its position (--at); the shaft "
                                     f"has no mass named {at_name!r} to place it at")
                add_mass_at = named[0]
            if not 0 <= add_mass_at <= model.length:
                raise UsageError(f"added mass at {add_mass_at:g} m is outside the shaft "
                                 f"(0 to {model.length:g} m); give --at within the shaft")
            new_model = model.with_mass(PointMass("added", add_mass, add_mass_at,
                                                  add_inertia or 0.0))
        if add_inertia is not None:
            if not add_inertia > 0:
                raise UsageError(f"added inertia must be positive, got {add_inertia:g} kg*m^2")
            if chain is None:
                raise UsageError("an added inertia needs a [torsional] section in the profile")
            new_chain = chain.add_inertia(add_inertia, at_name)
        after = state(new_model, new_chain)

    cautions = list(CAUTIONS)
    if orders is None:
        cautions.append(f"No measured order spectrum was given: every order up to "
                        f"{ASSUMED_MAX_ORDER:g} of the shaft speed was assumed significant.")
    if chain is None:
        cautions.append("No [torsional] section in the profile: torsional modes not checked.")
    options = {
        "speed_rpm": speed * 60 / (2 * math.pi), "speed_hz": speed_hz,
        "revs_per_cycle": revs, "required_ratio": required_ratio, "band": band,
        "min_share": min_share, "self_weight": self_weight,
        "orders_source": orders_source,
        "forcing_order": None if math.isnan(forcing_order) else forcing_order,
        "shaft_speed_ratio": shaft_ratio, "shaft_speed_hz": shaft_speed_hz,
        "separation_margin": margin,
        "lateral_forcing": "1× (unbalance) and 2× (misalignment) of the flywheel shaft "
                           "speed; torque orders act on the torsional modes only",
        "gyroscopic": "not included (non-rotating modes)",
        "material": spec if isinstance(spec, str) else mat.name,
        "material_designation": mat.designation, "material_source": mat.source,
        "modulus_GPa": model.modulus / 1e9, "density_kg_per_m3": model.density,
        "supports": "simple (rigid)", "lateral_mass": "consistent shaft mass + point masses",
        "add_mass_kg": add_mass, "add_mass_at_m": add_mass_at,
        "add_inertia_kgm2": add_inertia, "add_inertia_at": at_name,
    }
    if strength_ctx is not None:
        options.update(strength_ctx["options"])
        cautions += strength_ctx["notes"]
    return ShaftResult(before, after, tuple(cautions), options, float(speed))


_STRENGTH_LINES = (("ultimate", "ultimate_strength_MPa", "tensile_MPa",
                    "ultimate tensile strength Sut"),
                   ("yield", "yield_strength_MPa", "yield_MPa", "yield strength Sy"))


def shaft_strengths(sec: Mapping[str, Any], spec: str | Mapping[str, Any], mat: Any,
                    method: str, src: str) -> tuple[float, float, str, list[str]]:
    """Ultimate and yield strength [Pa] of the shaft's strength check, their label and notes.

    A material of the user's own (a table of properties, or a name from ``--materials``)
    is never replaced: its strengths are used, and ``[shaft] ultimate_strength_MPa`` /
    ``yield_strength_MPa`` lines must agree with it (they may supply a value it lacks).
    A built-in material's minimum values give way to the profile's lines (a certificate's
    values, say), and the label says so. The generic ``"steel"`` with no lines keeps the
    stated default, AISI 1045 CD (Shigley 10th ed. Table A-20), with a note. Every
    fatigue criterion needs Sut: the endurance limit Se' = 0.5 Sut (Shigley 10th ed.
    eq. 6-8) and the surface factor ka = a Sut^b (eq. 6-19).

    Parameters
    ----------
    sec : mapping
        The profile's ``[shaft]`` section (strength lines in Pa).
    spec : str or mapping
        The ``[shaft] material`` as given.
    mat : Material
        The material it resolves to.
    method : str
        Fatigue criterion, for messages.
    src : str
        The profile's file, for messages.

    Returns
    -------
    ultimate, yield_strength : float [Pa]
    label : str
    notes : list of str

    Raises
    ------
    UsageError
        A strength line that disagrees with the user's own material (both values named);
        a brittle material; no Sut (the key to add named).
    """
    from torqlog.rotor.materials import MATERIALS

    name = spec if isinstance(spec, str) else mat.name
    own = not isinstance(spec, str) or spec.strip().lower() not in MATERIALS
    if mat.brittle:
        raise UsageError(f"{src}: [shaft] material {name!r} is brittle: the shaft fatigue "
                         "and yield check (Shigley 10th ed. ch. 6-7) is for ductile steels; "
                         "give the shaft's ductile material")
    from_mat = {"ultimate": mat.ultimate, "yield": mat.strength}
    lines = {kind: float(sec[key]) for kind, key, _, _ in _STRENGTH_LINES if key in sec}
    notes: list[str] = []
    if own:
        for kind, key, mkey, what in _STRENGTH_LINES:
            have, line = from_mat[kind], lines.get(kind)
            if have is not None and line is not None and not math.isclose(have, line,
                                                                          rel_tol=1e-3):
                raise UsageError(
                    f"{src}: [shaft] {key} = {line / 1e6:g} disagrees with the {what} of "
                    f"material {name!r} ({mkey} = {have / 1e6:g} MPa); remove the line or "
                    "make the two agree: the check will not choose between them")
        values = {k: lines.get(k, from_mat[k]) for k in from_mat}
        label = f"{name} ({mat.source})"
    elif not lines and name.strip().lower() == "steel":
        values = {"ultimate": DEFAULT_SHAFT_STEEL[1], "yield": DEFAULT_SHAFT_STEEL[2]}
        label = DEFAULT_SHAFT_STEEL[0]
        notes.append(f"Shaft strengths not in the profile: {DEFAULT_SHAFT_STEEL[0]} assumed "
                     f"(Sut {DEFAULT_SHAFT_STEEL[1] / 1e6:g} MPa, "
                     f"Sy {DEFAULT_SHAFT_STEEL[2] / 1e6:g} MPa).")
    else:
        values = {k: lines.get(k, from_mat[k]) for k in from_mat}
        label = (f"{name} (strengths from the profile)" if len(lines) == 2 else
                 f"{name} (" + ", ".join(
                     f"{what} {values[k] / 1e6:g} MPa from the "
                     + ("profile" if k in lines else f"table, {mat.designation}")
                     for k, _, _, what in _STRENGTH_LINES) + ")")
        if lines:
            notes.append(f"Shaft strengths: the profile's {', '.join(sorted(lines))} "
                         f"line(s) used instead of the minimum values of {name!r}.")
    if values["ultimate"] is None:
        raise UsageError(f"{src}: [shaft] material {name!r} gives no ultimate tensile "
                         f"strength Sut, which the {method} fatigue check needs (endurance "
                         "limit Se' = 0.5 Sut, Shigley 10th ed. eq. 6-8): add tensile_MPa = "
                         "... to the material (or ultimate_strength_MPa = ... to [shaft])")
    return float(values["ultimate"]), float(values["yield"]), label, notes


def _strength_context(profile: MachineProfile, model: ShaftModel, damping_ratio: Any,
                      method: Any, excitation_at: Any, speed: float, shaft_ratio: float,
                      spec: str | Mapping[str, Any], mat: Any) -> dict[str, Any]:
    """Options and profile details shared by the before and after strength checks."""

    src = profile.source or "<profile>"
    sec, tor = profile.shaft, profile.torsional
    details = details_from_profile(model, sec, src)
    method = _pick(method, sec.get("fatigue_method"), "goodman")
    if method not in FATIGUE_METHODS:
        raise UsageError(f"unknown fatigue method {method!r}; valid: "
                         f"{', '.join(FATIGUE_METHODS)}")
    ultimate, yield_strength, label, notes = shaft_strengths(sec, spec, mat, method, src)
    opts = StrengthOptions(
        ultimate=ultimate, yield_strength=yield_strength, material=label,
        surface=str(sec.get("surface", "machined")),
        reliability=float(sec.get("reliability", 0.99)),
        temperature=float(sec.get("temperature_C", 20.0)), method=method,
        service_factor=float(sec.get("service_factor", 1.5)),
        roller_bearings=str(sec.get("bearing_type", "ball")) == "roller")
    pressures: dict[str, float] = {}
    if any(d["seat"] == "shrink" for d in details.seats):
        try:
            from torqlog.rotor.flywheel import flywheel_from_profile

            hubs = [d.get("hub_length") for m, d in zip(model.masses, details.seats,
                                                        strict=False)
                    if m.name == "flywheel" and d["seat"] == "shrink"]
            width = None if profile.flywheel.get("width") else (hubs[0] if hubs else None)
            fw = flywheel_from_profile(profile, width=width)
            if fw.fit_pressure_rest:
                pressures["flywheel"] = float(fw.fit_pressure_rest)
        except (DataError, UsageError) as exc:
            notes.append(f"Shrink fit not checked: the flywheel's fit pressure could not be "
                         f"computed ({exc}).")
    damping = float(_pick(damping_ratio, tor.get("damping_ratio"), DEFAULT_DAMPING_RATIO))
    excite = _pick(excitation_at, tor.get("excitation_at"), None)
    return {"details": details, "strength": opts, "pressures": pressures, "notes": notes,
            "damping": damping, "excitation_at": excite, "speed": speed,
            "ratio": shaft_ratio,
            "options": {"damping_ratio": damping, "fatigue_method": method,
                        "excitation_at": excite}}


def _response_and_strength(ctx: dict[str, Any], model: ShaftModel,
                           chain: TorsionalChain | None, cycle_torque: np.ndarray, revs: int,
                           torque_peak_logged: float | None) -> tuple[Any, Any]:
    """Forced response of the chain to the log's orders and the strength it implies."""

    torque = np.asarray(cycle_torque, float)
    resp = None
    if chain is not None:
        order, amp, mean = complex_orders(torque, revs)
        resp = forced_response(chain, order, amp, mean, ctx["speed"], revs_per_cycle=revs,
                               excitation_at=ctx["excitation_at"],
                               damping_ratio=ctx["damping"])
        # the flywheel shaft carries the section from the flywheel towards the torque
        names = chain.names
        if "flywheel" in names:
            f = names.index("flywheel")
            e = names.index(resp.options["excitation_at"])
            s = f if e > f else max(f - 1, 0)
        else:
            s = int(resp.peak.argmax())
        wave = resp.waveform[:, s]
    else:
        wave = torque
    hi, lo = float(wave.max()), float(wave.min())
    peak = max(abs(hi), abs(lo), abs(torque_peak_logged or 0.0))
    ratio = ctx["ratio"]
    strength = shaft_strength(model, ctx["details"], (hi + lo) / 2 / ratio,
                              (hi - lo) / 2 / ratio, peak / ratio, ctx["strength"],
                              speed_rpm=ctx["speed"] * ratio * 60 / (2 * math.pi),
                              fit_pressures=ctx["pressures"])
    return resp, strength


def _pick(given: Any, from_profile: Any, default: Any) -> Any:
    if given is not None:
        return given
    return from_profile if from_profile is not None else default


__all__ = ["ShaftResult", "ShaftState", "check_shaft"]
