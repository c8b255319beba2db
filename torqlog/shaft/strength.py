"""Shaft strength formulas: endurance limit and Marin factors, stress concentration and
notch sensitivity, fatigue safety factor (DE-Goodman, DE-Gerber, DE-ASME elliptic),
first-cycle yield, key, shrink-fit torque capacity and bearing rating life.

Pure functions in SI (stresses in Pa, lengths in m, torques and moments in N*m); the
published fits that are stated in other units (kpsi, inches, degrees Fahrenheit) are
converted inside. Every result is a preliminary engineering estimate; the final design
follows the applicable codes and is approved by a qualified, licensed engineer.

References
----------
.. [1] R. G. Budynas and J. K. Nisbett, *Shigley's Mechanical Engineering Design*, 10th
   ed., McGraw-Hill, 2015: sec. 6-9 (endurance limit, eq. 6-8), 6-9 Marin factors
   (eqs. 6-18 to 6-29, Table 6-2, Table 6-5), sec. 6-10 (notch sensitivity, Neuber
   constant eqs. 6-35a, 6-35b), sec. 7-4 (DE-Goodman eq. 7-8, DE-Gerber eq. 7-10,
   DE-ASME elliptic eq. 7-12, first-cycle yield eqs. 7-15, 7-16), Table 7-1 (first
   estimates of Kt), sec. 7-7 (keys), sec. 3-16 (press and shrink fits).
.. [2] W. C. Young and R. G. Budynas, *Roark's Formulas for Stress and Strain*, 7th ed.,
   Table 17.1 (stress concentration of a stepped round bar with a shoulder fillet:
   bending, torsion); coefficients quoted from memory.
.. [3] ISO 281:2007, *Rolling bearings -- Dynamic load ratings and rating life*, basic
   rating life L10 = (C / P)^p.
"""

from __future__ import annotations

import math

from torqlog.errors import UsageError

_KPSI = 6.894757e6       # Pa per kpsi
_INCH = 0.0254           # m per inch

#: Surface factor constants (a [MPa], b) of ka = a Sut^b, Shigley 10th ed. Table 6-2.
SURFACE_FACTORS: dict[str, tuple[float, float]] = {
    "ground": (1.58, -0.085),
    "machined": (4.51, -0.265),
    "cold-drawn": (4.51, -0.265),
    "hot-rolled": (57.7, -0.718),
    "as-forged": (272.0, -0.995),
}

#: Fatigue criteria for combined bending and torsion (Shigley 10th ed. sec. 7-4).
FATIGUE_METHODS = ("goodman", "gerber", "asme-elliptic")

#: First-iteration stress concentration of an end-mill keyseat (bottom radius r/d = 0.02):
#: Kt bending 2.14, Kts torsion 3.0, Shigley 10th ed. Table 7-1.
KEYSEAT_KT = (2.14, 3.0)

#: Stress concentration at the edge of a press or shrink fit: Kt 2.0 bending, 1.5
#: torsion, with full notch sensitivity (q = 1). Common practice, values from memory.
PRESS_FIT_KT = (2.0, 1.5)

#: Shaft steel used when the profile gives no strengths: AISI 1045 cold drawn,
#: Sut = 630 MPa, Sy = 530 MPa (Shigley 10th ed. Table A-20).
DEFAULT_SHAFT_STEEL = ("AISI 1045 CD (Shigley Table A-20)", 630e6, 530e6)


def endurance_limit_specimen(ultimate: float) -> float:
    """Rotating-beam endurance limit Se' of a steel specimen [Pa].

    Se' = 0.5 Sut for Sut <= 1400 MPa, else 700 MPa (Shigley 10th ed. eq. 6-8).

    Parameters
    ----------
    ultimate : float [Pa]
        Ultimate tensile strength Sut.

    Examples
    --------
    >>> endurance_limit_specimen(630e6) / 1e6
    315.0
    """
    return 0.5 * ultimate if ultimate <= 1400e6 else 700e6


def surface_factor(ultimate: float, surface: str = "machined") -> float:
    """Marin surface factor ka = a Sut^b (Sut in MPa), Shigley 10th ed. eq. 6-19,
    Table 6-2.

    Parameters
    ----------
    ultimate : float [Pa]
    surface : {"ground", "machined", "cold-drawn", "hot-rolled", "as-forged"}
    """
    if surface not in SURFACE_FACTORS:
        raise UsageError(f"unknown surface {surface!r}; valid: {', '.join(SURFACE_FACTORS)}")
    a, b = SURFACE_FACTORS[surface]
    return a * (ultimate / 1e6) ** b


def size_factor(diameter: float) -> float:
    """Marin size factor kb of a rotating round shaft in bending or torsion.

    kb = 1.24 d^-0.107 for 2.79 <= d <= 51 mm, 1.51 d^-0.157 for 51 < d <= 254 mm
    (Shigley 10th ed. eq. 6-20); 1 below 2.79 mm, and the 254 mm value held above (the
    fit ends there; a stated extrapolation of this program).

    Parameters
    ----------
    diameter : float [m]
    """
    d = diameter * 1e3
    if d < 2.79:
        return 1.0
    if d <= 51.0:
        return 1.24 * d ** -0.107
    return 1.51 * min(d, 254.0) ** -0.157


def temperature_factor(temperature: float) -> float:
    """Marin temperature factor kd (Shigley 10th ed. eq. 6-27, fit for 70-1000 °F).

    Parameters
    ----------
    temperature : float [°C]
        Operating temperature; below 20 °C the factor is taken as 1.
    """
    tf = temperature * 9.0 / 5.0 + 32.0
    if tf <= 70.0:
        return 1.0
    if tf > 1000.0:
        raise UsageError(f"temperature {temperature:g} °C is beyond the fit of the Marin "
                         f"temperature factor (538 °C)")
    return (0.975 + 0.432e-3 * tf - 0.115e-5 * tf**2 + 0.104e-8 * tf**3
            - 0.595e-12 * tf**4)


def reliability_factor(reliability: float) -> float:
    """Marin reliability factor ke = 1 - 0.08 z_a (Shigley 10th ed. eq. 6-29,
    Table 6-5: 0.814 at 99 %), z_a the standard normal variate of the reliability.

    Parameters
    ----------
    reliability : float
        Between 0.5 and 0.999999.
    """
    from scipy.stats import norm

    if not 0.5 <= reliability < 1.0:
        raise UsageError(f"reliability must be at least 0.5 and below 1, got {reliability:g}")
    return 1.0 - 0.08 * float(norm.ppf(reliability))


def notch_sensitivity(ultimate: float, radius: float, torsion: bool = False) -> float:
    """Notch sensitivity q = 1 / (1 + sqrt(a) / sqrt(r)) of steel (Neuber).

    sqrt(a) [in^0.5] from Shigley 10th ed. eq. 6-35a (bending) or 6-35b (torsion), with
    Sut in kpsi (fit for 50 to 250 kpsi).

    Parameters
    ----------
    ultimate : float [Pa]
    radius : float [m]
        Notch root radius.
    torsion : bool

    Examples
    --------
    >>> round(notch_sensitivity(105 * 6.894757e6, 0.11 * 0.0254), 2)  # Shigley Ex. 7-1
    0.85
    """
    if not radius > 0:
        raise UsageError(f"notch radius must be positive, got {radius * 1e3:g} mm")
    s = ultimate / _KPSI
    if torsion:
        sqrt_a = 0.190 - 2.51e-3 * s + 1.35e-5 * s**2 - 2.67e-8 * s**3
    else:
        sqrt_a = 0.246 - 3.08e-3 * s + 1.51e-5 * s**2 - 2.67e-8 * s**3
    sqrt_a = max(sqrt_a, 0.0)
    return 1.0 / (1.0 + sqrt_a / math.sqrt(radius / _INCH))


def fatigue_notch_factor(kt: float, q: float) -> float:
    """Kf = 1 + q (Kt - 1) (Shigley 10th ed. eq. 6-32)."""
    return 1.0 + q * (kt - 1.0)


def shoulder_fillet_kt(big: float, small: float, radius: float, torsion: bool = False
                       ) -> float:
    """Stress concentration of a shaft shoulder fillet, bending or torsion.

    Kt = C1 + C2 (2h/D) + C3 (2h/D)^2 + C4 (2h/D)^3, h = (D - d)/2, with C1..C4 fits in
    h/r (Roark's 7th ed. Table 17.1, stepped round bar; coefficients from memory, checked
    against Shigley's Figs. A-15-8, A-15-9 at D/d = 1.5, r/d = 0.1: 1.74 vs 1.68 bending,
    1.41 vs 1.42 torsion). h/r is clipped to the ranges of the fits (0.1 to 20 bending,
    0.25 to 4 torsion).

    Parameters
    ----------
    big, small : float [m]
        Diameters D > d either side of the shoulder.
    radius : float [m]
        Fillet radius r.
    torsion : bool
    """
    if not radius > 0:
        raise UsageError(f"fillet radius must be positive, got {radius * 1e3:g} mm")
    if not big > small > 0:
        return 1.0
    h = (big - small) / 2.0
    x = 2.0 * h / big
    hr = h / radius
    if torsion:
        hr = min(max(hr, 0.25), 4.0)
        s = math.sqrt(hr)
        c = (0.905 + 0.783 * s - 0.075 * hr, -0.437 - 1.969 * s + 0.553 * hr,
             1.557 + 1.073 * s - 0.578 * hr, -1.061 + 0.171 * s + 0.086 * hr)
    else:
        hr = min(max(hr, 0.1), 20.0)
        s = math.sqrt(hr)
        if hr <= 2.0:
            c = (0.947 + 1.206 * s - 0.131 * hr, 0.022 - 3.405 * s + 0.915 * hr,
                 0.869 + 1.777 * s - 0.555 * hr, -0.810 + 0.422 * s - 0.260 * hr)
        else:
            c = (1.232 + 0.832 * s - 0.008 * hr, -3.813 + 0.968 * s - 0.260 * hr,
                 7.423 - 4.868 * s + 0.869 * hr, -3.839 + 3.070 * s - 0.600 * hr)
    return max(1.0, c[0] + c[1] * x + c[2] * x**2 + c[3] * x**3)


def fatigue_safety_factor(diameter: float, moment_alt: float, moment_mean: float,
                          torque_alt: float, torque_mean: float, kf: float, kfs: float,
                          endurance: float, ultimate: float, yield_strength: float,
                          method: str = "goodman") -> float:
    """Fatigue safety factor of a solid round shaft under bending and torsion.

    Distortion-energy combination with the Goodman (eq. 7-8), Gerber (eq. 7-10) or ASME
    elliptic (eq. 7-12) line, Shigley 10th ed. sec. 7-4 (axial load neglected).

    Parameters
    ----------
    diameter : float [m]
    moment_alt, moment_mean : float [N*m]
        Alternating and mean bending moment.
    torque_alt, torque_mean : float [N*m]
    kf, kfs : float
        Fatigue stress concentration factors, bending and torsion.
    endurance : float [Pa]
        Marin-corrected endurance limit Se.
    ultimate, yield_strength : float [Pa]
    method : {"goodman", "gerber", "asme-elliptic"}

    Returns
    -------
    float
        n (inf when nothing alternates nor stands).
    """
    if method not in FATIGUE_METHODS:
        raise UsageError(f"unknown fatigue method {method!r}; valid: "
                         f"{', '.join(FATIGUE_METHODS)}")
    a = math.sqrt(4 * (kf * moment_alt) ** 2 + 3 * (kfs * torque_alt) ** 2)
    b = math.sqrt(4 * (kf * moment_mean) ** 2 + 3 * (kfs * torque_mean) ** 2)
    c = 16.0 / (math.pi * diameter**3)
    if method == "goodman":
        inv = c * (a / endurance + b / ultimate)
    elif method == "asme-elliptic":
        inv = c * math.sqrt((a / endurance) ** 2 + (b / yield_strength) ** 2)
    elif a == 0.0:
        inv = c * b / ultimate
    else:
        inv = (8 * a / (math.pi * diameter**3 * endurance)
               * (1 + math.sqrt(1 + (2 * b * endurance / (a * ultimate)) ** 2)))
    return math.inf if inv == 0 else 1.0 / inv


def yield_safety_factor(diameter: float, moment_max: float, torque_max: float, kf: float,
                        kfs: float, yield_strength: float) -> float:
    """First-cycle yield: n_y = Sy / sigma'_max, sigma'_max the von Mises stress of the
    peak moment and torque with the notch factors (Shigley 10th ed. eqs. 7-15, 7-16).

    Parameters
    ----------
    diameter : float [m]
    moment_max, torque_max : float [N*m]
    kf, kfs : float
    yield_strength : float [Pa]
    """
    z = math.pi * diameter**3
    vm = math.sqrt((32 * kf * moment_max / z) ** 2 + 3 * (16 * kfs * torque_max / z) ** 2)
    return math.inf if vm == 0 else yield_strength / vm


def key_safety_factors(torque: float, diameter: float, width: float, height: float,
                       length: float, yield_strength: float) -> tuple[float, float]:
    """Safety factors of a square or rectangular parallel key in shear and bearing.

    Force on the key F = 2 T / d; shear stress F / (w l) against Ssy = 0.577 Sy, bearing
    stress F / (l h / 2) against Sy (Shigley 10th ed. sec. 7-7, Ex. 7-6).

    Parameters
    ----------
    torque : float [N*m]
        Peak torque (service factor already applied).
    diameter, width, height, length : float [m]
    yield_strength : float [Pa]
        Of the key (or the weaker of key, shaft and hub).

    Returns
    -------
    shear, bearing : float
    """
    force = 2.0 * abs(torque) / diameter
    if force == 0:
        return math.inf, math.inf
    shear = force / (width * length)
    bearing = force / (length * height / 2.0)
    return 0.577 * yield_strength / shear, yield_strength / bearing


def shrink_fit_torque(pressure: float, diameter: float, length: float,
                      friction: float = 0.12) -> float:
    """Torque a press or shrink fit carries before it slips, T = (pi/2) f p l d^2.

    Shigley 10th ed. sec. 3-16 (torque capacity of an interference fit). The friction
    coefficient default 0.12 is common practice for dry steel on steel or iron (0.1 to
    0.15 is usual).

    Parameters
    ----------
    pressure : float [Pa]
        Fit pressure at the interface.
    diameter, length : float [m]
        Nominal fit diameter and hub length.
    friction : float

    Examples
    --------
    >>> round(shrink_fit_torque(50e6, 0.1, 0.1, 0.12))
    9425
    """
    return 0.5 * math.pi * friction * pressure * length * diameter**2


def bearing_l10(rating: float, load: float, speed_rpm: float | None = None,
                roller: bool = False) -> tuple[float, float | None]:
    """Basic rating life L10 of a rolling bearing (ISO 281): (C / P)^p million
    revolutions, p = 3 for ball and 10/3 for roller bearings.

    Parameters
    ----------
    rating : float [N]
        Basic dynamic load rating C.
    load : float [N]
        Equivalent dynamic load P (here the radial reaction).
    speed_rpm : float, optional [rpm]
        For the life in hours.
    roller : bool

    Returns
    -------
    revolutions : float
        L10 in revolutions.
    hours : float or None

    Examples
    --------
    >>> bearing_l10(50e3, 5e3)[0]
    1000000000.0
    """
    if not rating > 0:
        raise UsageError(f"bearing dynamic load rating must be positive, got {rating:g} N")
    p = 10.0 / 3.0 if roller else 3.0
    revs = math.inf if load <= 0 else (rating / load) ** p * 1e6
    hours = None if not speed_rpm else revs / (60.0 * speed_rpm)
    return revs, hours


__all__ = [
    "DEFAULT_SHAFT_STEEL", "FATIGUE_METHODS", "KEYSEAT_KT", "PRESS_FIT_KT",
    "SURFACE_FACTORS", "bearing_l10", "endurance_limit_specimen", "fatigue_notch_factor",
    "fatigue_safety_factor", "key_safety_factors", "notch_sensitivity",
    "reliability_factor", "shoulder_fillet_kt", "shrink_fit_torque", "size_factor",
    "surface_factor", "temperature_factor", "yield_safety_factor",
]
