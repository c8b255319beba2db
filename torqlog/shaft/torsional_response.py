"""Steady-state torsional forced response of the shaft line to the orders of the log.

The free-free chain of :mod:`torqlog.shaft.torsion` (rigid inertias joined by torsional springs,
referred to the logged shaft) is driven by the orders of the measured mean cycle torque,
applied at one element of the chain (``excitation_at``; by default the last element, the
crank, press ram drive or compressor crank whose torque the log measured; by default the
element named "crank" when the chain has one). The element at the other
end (the motor, or a generator) reacts the mean torque; its dynamic torque is not
modelled (it acts as an inertia only). Damping is modal and viscous, the same ratio for
every elastic mode.

For each order the complex angle amplitudes follow from the modal sum

    Theta = sum_r phi_r phi_r^T F / (omega_r^2 - Omega^2 + 2 i zeta omega_r Omega)

with mass-normalised modes phi_r (the rigid-body mode, omega_r = 0, included), and the
dynamic torque of section s (the spring between elements s and s + 1) is
k_s (Theta_s - Theta_{s+1}). The quasi-static torque of a section is the torque it would
carry if the chain were rigid (it accelerates the inertias on one side with the whole
chain): T_qs,s = sum_{j<=s} F_j - (sum_{j<=s} J_j / J_total) sum_j F_j; the amplification
is |T_dyn| / |T_qs|. Orders add with their phases into the section torque over one cycle,
whose extreme values give the peak shaft torque with the mean.

References
----------
.. [1] S. S. Rao, *Mechanical Vibrations*, 5th ed., Pearson, 2011: sec. 3.4 (steady-state
   response of a damped system to harmonic force), ch. 6 (multidegree-of-freedom systems,
   modal analysis of forced vibration, proportional/modal damping).
.. [2] W. T. Thomson and M. D. Dahleh, *Theory of Vibration with Applications*, 5th ed.,
   torsional systems; modal damping.
.. [3] W. Ker Wilson, *Practical Solution of Torsional Vibration Problems*, vol. 2
   (order excitation of reciprocating machines).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
import scipy.linalg

from torqlog.errors import UsageError
from torqlog.shaft.torsion import TorsionalChain, chain_matrices

#: Modal damping ratio of an undamped steel shaft line without a torsional damper: 0.02,
#: common practice (values of 0.01 to 0.05 are usual), not from a standard.
DEFAULT_DAMPING_RATIO = 0.02

#: Orders of the mean cycle torque used by default (up to this order of the shaft speed).
DEFAULT_MAX_ORDER = 24.0


def modal_damping_matrix(chain: TorsionalChain, damping_ratio: float) -> np.ndarray:
    """Viscous damping matrix C [N*m*s/rad] giving every elastic mode the ratio zeta.

    C = J Phi diag(2 zeta omega_r) Phi^T J with mass-normalised modes Phi (Rao, ch. 6,
    modal damping); the rigid-body mode stays undamped.
    """
    J, K = chain_matrices(chain)
    w2, phi = scipy.linalg.eigh(K, J)
    w = np.sqrt(np.clip(w2, 0.0, None))
    w[w2 <= 1e-9 * max(w2.max(), 0.0)] = 0.0
    return J @ phi @ np.diag(2.0 * damping_ratio * w) @ phi.T @ J


def section_torque_amplitudes(chain: TorsionalChain, frequency: np.ndarray,
                              force: np.ndarray, damping_ratio: float
                              ) -> tuple[np.ndarray, np.ndarray]:
    """Complex dynamic and quasi-static section torques under harmonic torques.

    Parameters
    ----------
    chain : TorsionalChain
    frequency : array, shape (m,) [rad/s]
        Forcing circular frequencies Omega (positive).
    force : array, shape (m, n) [N*m]
        Complex torque amplitude on each of the n elements at each frequency
        (torque = Re(F e^{i Omega t})).
    damping_ratio : float
        Modal damping ratio zeta of every elastic mode.

    Returns
    -------
    dynamic : array, shape (m, n - 1) [N*m]
        Complex torque k_s (Theta_s - Theta_{s+1}) in each section.
    quasi_static : array, shape (m, n - 1) [N*m]
        The same for a rigid chain (see the module notes).

    References
    ----------
    Rao, *Mechanical Vibrations*, 5th ed., sec. 3.4 and ch. 6 (modal superposition).
    """
    omega = np.asarray(frequency, float)
    F = np.atleast_2d(np.asarray(force, complex))
    if np.any(~(omega > 0)):
        raise UsageError("forcing frequencies must be positive")
    J, K = chain_matrices(chain)
    w2, phi = scipy.linalg.eigh(K, J)
    w2 = np.where(w2 <= 1e-9 * max(w2.max(), 0.0), 0.0, w2)
    w = np.sqrt(w2)
    modal_force = F @ phi                                     # (m, modes)
    denom = (w2[None, :] - omega[:, None] ** 2
             + 2j * damping_ratio * w[None, :] * omega[:, None])
    theta = (modal_force / denom) @ phi.T                     # (m, n)
    k = np.asarray(chain.stiffnesses, float)
    dynamic = k[None, :] * (theta[:, :-1] - theta[:, 1:])
    inert = np.asarray(chain.inertias, float)
    share = np.cumsum(inert)[:-1] / inert.sum()
    quasi = np.cumsum(F, axis=1)[:, :-1] - share[None, :] * F.sum(axis=1)[:, None]
    return dynamic, quasi


def complex_orders(torque: np.ndarray, revs_per_cycle: int = 1,
                   max_order: float | None = DEFAULT_MAX_ORDER
                   ) -> tuple[np.ndarray, np.ndarray, float]:
    """Orders, complex amplitudes and mean of one cycle of torque on a uniform angle grid.

    Parameters
    ----------
    torque : array [N*m]
        One cycle (``revs_per_cycle`` shaft revolutions) at equal angle steps, the first
        sample of the next cycle not repeated.
    revs_per_cycle : int
    max_order : float or None
        Highest order kept (None: up to the Nyquist order).

    Returns
    -------
    order : array
        Orders of the shaft speed (k / revs_per_cycle).
    amplitude : array, complex [N*m]
        Torque = mean + sum Re(amplitude e^{i k phi}), phi the cycle angle [rad].
    mean : float [N*m]

    References
    ----------
    Brigham, *The Fast Fourier Transform and its Applications* (1988).
    """
    t = np.asarray(torque, float)
    n = t.size
    X = np.fft.rfft(t) / n
    amp = 2.0 * X[1:]
    if n % 2 == 0:
        amp[-1] /= 2.0
    order = np.arange(1, len(X)) / revs_per_cycle
    keep = np.ones(len(order), bool) if max_order is None else order <= max_order * (1 + 1e-12)
    return order[keep], amp[keep], float(X[0].real)


@dataclass(frozen=True, eq=False)
class ForcedResponse:
    """Steady-state torsional response to the orders of one cycle of torque.

    ``dynamic`` and ``quasi_static`` are complex section torques, one row per order, one
    column per section; ``waveform`` is the section torque over one cycle (mean included).
    ``to_dict()`` is the JSON contract.
    """

    sections: tuple[str, ...]
    order: np.ndarray
    frequency_hz: np.ndarray
    dynamic: np.ndarray = field(repr=False)
    quasi_static: np.ndarray = field(repr=False)
    mean: np.ndarray = field(repr=False)         # mean torque of each section [N*m]
    waveform: np.ndarray = field(repr=False)     # (n_angle, n_sections) [N*m]
    modes_hz: tuple[float, ...] = ()
    options: dict[str, Any] = field(default_factory=dict)

    @property
    def amplification(self) -> np.ndarray:
        """|dynamic| / |quasi-static| per order and section (NaN where the quasi-static
        torque is nil)."""
        qs = np.abs(self.quasi_static)
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(qs > 1e-12 * max(qs.max(initial=0.0), 1e-300),
                            np.abs(self.dynamic) / qs, np.nan)

    @property
    def peak(self) -> np.ndarray:
        """Largest absolute section torque over the cycle [N*m], per section."""
        return np.abs(self.waveform).max(axis=0)

    @property
    def torque_max(self) -> np.ndarray:
        return self.waveform.max(axis=0)

    @property
    def torque_min(self) -> np.ndarray:
        return self.waveform.min(axis=0)

    @property
    def dynamic_peak(self) -> np.ndarray:
        """Largest |section torque - mean| over the cycle [N*m], per section."""
        return np.abs(self.waveform - self.mean[None, :]).max(axis=0)

    def governing(self) -> tuple[str, float, float, float]:
        """Section, order, dynamic torque [N*m] and amplification of the largest
        single-order dynamic torque."""
        mag = np.abs(self.dynamic)
        i, s = np.unravel_index(int(mag.argmax()), mag.shape)
        return (self.sections[s], float(self.order[i]), float(mag[i, s]),
                float(self.amplification[i, s]))

    def to_pandas(self) -> pd.DataFrame:
        """One row per order and section: ``order``, ``frequency_Hz``, ``section``,
        ``torque_dynamic_Nm``, ``torque_quasi_static_Nm``, ``amplification``."""
        n_o, n_s = self.dynamic.shape
        return pd.DataFrame({
            "order": np.repeat(self.order, n_s),
            "frequency_Hz": np.repeat(self.frequency_hz, n_s),
            "section": np.tile(np.array(self.sections, dtype=object), n_o),
            "torque_dynamic_Nm": np.abs(self.dynamic).ravel(),
            "torque_quasi_static_Nm": np.abs(self.quasi_static).ravel(),
            "amplification": self.amplification.ravel(),
        })

    def to_dict(self) -> dict[str, Any]:
        sec, order, torque, amp = (self.governing() if self.dynamic.size
                                   else ("", math.nan, 0.0, math.nan))
        return {
            "sections": list(self.sections),
            "order": self.order.tolist(),
            "frequency_hz": self.frequency_hz.tolist(),
            "torque_dynamic_Nm": np.abs(self.dynamic).tolist(),
            "torque_quasi_static_Nm": np.abs(self.quasi_static).tolist(),
            "amplification": [[None if math.isnan(v) else float(v) for v in row]
                              for row in self.amplification],
            "torque_mean_Nm": self.mean.tolist(),
            "torque_dynamic_peak_Nm": self.dynamic_peak.tolist(),
            "torque_max_Nm": self.torque_max.tolist(),
            "torque_min_Nm": self.torque_min.tolist(),
            "torque_peak_Nm": self.peak.tolist(),
            "governing_section": sec, "governing_order": order,
            "governing_torque_dynamic_Nm": torque,
            "governing_amplification": None if math.isnan(amp) else amp,
            "modes_hz": list(self.modes_hz),
            "options": dict(self.options),
        }


def forced_response(chain: TorsionalChain, order: np.ndarray, amplitude: np.ndarray,
                    mean: float, speed: float, *, revs_per_cycle: int = 1,
                    excitation_at: str | None = None, damping_ratio: float =
                    DEFAULT_DAMPING_RATIO, n_angle: int = 720) -> ForcedResponse:
    """Section torques of a chain driven by the orders of a cycle of torque.

    Parameters
    ----------
    chain : TorsionalChain
    order : array
        Orders of the shaft speed.
    amplitude : array, complex [N*m]
        Complex amplitude of each order (see :func:`complex_orders`).
    mean : float [N*m]
        Mean torque; carried by every section between the excitation element and the
        element that reacts it (the first element, or the last when the excitation is
        at the first).
    speed : float [rad/s]
        Shaft speed the orders refer to.
    revs_per_cycle : int
    excitation_at : str, optional
        Element where the torque acts (default: the element named "crank" when there is
        one, else the last element of the chain).
    damping_ratio : float
        Modal damping ratio (default :data:`DEFAULT_DAMPING_RATIO`, common practice).
    n_angle : int
        Points over the cycle for the waveform (at least 8 per highest harmonic).

    Returns
    -------
    ForcedResponse

    References
    ----------
    Rao, *Mechanical Vibrations*, 5th ed., sec. 3.4 and ch. 6.
    """
    if not 0 <= damping_ratio < 1:
        raise UsageError(f"damping ratio must be at least 0 and below 1, got "
                         f"{damping_ratio:g}")
    if not speed > 0:
        raise UsageError(f"running speed must be positive, got {speed:g} rad/s")
    names = chain.names
    if excitation_at is None:
        excitation_at = "crank" if "crank" in names else names[-1]
    at = excitation_at
    if at not in names:
        raise UsageError(f"no element {at!r} in the torsional chain; valid: "
                         f"{', '.join(names)}")
    e = names.index(at)
    order = np.asarray(order, float)
    amplitude = np.asarray(amplitude, complex)
    F = np.zeros((len(order), len(names)), complex)
    F[:, e] = amplitude
    omega = order * speed
    if len(order):
        dyn, qs = section_torque_amplitudes(chain, omega, F, damping_ratio)
    else:
        dyn = qs = np.zeros((0, len(names) - 1), complex)
    r = 0 if e != 0 else len(names) - 1          # element that reacts the mean torque
    idx = np.arange(len(names) - 1)
    sec_mean = np.where((idx >= min(e, r)) & (idx < max(e, r)), mean, 0.0)
    harm = np.rint(order * revs_per_cycle).astype(int)
    n = max(int(n_angle), 8 * int(harm.max(initial=1)))
    phi = np.arange(n) * 2 * math.pi / n
    wave = sec_mean[None, :] + (np.exp(1j * np.outer(phi, harm)) @ dyn).real
    from torqlog.shaft.torsion import torsional_modes

    modes = torsional_modes(chain)
    sections = tuple(f"{a}–{b}" for a, b in zip(names[:-1], names[1:], strict=True))
    options = {"damping_ratio": damping_ratio, "excitation_at": at, "reaction_at": names[r],
               "speed_rpm": speed * 60 / (2 * math.pi), "revs_per_cycle": revs_per_cycle,
               "damping": "modal, viscous, same ratio for every elastic mode",
               "applied": f"dynamic torque of the log applied at {at!r}; mean torque "
                          f"reacted at {names[r]!r}, whose dynamic torque is not modelled"}
    return ForcedResponse(sections, order, omega / (2 * math.pi), dyn, qs, sec_mean, wave,
                          tuple(float(f) for f in modes.freqs), options)


__all__ = ["DEFAULT_DAMPING_RATIO", "DEFAULT_MAX_ORDER", "ForcedResponse", "chain_matrices",
           "complex_orders", "forced_response", "modal_damping_matrix",
           "section_torque_amplitudes"]
