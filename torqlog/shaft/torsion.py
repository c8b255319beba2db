"""Torsional natural frequencies of a shaft line, held against the orders of its speed.

Torsional model
---------------
A free-free chain of rigid inertias joined by torsional springs, as in the profile's
``[torsional]`` section (inertias referred to the logged shaft). Its first mode is the
rigid-body rotation at 0 Hz, which is reported as such and never as a resonance. Each
elastic mode is held against the significant orders of the shaft speed found in the
torque (an :class:`torqlog.signal.spectrum.OrderSpectrum`) or, without a measured spectrum,
against every order up to :data:`ASSUMED_MAX_ORDER`.

Every result here is a preliminary engineering estimate; see
:data:`torqlog.shaft.lateral.CAUTIONS`.

References
----------
.. [1] J. M. Gere and S. P. Timoshenko, *Mechanics of Materials*, torsion of circular
   bars.
.. [2] W. T. Thomson and M. D. Dahleh, *Theory of Vibration with Applications*, 5th ed.,
   torsional systems.
.. [3] J. P. Den Hartog, *Mechanical Vibrations*, 4th ed., torsional vibration of
   multi-disc shafts.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, NamedTuple

import numpy as np
import scipy.linalg

from torqlog.errors import DataError, UsageError
from torqlog.io.notebook import result_html
from torqlog.io.profile import MachineProfile

if TYPE_CHECKING:
    from torqlog.shaft.geometry import ShaftSegment

#: Orders assumed significant when no spectrum is given: k / revs_per_cycle up to this
#: order of the shaft speed. A stated default of this program, not a standard.
ASSUMED_MAX_ORDER = 10.0


def torsional_stiffness(segment: ShaftSegment, shear_modulus: float) -> float:
    """Torsional stiffness k = G J / L of a shaft segment [N*m/rad].

    Parameters
    ----------
    segment : ShaftSegment
    shear_modulus : float [Pa]

    References
    ----------
    Gere and Timoshenko, *Mechanics of Materials*, torsion of circular bars
    (J = pi (d^4 - d_i^4) / 32).
    """
    return shear_modulus * segment.polar_moment / segment.length


@dataclass(frozen=True)
class TorsionalChain:
    """Free-free chain of inertias joined by torsional springs.

    Attributes
    ----------
    names : tuple of str
    inertias : tuple of float [kg*m^2]
        Referred to the logged shaft.
    stiffnesses : tuple of float [N*m/rad]
        Between neighbours (one fewer than inertias).
    """

    names: tuple[str, ...]
    inertias: tuple[float, ...]
    stiffnesses: tuple[float, ...]

    def __post_init__(self) -> None:
        for name in ("names", "inertias", "stiffnesses"):
            object.__setattr__(self, name, tuple(getattr(self, name)))
        n = len(self.inertias)
        if n < 1 or len(self.names) != n:
            raise DataError(f"torsional chain needs one name per inertia "
                            f"({len(self.names)} names, {n} inertias)")
        if len(self.stiffnesses) != n - 1:
            raise DataError(f"torsional chain of {n} inertias needs {n - 1} stiffnesses, "
                            f"got {len(self.stiffnesses)}")
        if not all(v > 0 for v in (*self.inertias, *self.stiffnesses)):
            raise DataError("torsional chain inertias and stiffnesses must be positive")

    def add_inertia(self, inertia: float, at: str) -> TorsionalChain:
        """A copy with ``inertia`` [kg*m^2] added to the element named ``at``."""
        if at not in self.names:
            raise UsageError(f"no element {at!r} in the torsional chain; valid: "
                             f"{', '.join(self.names)}")
        i = self.names.index(at)
        new = list(self.inertias)
        new[i] += inertia
        return dataclasses.replace(self, inertias=tuple(new))


def torsional_chain_from_profile(profile: MachineProfile) -> TorsionalChain | None:
    """The profile's ``[torsional]`` chain, or None when the section is absent."""
    sec = profile.torsional
    if not sec or "inertias_kgm2" not in sec:
        return None
    src = profile.source or "<profile>"
    inertias = sec["inertias_kgm2"]
    names = sec.get("names", [f"J{i + 1}" for i in range(len(inertias))])
    stiff = sec.get("stiffness_Nm_per_rad", [])
    for key, values in (("inertias_kgm2", inertias), ("stiffness_Nm_per_rad", stiff)):
        if any(isinstance(v, bool) or not isinstance(v, int | float) for v in values):
            raise DataError(f"{src}: [torsional] {key} must be a list of numbers")
    try:
        return TorsionalChain(tuple(str(n) for n in names), tuple(map(float, inertias)),
                              tuple(map(float, stiff)))
    except DataError as exc:
        raise DataError(f"{src}: [torsional] {exc}") from None


def chain_matrices(chain: TorsionalChain) -> tuple[np.ndarray, np.ndarray]:
    """Inertia matrix J [kg*m^2] (diagonal) and stiffness matrix K [N*m/rad] of a chain
    (K tridiagonal: k_i on and -k_i beside the diagonal; Den Hartog)."""
    n = len(chain.inertias)
    k = np.asarray(chain.stiffnesses, float)
    K = np.zeros((n, n))
    i = np.arange(n - 1)
    np.add.at(K, (i, i), k)
    np.add.at(K, (i + 1, i + 1), k)
    np.add.at(K, (i, i + 1), -k)
    np.add.at(K, (i + 1, i), -k)
    return np.diag(np.asarray(chain.inertias, float)), K


class TorsionalModes(NamedTuple):
    """Torsional modes: ``freqs`` [Hz] ascending, ``shapes`` (n_modes, n_inertias)."""

    freqs: np.ndarray
    shapes: np.ndarray

    @property
    def rigid_body(self) -> np.ndarray:
        """True for the rigid-body rotation (frequency exactly 0), not a resonance."""
        return self.freqs == 0.0


def torsional_modes(chain: TorsionalChain) -> TorsionalModes:
    """Natural frequencies and mode shapes of a free-free torsional chain.

    Solves K phi = omega^2 J phi with ``scipy.linalg.eigh(K, J)``, K the tridiagonal
    spring matrix and J the diagonal inertia matrix. The rigid-body mode (omega^2 within
    1e-9 of the largest) is set to exactly 0 Hz.

    Returns
    -------
    TorsionalModes
        ``freqs`` [Hz], ``shapes`` scaled to a peak of +1, ``rigid_body`` flags.

    Examples
    --------
    Two inertias on one spring: f = sqrt(k (J1 + J2) / (J1 J2)) / 2 pi = 250 / 2 pi Hz.

    >>> modes = torsional_modes(TorsionalChain(("motor", "flywheel"), (2.0, 8.0), (1.0e5,)))
    >>> [round(float(f), 3) for f in modes.freqs]
    [0.0, 39.789]

    References
    ----------
    Den Hartog, *Mechanical Vibrations*; Thomson and Dahleh, torsional systems.
    """
    n = len(chain.inertias)
    J, K = chain_matrices(chain)
    w2, vecs = scipy.linalg.eigh(K, J)
    w2 = np.where(w2 <= 1e-9 * max(w2.max(), 0.0), 0.0, w2)
    shapes = vecs.T
    peak = shapes[np.arange(n), np.abs(shapes).argmax(axis=1)]
    shapes = shapes / peak[:, None]
    shapes[w2 == 0.0] = 1.0
    return TorsionalModes(np.sqrt(w2) / (2 * math.pi), shapes)


def significant_orders(orders: Any, min_share: float = 0.05, revs_per_cycle: int = 1
                       ) -> tuple[np.ndarray, np.ndarray, str]:
    """The orders of the shaft speed to check, with their shares of the dynamic torque.

    Parameters
    ----------
    orders : OrderSpectrum, mapping {order: share}, sequence of orders, or None
        An object with ``order`` and ``share`` arrays (an
        :class:`torqlog.signal.spectrum.OrderSpectrum`); a mapping of order to share; a plain
        sequence of orders, all taken as significant; or None, which assumes every order
        k / revs_per_cycle up to :data:`ASSUMED_MAX_ORDER`.
    min_share : float
        Smallest share of the dynamic torque that makes an order significant.
    revs_per_cycle : int
        Shaft revolutions per machine cycle (step of the assumed orders).

    Returns
    -------
    order : array
        Significant orders of the shaft speed.
    share : array
        Their shares; NaN where assumed rather than measured.
    source : str
        How the orders were obtained ("spectrum", "given with shares", ...).
    """
    if orders is None:
        step = 1.0 / revs_per_cycle
        o = np.arange(1, int(round(ASSUMED_MAX_ORDER / step)) + 1) * step
        return o, np.full(len(o), np.nan), (f"assumed: every order up to "
                                            f"{ASSUMED_MAX_ORDER:g} in steps of {step:g}")
    if hasattr(orders, "order") and hasattr(orders, "share"):
        o, s = np.asarray(orders.order, float), np.asarray(orders.share, float)
        src = "spectrum"
    elif isinstance(orders, Mapping):
        o = np.array(list(orders.keys()), float)
        s = np.array(list(orders.values()), float)
        src = "given with shares"
    else:
        o = np.atleast_1d(np.asarray(orders, float))
        s = np.full(len(o), np.nan)
        src = "given, all assumed significant"
    if np.any(~(o > 0)):
        raise UsageError("orders must be positive multiples of the shaft speed")
    keep = np.isnan(s) | (s >= min_share)
    return o[keep], s[keep], src


@dataclass(frozen=True, eq=False)
class TorsionalResult:
    """Torsional modes held against the significant orders. ``to_dict()`` is the JSON
    contract; ``near_orders`` lists each elastic mode within the band of an order."""

    names: tuple[str, ...]
    modes_hz: tuple[float, ...]
    rigid_body: tuple[bool, ...]
    mode_shapes: np.ndarray
    near_orders: tuple[dict[str, Any], ...]
    orders_checked: tuple[float, ...]
    band: float
    min_share: float
    verdict: str
    margin_text: str

    _repr_html_ = result_html  # the notebook view

    def to_dict(self) -> dict[str, Any]:
        """The JSON contract (frequencies in Hz)."""
        return {
            "names": list(self.names),
            "modes_hz": list(self.modes_hz),
            "rigid_body": list(self.rigid_body),
            "mode_shapes": self.mode_shapes.tolist(),
            "near_orders": [dict(d) for d in self.near_orders],
            "orders_checked": list(self.orders_checked),
            "band": self.band,
            "min_share": self.min_share,
            "verdict": self.verdict,
            "margin_text": self.margin_text,
        }


def torsional_check(chain: TorsionalChain, orders: Any = None, speed: float | None = None,
                    band: float = 0.10, min_share: float = 0.05, *,
                    revs_per_cycle: int = 1) -> TorsionalResult:
    """Flag elastic torsional modes that lie near a significant order of the speed.

    A mode at f is flagged when |f - f_o| <= band * f_o for an order o whose frequency is
    f_o = o * speed / (2 pi) and whose share of the dynamic torque is at least
    ``min_share``.

    Parameters
    ----------
    chain : TorsionalChain
    orders : OrderSpectrum, mapping {order: share}, sequence of orders, or None
        Orders of the shaft speed. A plain sequence is taken as all significant; None
        assumes every order k / revs_per_cycle up to :data:`ASSUMED_MAX_ORDER`.
    speed : float, optional [rad/s]
        Shaft speed. Without it only the modes are reported (verdict "not checked").
    band : float
        Half-width of the band around each order, as a fraction (default ±10 %,
        common practice).
    min_share : float
        Smallest share of the dynamic torque that makes an order significant.
    revs_per_cycle : int
        Shaft revolutions per machine cycle (for the assumed orders).

    Returns
    -------
    TorsionalResult
        ``detune`` in ``near_orders`` is (f - f_o) / f_o.
    """
    if not 0 < band < 1:
        raise UsageError(f"band must be a fraction between 0 and 1, got {band:g}")
    modes = torsional_modes(chain)
    o, s, _ = significant_orders(orders, min_share, revs_per_cycle)
    near: list[dict[str, Any]] = []
    elastic = modes.freqs[~modes.rigid_body]
    if speed is None:
        verdict, text = "not checked", "no running speed given: torsional modes only"
    else:
        f_o = o * speed / (2 * math.pi)
        detune = elastic[:, None] / f_o[None, :] - 1.0
        hit_mode, hit_order = np.nonzero(np.abs(detune) <= band)
        near = [{"mode_hz": float(elastic[i]), "order": float(o[j]), "order_hz": float(f_o[j]),
                 "share": None if np.isnan(s[j]) else float(s[j]),
                 "detune": float(detune[i, j])} for i, j in zip(hit_mode, hit_order,
                                                                strict=True)]
        verdict = "fail" if near else "pass"
        if near:
            worst = min(near, key=lambda d: abs(d["detune"]))
            text = (f"torsional mode {worst['mode_hz']:.1f} Hz lies within "
                    f"{abs(worst['detune']) * 100:.1f} % of order {worst['order']:g} "
                    f"({worst['order_hz']:.2f} Hz); band ±{band * 100:g} %: fail")
        elif len(elastic) == 0:
            text = "torsional chain has no elastic mode: pass"
        elif len(f_o) == 0:
            text = "no significant order to check: pass"
        else:
            i, j = np.unravel_index(np.abs(detune).argmin(), detune.shape)
            text = (f"no elastic torsional mode within ±{band * 100:g} % of a significant "
                    f"order (nearest: mode {elastic[i]:.1f} Hz vs order {o[j]:g} at "
                    f"{f_o[j]:.2f} Hz, {detune[i, j] * 100:+.0f} %): pass")
    return TorsionalResult(chain.names, tuple(float(f) for f in modes.freqs),
                           tuple(bool(r) for r in modes.rigid_body), modes.shapes, tuple(near),
                           tuple(float(v) for v in o), band, min_share, verdict, text)


__all__ = [
    "ASSUMED_MAX_ORDER", "TorsionalChain", "chain_matrices", "TorsionalModes", "TorsionalResult",
    "significant_orders", "torsional_chain_from_profile", "torsional_check",
    "torsional_modes", "torsional_stiffness",
]
