"""Strength of the shaft that carries the flywheel, section by section.

Each section of interest -- a shoulder between two segments, the seat of each part on the
shaft (keyseat or press/shrink fit), and the plain section of largest bending moment --
is checked for fatigue (distortion energy with the Goodman, Gerber or ASME-elliptic line,
:mod:`torqlog.shaft.strength`) and for first-cycle yield at the peak torque. Keys are checked in
shear and bearing, a shrink fit for the torque it can carry, and each bearing for its
ISO 281 rating life from its reaction.

Loads:

* bending from the weights of the parts (:func:`torqlog.shaft.lateral.bending_moment`); on a
  rotating shaft it is fully reversed (alternating, no mean). Belt or gear pulls are not
  modelled (the profile has no key for them yet).
* torque: mid-range (max + min) / 2 -- the mean stress component of the fatigue
  criterion, not the time average -- and alternating (max - min) / 2 from the section
  torque of the torsional forced response to the log
  (:mod:`torqlog.shaft.torsional_response`), so a resonance shows up here, referred
  to the flywheel shaft (divided by ``flywheel_speed_ratio``). Every section is taken to
  carry it (conservative for an overhung end beyond the drive).

References
----------
.. [1] R. G. Budynas and J. K. Nisbett, *Shigley's Mechanical Engineering Design*, 10th
   ed., McGraw-Hill, 2015, chapters 6 and 7, sec. 3-16.
.. [2] ISO 281:2007, basic rating life.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from torqlog.errors import DataError
from torqlog.shaft import strength as st
from torqlog.shaft.lateral import ShaftModel, bending_moment, support_reactions

#: Required fatigue and yield safety factor: 1.5, common practice for a shaft whose loads
#: come from a measurement (values of 1.5 to 2 are usual); below 1 the check fails, in
#: between it is marginal.
DEFAULT_REQUIRED_FACTOR = 1.5

#: Service factor on the peak torque for keys and fits: 1.5, common practice.
DEFAULT_SERVICE_FACTOR = 1.5

SEATS = ("key", "shrink", "none")


@dataclass(frozen=True)
class StrengthOptions:
    """Material and rules of a strength check (SI)."""

    ultimate: float = st.DEFAULT_SHAFT_STEEL[1]
    yield_strength: float = st.DEFAULT_SHAFT_STEEL[2]
    material: str = st.DEFAULT_SHAFT_STEEL[0]
    surface: str = "machined"
    reliability: float = 0.99
    temperature: float = 20.0
    method: str = "goodman"
    required: float = DEFAULT_REQUIRED_FACTOR
    service_factor: float = DEFAULT_SERVICE_FACTOR
    friction: float = 0.12
    roller_bearings: bool = False

    def to_dict(self) -> dict[str, Any]:
        return {"ultimate_strength_MPa": self.ultimate / 1e6,
                "yield_strength_MPa": self.yield_strength / 1e6, "material": self.material,
                "surface": self.surface, "reliability": self.reliability,
                "temperature_C": self.temperature, "method": self.method,
                "required_safety_factor": self.required,
                "service_factor": self.service_factor, "fit_friction": self.friction,
                "bearing_type": "roller" if self.roller_bearings else "ball",
                "bending": "weights of the parts, fully reversed; belt/gear pull not modelled",
                "torque": "section torque of the forced response, carried by every section"}


@dataclass(frozen=True)
class ShaftDetails:
    """What the strength check needs beyond the lateral model: fillet radii at the
    shoulders, the seat of each part and its key, bearing ratings."""

    fillets: tuple[float | None, ...]                 # per segment [m]
    seats: tuple[dict[str, Any], ...]                 # per mass
    bearing_ratings: tuple[float, ...] | None = None  # [N]


def details_from_profile(model: ShaftModel, shaft: Mapping[str, Any], src: str
                         ) -> ShaftDetails:
    """Read fillets, seats, keys and bearing ratings from a profile's ``[shaft]``.

    Raises
    ------
    DataError
        One sentence naming the key: a negative fillet radius, a key longer than the hub,
        an unknown seat, a rating list that does not match the bearings.
    """
    fillets: list[float | None] = []
    for i, seg in enumerate(shaft.get("segments", [])):
        r = seg.get("fillet_m")
        if r is not None and not (isinstance(r, int | float) and r > 0):
            raise DataError(f"{src}: [shaft] segments[{i}] fillet_m must be a positive radius "
                            f"in m, got {r!r}")
        fillets.append(None if r is None else float(r))
    seats = []
    for i, item in enumerate(shaft.get("masses", [])):
        where = f"{src}: [shaft] masses[{i}]"
        seat = str(item.get("seat", "none"))
        if seat not in SEATS:
            raise DataError(f"{where} seat must be one of {', '.join(SEATS)}, got {seat!r}")
        d: dict[str, Any] = {"seat": seat, "hub_length": item.get("hub_length_m")}
        if seat == "key":
            for key in ("key_width_m", "key_height_m", "key_length_m"):
                v = item.get(key)
                if isinstance(v, bool) or not isinstance(v, int | float) or not v > 0:
                    raise DataError(f"{where} {key} must be a positive number for a keyed "
                                    f"seat, got {v!r}")
            d.update(width=float(item["key_width_m"]), height=float(item["key_height_m"]),
                     length=float(item["key_length_m"]))
            hub = item.get("hub_length_m")
            if hub is not None and d["length"] > hub:
                raise DataError(f"{where} key_length_m {d['length']:g} m is longer than the "
                                f"hub (hub_length_m {hub:g} m); a key must fit in its hub")
        seats.append(d)
    ratings = shaft.get("bearing_ratings_N")
    if ratings is not None:
        if len(ratings) != len(model.bearings) or not all(
                isinstance(v, int | float) and not isinstance(v, bool) and v > 0
                for v in ratings):
            raise DataError(f"{src}: [shaft] bearing_ratings_N needs one positive rating "
                            f"per bearing ({len(model.bearings)})")
        ratings = tuple(float(v) for v in ratings)
    return ShaftDetails(tuple(fillets), tuple(seats), ratings)


def _diameter_at(model: ShaftModel, x: float) -> float:
    ends = np.cumsum([s.length for s in model.segments])
    i = min(int(np.searchsorted(ends, x, side="left")), len(model.segments) - 1)
    return model.segments[i].diameter


def _verdict(n: float, required: float) -> str:
    return "pass" if n >= required else ("marginal" if n >= 1.0 else "fail")


@dataclass(frozen=True, eq=False)
class StrengthResult:
    """Shaft strength of one configuration. ``to_dict()`` is the JSON contract."""

    sections: tuple[dict[str, Any], ...]
    keys: tuple[dict[str, Any], ...]
    fits: tuple[dict[str, Any], ...]
    bearings: tuple[dict[str, Any], ...]
    options: StrengthOptions
    torque: dict[str, float] = field(default_factory=dict)

    @property
    def governing(self) -> dict[str, Any]:
        return min(self.sections, key=lambda r: min(r["fatigue_safety_factor"],
                                                    r["yield_safety_factor"]))

    @property
    def fatigue_safety_factor(self) -> float:
        return float(min(r["fatigue_safety_factor"] for r in self.sections))

    @property
    def checks(self) -> list[tuple[str, str, str]]:
        """(check name, verdict, text) of every check, worst first."""
        out: list[tuple[str, str, str, float]] = []
        req = self.options.required
        for r in self.sections:
            for kind in ("fatigue", "yield"):
                n = r[f"{kind}_safety_factor"]
                out.append((f"{kind} at {r['section']}", _verdict(n, req),
                            f"{kind} safety factor {n:.2f} at {r['section']} "
                            f"(required {req:g})", n / req))
        for k in self.keys:
            n = min(k["shear_safety_factor"], k["bearing_safety_factor"])
            mode = ("shear" if k["shear_safety_factor"] <= k["bearing_safety_factor"]
                    else "bearing")
            out.append((f"key of {k['part']}", _verdict(n, 1.0),
                        f"key of {k['part']}: safety factor {n:.2f} in {mode} at "
                        f"{self.options.service_factor:g} × peak torque", n))
        for f in self.fits:
            n = f["capacity_ratio"]
            out.append((f"fit of {f['part']}", _verdict(n, 1.0),
                        f"shrink fit of {f['part']} carries {f['torque_capacity_Nm']:.0f} N·m, "
                        f"{n:.2f}× the {self.options.service_factor:g} × peak torque", n))
        rank = {"fail": 0, "marginal": 1, "pass": 2}
        return [c[:3] for c in sorted(out, key=lambda c: (rank[c[1]], c[3]))]

    @property
    def verdict(self) -> str:
        worst = self.checks[0][1] if self.checks else "pass"
        return worst

    @property
    def margin_text(self) -> str:
        name, verdict, text = self.checks[0]
        return f"{text}: {verdict}"

    def to_pandas(self) -> pd.DataFrame:
        return pd.DataFrame(list(self.sections))

    def to_dict(self) -> dict[str, Any]:
        gov = self.governing
        return {"fatigue_safety_factor": self.fatigue_safety_factor,
                "governing_section": gov["section"],
                "verdict": self.verdict, "margin_text": self.margin_text,
                "governing_check": self.checks[0][0],
                "sections": [dict(r) for r in self.sections], "keys": [dict(k) for k in self.keys],
                "fits": [dict(f) for f in self.fits],
                "bearings": [dict(b) for b in self.bearings],
                "torque": dict(self.torque), "options": self.options.to_dict()}


def position_text(x: float) -> str:
    """A position along the shaft [m] as section names write it (``"0.100 m"``).

    The one spelling, so the output edge can show it in other units.
    """
    return f"{x:.3f} m"


def shaft_strength(model: ShaftModel, details: ShaftDetails, torque_mean: float,
                   torque_alt: float, torque_peak: float, options: StrengthOptions, *,
                   speed_rpm: float | None = None,
                   fit_pressures: Mapping[str, float] | None = None) -> StrengthResult:
    """Check every section, key, fit and bearing of a shaft.

    Parameters
    ----------
    model : ShaftModel
    details : ShaftDetails
    torque_mean, torque_alt : float [N*m]
        Mid-range torque (max + min) / 2 and alternating torque (max - min) / 2 of the
        shaft torque (on this shaft): the mean and alternating components Tm, Ta of the
        fatigue criterion (Shigley 10th ed. sec. 6-11, eq. 6-36, from memory; sec. 7-4).
        The mid-range torque is not the time average of the torque (the forced
        response's "mean").
    torque_peak : float [N*m]
        Largest absolute shaft torque (for yield, keys and fits).
    options : StrengthOptions
    speed_rpm : float, optional [rpm]
        Shaft speed, for the bearing life in hours.
    fit_pressures : mapping {part name: pressure [Pa]}, optional
        Interface pressure of shrink-fitted parts (from :mod:`torqlog.rotor.flywheel`).

    Returns
    -------
    StrengthResult

    References
    ----------
    Shigley 10th ed., sec. 7-4 (shaft sections), 7-7 (keys), 3-16 (fits); ISO 281.
    """
    o = options
    se_prime = st.endurance_limit_specimen(o.ultimate)
    ka = st.surface_factor(o.ultimate, o.surface)
    kd = st.temperature_factor(o.temperature)
    ke = st.reliability_factor(o.reliability)
    tm, ta, tp = abs(torque_mean), abs(torque_alt), abs(torque_peak)
    rows: list[dict[str, Any]] = []

    def add(name: str, x: float, d: float, kt: float, kts: float, radius: float | None,
            full_q: bool = False) -> None:
        if full_q or radius is None:
            q = qs = 1.0
        else:
            q = st.notch_sensitivity(o.ultimate, radius)
            qs = st.notch_sensitivity(o.ultimate, radius, torsion=True)
        kf, kfs = st.fatigue_notch_factor(kt, q), st.fatigue_notch_factor(kts, qs)
        kb = st.size_factor(d)
        se = ka * kb * kd * ke * se_prime  # kc = 1: load factor inside the DE combination
        m = float(abs(bending_moment(model, [x])[0]))
        n_f = st.fatigue_safety_factor(d, m, 0.0, ta, tm, kf, kfs, se, o.ultimate,
                                       o.yield_strength, o.method)
        n_y = st.yield_safety_factor(d, m, tp, kf, kfs, o.yield_strength)
        rows.append({"section": name, "x_m": x, "diameter_mm": d * 1e3, "kt": kt, "kts": kts,
                     "q": q, "qs": qs, "kf": kf, "kfs": kfs, "ka": ka, "kb": kb, "kd": kd,
                     "ke": ke, "endurance_limit_MPa": se / 1e6, "moment_alt_Nm": m,
                     "torque_midrange_Nm": tm, "torque_alt_Nm": ta, "torque_peak_Nm": tp,
                     "fatigue_safety_factor": n_f, "yield_safety_factor": n_y})

    ends = np.cumsum([s.length for s in model.segments])
    segs = model.segments
    for i in range(len(segs) - 1):
        d1, d2 = segs[i].diameter, segs[i + 1].diameter
        if math.isclose(d1, d2):
            continue
        small = i if d1 < d2 else i + 1
        d = segs[small].diameter
        r = details.fillets[small] if small < len(details.fillets) else None
        r = 0.02 * d if r is None else r  # Shigley Table 7-1: sharp fillet, r/d = 0.02
        add(f"shoulder at {position_text(float(ends[i]))}", float(ends[i]), d,
            st.shoulder_fillet_kt(max(d1, d2), d, r),
            st.shoulder_fillet_kt(max(d1, d2), d, r, torsion=True), r)
    keys, fits = [], []
    for mass, seat in zip(model.masses, details.seats, strict=False):
        d = _diameter_at(model, mass.at)
        if seat["seat"] == "key":
            add(f"keyseat under {mass.name}", mass.at, d, *st.KEYSEAT_KT, 0.02 * d)
            ns, nb = st.key_safety_factors(o.service_factor * tp, d, seat["width"],
                                           seat["height"], seat["length"], o.yield_strength)
            keys.append({"part": mass.name, "shear_safety_factor": ns,
                         "bearing_safety_factor": nb,
                         "torque_design_Nm": o.service_factor * tp})
        elif seat["seat"] == "shrink":
            add(f"shrink fit under {mass.name}", mass.at, d, *st.PRESS_FIT_KT, None,
                full_q=True)
            p = (fit_pressures or {}).get(mass.name)
            hub = seat.get("hub_length")
            if p is not None and hub:
                cap = st.shrink_fit_torque(p, d, hub, o.friction)
                fits.append({"part": mass.name, "pressure_MPa": p / 1e6,
                             "torque_capacity_Nm": cap,
                             "torque_design_Nm": o.service_factor * tp,
                             "capacity_ratio": cap / (o.service_factor * tp) if tp else math.inf})
    # plain section at the largest bending moment
    xs = np.linspace(0.0, model.length, 401)
    mom = np.abs(bending_moment(model, xs))
    j = int(mom.argmax())
    if mom[j] > 0:
        add(f"plain, largest moment at {position_text(float(xs[j]))}", float(xs[j]),
            _diameter_at(model, float(xs[j])), 1.0, 1.0, None)
    bearings = []
    reactions = support_reactions(model)
    for b, (x, r) in enumerate(zip(model.bearings, reactions, strict=True)):
        row: dict[str, Any] = {"bearing": b + 1, "x_m": x, "reaction_N": float(r)}
        if details.bearing_ratings is not None:
            revs, hours = st.bearing_l10(details.bearing_ratings[b], abs(float(r)), speed_rpm,
                                         o.roller_bearings)
            row.update(rating_N=details.bearing_ratings[b], l10_revolutions=revs,
                       l10_hours=hours)
        bearings.append(row)
    return StrengthResult(tuple(rows), tuple(keys), tuple(fits), tuple(bearings), o,
                          {"torque_midrange_Nm": tm, "torque_alt_Nm": ta, "torque_peak_Nm": tp})


__all__ = ["DEFAULT_REQUIRED_FACTOR", "DEFAULT_SERVICE_FACTOR", "SEATS", "ShaftDetails",
           "StrengthOptions", "StrengthResult", "details_from_profile", "shaft_strength"]
