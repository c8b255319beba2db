"""The zero-phase low-pass of the cycle engine's speed (torqlog.signal.condition.lowpass).

References used below:
- A. V. Oppenheim and R. W. Schafer, *Discrete-Time Signal Processing*, 3rd ed., 2010,
  sec. 5.7 (zero phase: a real, even response) and sec. 7.5 (FIR design by windowing:
  the designed response is checked, here with scipy.signal.freqz as an independent
  evaluation of the DTFT).
- J. G. Proakis and M. Salehi, *Digital Communications*, 5th ed., 2008, sec. 9.2: the
  raised-cosine spectrum (the gain the filter is built to have); its impulse response is
  checked here against a dense inverse FFT of that gain, not against the book's formula.
- scipy.signal.lfilter as an independent FIR convolution.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import signal

from torqlog.signal import condition as cond
from torqlog.signal.cycles import CycleOptions, speed_bins_per_cycle, speed_filter

TAPER = 0.25


def raised_cosine(f: np.ndarray, cutoff: float, taper: float = TAPER) -> np.ndarray:
    """The documented gain: 1 below cutoff·(1 − taper), 0 above cutoff·(1 + taper), a half
    cosine between (f and cutoff as fractions of Nyquist)."""
    lo, hi = cutoff * (1 - taper), cutoff * (1 + taper)
    g = np.clip((hi - f) / (hi - lo), 0.0, 1.0)
    return 0.5 - 0.5 * np.cos(np.pi * g)


@pytest.mark.parametrize("cutoff", [0.5, 0.25, 0.125, 0.05])
def test_magnitude_response_against_freqz(cutoff):
    h = cond.lowpass_taps(cutoff, TAPER)
    assert h.size % 2 == 1
    np.testing.assert_allclose(h, h[::-1], rtol=0, atol=1e-15)  # symmetric: linear phase
    w, resp = signal.freqz(h, worN=1 << 15)
    f = w / np.pi
    gain = np.abs(resp)
    passband = f <= cutoff * (1 - TAPER)
    stopband = f >= cutoff * (1 + TAPER)
    assert np.max(np.abs(gain[passband] - 1.0)) < 1e-3
    assert 20 * np.log10(np.max(gain[stopband])) < -65.0
    # the whole response follows the raised cosine (today's documented gain)
    assert np.max(np.abs(gain - raised_cosine(f, cutoff))) < 1e-3
    # gain ½ at the cut-off itself
    assert np.interp(cutoff, f, gain) == pytest.approx(0.5, abs=1e-3)


def test_taps_are_the_raised_cosine_impulse_response():
    # Inverse DFT of the gain sampled densely (numpy FFT) against the taps' closed form.
    cutoff = 0.25
    h = cond.lowpass_taps(cutoff, TAPER)
    half = h.size // 2
    n = 1 << 18
    f = np.arange(n // 2 + 1) / (n / 2)
    ref = np.fft.irfft(raised_cosine(f, cutoff), n)
    ref = np.concatenate((ref[-half:], ref[: half + 1]))
    np.testing.assert_allclose(h, ref / ref.sum(), rtol=0, atol=1e-6 * h.max())


def test_filtering_is_a_centred_convolution():
    # scipy.signal.lfilter on the same reflected extension, delayed by half the taps.
    rng = np.random.default_rng(3)
    x = np.cumsum(rng.normal(size=3000))
    h = cond.lowpass_taps(0.2)
    half = h.size // 2
    ext = np.concatenate((2 * x[0] - x[half:0:-1], x, 2 * x[-1] - x[-2:-half - 2:-1]))
    ref = signal.lfilter(h, 1.0, ext)[2 * half:]
    np.testing.assert_allclose(cond.lowpass(x, 0.2), ref, rtol=0, atol=1e-9)


def test_zero_phase_and_pass_band():
    # A pass-band sinusoid comes out unshifted and unscaled (to the pass-band ripple).
    n = np.arange(4000)
    x = np.cos(2 * np.pi * 0.05 * n + 0.3)  # 0.1 of Nyquist, cut-off 0.25
    y = cond.lowpass(x, 0.25)
    inner = slice(500, 3500)
    np.testing.assert_allclose(y[inner], x[inner], rtol=0, atol=1e-3)
    # a stop-band one is gone
    z = cond.lowpass(np.cos(2 * np.pi * 0.2 * n), 0.25)  # 0.4 of Nyquist
    assert np.max(np.abs(z[inner])) < 1e-3


def test_pieces_with_context_give_the_whole_result():
    # Locality: a piece filtered with the taps' half-length of context on both sides.
    rng = np.random.default_rng(4)
    x = np.cumsum(rng.normal(size=20_000))
    h = cond.lowpass_taps(0.25)
    half = h.size // 2
    whole = cond.lowpass(x, 0.25, taps=h)
    a, b = 7000, 9000
    piece = cond.lowpass(x[a - half: b + half], 0.25, taps=h)[half:-half]
    np.testing.assert_allclose(piece, whole[a:b], rtol=0, atol=1e-9)
    # the log's ends: odd reflection keeps a straight line straight
    line = 3.0 + 0.5 * np.arange(500.0)
    np.testing.assert_allclose(cond.lowpass(line, 0.25), line, rtol=1e-12)


def test_engine_context_and_look_ahead_cover_the_filter():
    # The cycle engine holds back and keeps at least the filter's reach in whole cycles.
    for orders in (1.0, 2.0, 5.0, 20.0, 100.0):
        o = CycleOptions(speed_cutoff_orders=orders)
        nb = speed_bins_per_cycle(o)
        taps, reach = speed_filter(o, nb)
        assert reach * nb >= taps.size // 2
        assert (reach - 1) * nb < taps.size // 2
    assert speed_filter(CycleOptions(speed_cutoff_orders=0.0), 720) == (None, 0)
    assert speed_filter(CycleOptions(speed_cutoff_orders=2000.0), 2048) == (None, 0)
