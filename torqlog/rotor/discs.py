"""Rotating-disc stress theory: uniform discs, stepped discs, thin rings, plane-stress criteria.

Model
-----
* Linear-elastic, plane stress, uniform thickness within each step, one material
  throughout; rotational stresses grow with speed squared.
* Uniform disc: free outer edge, free bore, or a solid centre (Timoshenko & Goodier
  section 32).
* Stepped disc (a disc of variable thickness approximated by concentric uniform annuli):
  in step ``j`` the stresses are s_r = A_j - B_j/r^2 - (3+nu) rho w^2 r^2 / 8 and
  s_t = A_j + B_j/r^2 - (1+3nu) rho w^2 r^2 / 8; the constants follow from the edge
  conditions and, at each step, continuity of the radial force per unit circumference and
  of the radial displacement (Timoshenko, Strength of Materials Part II).
* Criteria: von Mises for ductile materials, maximum principal stress (Rankine) for
  brittle ones.

The flywheel geometry, its checks and its design live in :mod:`torqlog.rotor.flywheel`.

References
----------
.. [1] S. P. Timoshenko and J. N. Goodier, *Theory of Elasticity*, 3rd ed., McGraw-Hill,
   1970, section 32 "Rotating disks of uniform thickness".
.. [2] W. C. Young and R. G. Budynas, *Roark's Formulas for Stress and Strain*, 7th ed.,
   McGraw-Hill, 2002, Table 16.2 (rotating disks).
.. [3] S. P. Timoshenko, *Strength of Materials, Part II*, 3rd ed., Van Nostrand, 1956,
   chapter on rotating disks of variable thickness (stepped-disc approximation).
"""

from __future__ import annotations

import numpy as np

from torqlog.errors import UsageError


def disc_stresses(radius: np.ndarray | float, speed: float, outer_radius: float,
                  inner_radius: float, density: float,
                  poisson: float) -> tuple[np.ndarray, np.ndarray]:
    """Radial and tangential stress in a rotating disc of uniform thickness.

    Plane stress, free outer edge and free bore; a solid disc when ``inner_radius == 0``:

    * solid:   s_r = (3+nu)/8 rho w^2 (b^2 - r^2),
      s_t = (3+nu)/8 rho w^2 b^2 - (1+3nu)/8 rho w^2 r^2
    * annulus: s_r = (3+nu)/8 rho w^2 (a^2 + b^2 - a^2 b^2 / r^2 - r^2),
      s_t = (3+nu)/8 rho w^2 (a^2 + b^2 + a^2 b^2 / r^2) - (1+3nu)/8 rho w^2 r^2

    Parameters
    ----------
    radius : array [m]
        Radii to evaluate, within ``[inner_radius, outer_radius]``.
    speed : float [rad/s]
    outer_radius, inner_radius : float [m]
    density : float [kg/m^3]
    poisson : float [-]

    Returns
    -------
    (radial, tangential) : arrays [Pa]

    Examples
    --------
    At the centre of a solid steel disc both stresses are (3+nu)/8 rho w^2 b^2; the rim
    is free of radial stress:

    >>> sr, st = disc_stresses([0.0, 0.5], 100.0, 0.5, 0.0, 7850.0, 0.3)
    >>> round(float(sr[0]) / 1e6, 4), round(float(st[0]) / 1e6, 4), abs(round(float(sr[1]), 6))
    (8.0953, 8.0953, 0.0)

    References
    ----------
    .. [1] Timoshenko & Goodier, Theory of Elasticity, 3rd ed., section 32, eqs. for the
       rotating solid disk and the disk with a central hole.
    .. [2] Roark's Formulas for Stress and Strain, 7th ed., Table 16.2, cases 1 and 2.
    """
    r = np.asarray(radius, dtype=float)
    a, b = float(inner_radius), float(outer_radius)
    if not 0 <= a < b:
        raise UsageError(f"inner radius ({a:g} m) must be at least 0 and smaller than the "
                         f"outer radius ({b:g} m)")
    if np.any(r < a * (1 - 1e-12)) or np.any(r > b * (1 + 1e-12)):
        raise UsageError(f"radius must lie between {a:g} m and {b:g} m")
    k = density * speed ** 2
    c = (3.0 + poisson) / 8.0 * k
    d = (1.0 + 3.0 * poisson) / 8.0 * k
    if a == 0.0:
        return c * (b ** 2 - r ** 2), c * b ** 2 - d * r ** 2
    return (c * (a ** 2 + b ** 2 - a ** 2 * b ** 2 / r ** 2 - r ** 2),
            c * (a ** 2 + b ** 2 + a ** 2 * b ** 2 / r ** 2) - d * r ** 2)


def rim_hoop_stress(density: float, rim_speed: float) -> float:
    """Hoop stress of a thin rotating ring, s = rho v^2.

    Parameters
    ----------
    density : float [kg/m^3]
    rim_speed : float [m/s]

    Returns
    -------
    float [Pa]

    References
    ----------
    .. [1] Timoshenko, Strength of Materials Part I, rotating ring (hoop stress rho v^2).
    """
    return density * rim_speed ** 2


def step_constants(edges: np.ndarray, widths: np.ndarray, speed: float, density: float,
                   poisson: float, bore_pressure: float) -> tuple[np.ndarray, np.ndarray]:
    """Constants (A_j, B_j) of the uniform-disc solution in each step of a stepped disc.

    In step ``j``: s_r = A_j - B_j/r^2 - (3+nu) rho w^2 r^2 / 8 and
    s_t = A_j + B_j/r^2 - (1+3nu) rho w^2 r^2 / 8. The constants satisfy a free outer
    edge, the bore pressure (or B = 0 at a solid centre) and, at each step boundary,
    continuity of width x s_r and of r (s_t - nu s_r) / E.

    Parameters
    ----------
    edges : array [m]
        Step boundaries, increasing, from the bore (0 for a solid centre) to the outside.
    widths : array [m]
        Axial thickness of each step (``len(edges) - 1`` values).
    speed : float [rad/s]
    density : float [kg/m^3]
    poisson : float [-]
    bore_pressure : float [Pa]
        Pressure on the bore, compressive positive.

    Returns
    -------
    (A, B) : arrays [Pa], [Pa*m^2]
        One value per step.

    References
    ----------
    .. [1] Timoshenko, Strength of Materials Part II, 3rd ed., rotating disks of variable
       thickness (stepped approximation).
    .. [2] Timoshenko & Goodier, Theory of Elasticity, 3rd ed., section 32.
    """
    n = len(widths)
    k = density * speed ** 2
    nu = poisson
    scale = edges[-1] ** 2  # B_j = Bs_j * scale, keeps the system well scaled

    def rows(r: float) -> tuple[np.ndarray, float, np.ndarray, float]:
        # coefficient rows on (A, Bs) and constant part of s_r and s_t at radius r
        return (np.array([1.0, -scale / r ** 2]), -(3.0 + nu) * k * r ** 2 / 8.0,
                np.array([1.0, scale / r ** 2]), -(1.0 + 3.0 * nu) * k * r ** 2 / 8.0)

    m = np.zeros((2 * n, 2 * n))
    rhs = np.zeros(2 * n)
    if edges[0] == 0.0:
        m[0, 1] = 1.0  # solid centre: B = 0 keeps the stresses finite
    else:
        sr, sr0, _, _ = rows(edges[0])
        m[0, 0:2] = sr
        rhs[0] = -bore_pressure - sr0
    for j in range(1, n):  # interfaces: radial force and displacement continuous
        c = edges[j]
        sr, sr0, st, st0 = rows(c)
        row = 2 * j - 1
        m[row, 2 * j - 2:2 * j] = widths[j - 1] * sr
        m[row, 2 * j:2 * j + 2] = -widths[j] * sr
        rhs[row] = -(widths[j - 1] - widths[j]) * sr0
        m[row + 1, 2 * j - 2:2 * j] = st - nu * sr
        m[row + 1, 2 * j:2 * j + 2] = -(st - nu * sr)
    sr, sr0, _, _ = rows(edges[-1])
    m[-1, -2:] = sr
    rhs[-1] = -sr0
    x = np.linalg.solve(m, rhs)
    return x[0::2], x[1::2] * scale


def stepped_disc_stresses(radius: np.ndarray | float, speed: float, edges: np.ndarray,
                          widths: np.ndarray, density: float, poisson: float,
                          bore_pressure: float = 0.0) -> tuple[np.ndarray, np.ndarray]:
    """Stresses in a rotating disc made of uniform-thickness steps.

    In each step s_r = A - B/r^2 - (3+nu) rho w^2 r^2 / 8 and
    s_t = A + B/r^2 - (1+3nu) rho w^2 r^2 / 8 (the general uniform-disc solution); the
    constants follow from a free outer edge, the bore pressure (or a finite centre) and,
    at each step, continuity of the radial force per unit circumference (width x s_r) and
    of the radial displacement u = r (s_t - nu s_r) / E. One material throughout.

    Parameters
    ----------
    radius : array [m]
        Radii; a radius on a step boundary takes the outer step's values.
    speed : float [rad/s]
    edges : array [m]
        Step boundaries, increasing, from the bore (0 for a solid centre) to the outside.
    widths : array [m]
        Axial thickness of each step (``len(edges) - 1`` values).
    density : float [kg/m^3]
    poisson : float [-]
    bore_pressure : float [Pa]
        Pressure on the bore (shrink fit), compressive positive.

    Returns
    -------
    (radial, tangential) : arrays [Pa]

    References
    ----------
    .. [1] Timoshenko, Strength of Materials Part II, 3rd ed., rotating disks of variable
       thickness (stepped approximation).
    .. [2] Timoshenko & Goodier, Theory of Elasticity, 3rd ed., section 32.
    """
    edges = np.asarray(edges, dtype=float)
    widths = np.asarray(widths, dtype=float)
    a_c, b_c = step_constants(edges, widths, speed, density, poisson, bore_pressure)
    r = np.asarray(radius, dtype=float)
    j = np.clip(np.searchsorted(edges, r, side="right") - 1, 0, len(widths) - 1)
    return step_stresses(r, a_c[j], b_c[j], speed, density, poisson)


def step_stresses(radius: np.ndarray, constant_a: np.ndarray, constant_b: np.ndarray,
                  speed: float, density: float,
                  poisson: float) -> tuple[np.ndarray, np.ndarray]:
    """Radial and tangential stress from the constants of :func:`step_constants`.

    s_r = A - B/r^2 - (3+nu) rho w^2 r^2 / 8, s_t = A + B/r^2 - (1+3nu) rho w^2 r^2 / 8;
    the B/r^2 term is taken as 0 at r = 0 (a solid centre has B = 0).

    Parameters
    ----------
    radius : array [m]
    constant_a : array [Pa]
        A of the step each radius lies in (same shape as ``radius``).
    constant_b : array [Pa*m^2]
        B of the step each radius lies in.
    speed : float [rad/s]
    density : float [kg/m^3]
    poisson : float [-]

    Returns
    -------
    (radial, tangential) : arrays [Pa]

    References
    ----------
    .. [1] Timoshenko & Goodier, Theory of Elasticity, 3rd ed., section 32 (general
       solution for a rotating disk of uniform thickness).
    """
    r, a_c, b_c = radius, constant_a, constant_b
    k, nu = density * speed ** 2, poisson
    with np.errstate(divide="ignore", invalid="ignore"):
        inv = np.where(r > 0, b_c / np.where(r > 0, r, 1.0) ** 2, 0.0)
    return (a_c - inv - (3.0 + nu) * k * r ** 2 / 8.0,
            a_c + inv - (1.0 + 3.0 * nu) * k * r ** 2 / 8.0)


def profile_radii(edges: np.ndarray, constant_a: np.ndarray, constant_b: np.ndarray,
                  speed: float, density: float, poisson: float,
                  points: int = 241) -> tuple[np.ndarray, np.ndarray]:
    """Radii to evaluate a stepped disc at, with the step index of each.

    ``points`` evenly spaced radii per step (both ends included), plus the radius where
    the radial stress of a step peaks, d s_r / dr = 0 at r^4 = 8 B / ((3+nu) rho w^2),
    when it lies inside the step.

    Parameters
    ----------
    edges : array [m]
        Step boundaries, as for :func:`step_constants`.
    constant_a : array [Pa]
        A of each step.
    constant_b : array [Pa*m^2]
        B of each step.
    speed : float [rad/s]
    density : float [kg/m^3]
    poisson : float [-]
    points : int
        Radii per step.

    Returns
    -------
    (radius [m], step) : arrays
        Radii, increasing within each step; the step index of each radius.

    References
    ----------
    .. [1] Timoshenko & Goodier, Theory of Elasticity, 3rd ed., section 32 (the radial
       stress expression differentiated).
    """
    k, nu = density * speed ** 2, poisson
    rs, js = [], []
    for j in range(len(constant_a)):
        r = np.linspace(edges[j], edges[j + 1], points)
        if constant_b[j] > 0 and k > 0:  # d s_r / dr = 0 at r^4 = 8 B / ((3+nu) k)
            r_star = (8.0 * constant_b[j] / ((3.0 + nu) * k)) ** 0.25
            if edges[j] < r_star < edges[j + 1]:
                r = np.sort(np.append(r, r_star))
        rs.append(r)
        js.append(np.full(r.size, j))
    return np.concatenate(rs), np.concatenate(js)


def von_mises(radial: np.ndarray, tangential: np.ndarray) -> np.ndarray:
    """Plane-stress von Mises stress sqrt(s_r^2 - s_r s_t + s_t^2) [Pa]."""
    return np.sqrt(radial ** 2 - radial * tangential + tangential ** 2)


def max_principal(radial: np.ndarray, tangential: np.ndarray) -> np.ndarray:
    """Largest principal stress in plane stress, max(s_r, s_t, 0) [Pa]."""
    return np.maximum(np.maximum(radial, tangential), 0.0)

