"""Order spectrum against synthetic torques of known harmonic content.

Reference: the discrete Fourier transform of a sampled sinusoid that completes a whole
number of periods in the record has single-sided amplitude 2|X_k|/N equal to the
sinusoid's peak amplitude (Brigham, The Fast Fourier Transform and its Applications,
1988). The expected values are the amplitudes written into the test signals.
"""

import numpy as np
import pytest

from torqlog.errors import DataError
from torqlog.signal.spectrum import mean_cycle_spectrum, order_spectrum


def _synth(orders_amps, revs_per_cycle, n=720, mean=1500.0, phase_seed=1):
    rng = np.random.default_rng(phase_seed)
    theta = np.arange(n) * 2 * np.pi * revs_per_cycle / n  # shaft angle [rad]
    t = np.full(n, mean)
    for order, amp in orders_amps.items():
        t += amp * np.cos(order * theta + rng.uniform(0, 2 * np.pi))
    return t


def _amp(spec, order):
    i = np.flatnonzero(np.isclose(spec.order, order))
    assert len(i) == 1
    return spec.amplitude[i[0]]


def test_press_orders_recovered_within_1_percent():
    known = {1: 800.0, 2: 350.0, 3: 120.0, 7: 40.0}
    spec = order_spectrum(_synth(known, 1), revs_per_cycle=1)
    for order, amp in known.items():
        assert _amp(spec, order) == pytest.approx(amp, rel=0.01)
    assert spec.mean == pytest.approx(1500.0, rel=1e-9)
    assert _amp(spec, 5) == pytest.approx(0.0, abs=1e-6)


def test_four_stroke_half_orders_recovered_within_1_percent():
    # revs_per_cycle = 2: bins fall on half orders of the shaft speed
    known = {0.5: 220.0, 1.0: 90.0, 1.5: 400.0, 3.0: 150.0}
    spec = order_spectrum(_synth(known, 2), revs_per_cycle=2)
    assert spec.order[:4].tolist() == [0.5, 1.0, 1.5, 2.0]
    for order, amp in known.items():
        assert _amp(spec, order) == pytest.approx(amp, rel=0.01)


def test_share_is_fraction_of_root_sum_square():
    known = {1: 300.0, 2: 400.0}  # RSS 500
    spec = order_spectrum(_synth(known, 1), max_order=4)
    assert _amp(spec, 1) == pytest.approx(300.0, rel=1e-9)
    assert spec.share[:2] == pytest.approx([0.6, 0.8], rel=1e-9)
    df = spec.to_pandas()
    assert list(df.columns) == ["order", "amplitude_Nm", "share"]
    assert df["order"].tolist() == [1.0, 2.0, 3.0, 4.0]
    sig = spec.significant(0.05)
    assert sig.order.tolist() == [1.0, 2.0]


def test_several_cycles_averaged_as_complex_spectra():
    known = {1: 500.0, 4: 60.0}
    one = _synth(known, 1, n=360)
    rng = np.random.default_rng(7)
    # three cycles with noise; 1-D concatenation and 2-D rows give the same spectrum
    cycles = np.stack([one + rng.normal(0, 5.0, one.size) for _ in range(3)])
    s2 = order_spectrum(cycles)
    s1 = order_spectrum(cycles.ravel(), n_cycles=3)
    assert s2.n_cycles == 3
    np.testing.assert_allclose(s1.amplitude, s2.amplitude, rtol=1e-12)
    assert _amp(s2, 1) == pytest.approx(500.0, rel=0.01)
    assert _amp(s2, 4) == pytest.approx(60.0, rel=0.01)


def test_nyquist_bin_not_doubled():
    n = 8
    t = 10.0 * np.cos(np.pi * np.arange(n))  # order 4 at the Nyquist bin of 8 samples
    spec = order_spectrum(t)
    assert _amp(spec, 4) == pytest.approx(10.0, rel=1e-12)


def test_bad_input_messages():
    with pytest.raises(DataError, match=r"^torque of 10 samples does not split into 3 whole "
                                        r"cycles of equal length$"):
        order_spectrum(np.ones(10), n_cycles=3)
    with pytest.raises(DataError, match="^torque contains NaN or infinite values"):
        order_spectrum(np.array([1.0, np.nan, 2.0, 3.0]))


def _engine_log(path, rpm=1200.0, rate=7200.0, seconds=1.5, torque=True):
    """Constant-speed log of a four-stroke-like torque: orders 0.5, 1.5 and 2."""
    t = np.arange(int(rate * seconds)) / rate
    theta = 2 * np.pi * rpm / 60 * t  # shaft angle [rad]
    cols = {"time_s": t}
    if torque:
        cols["torque_Nm"] = (400 + 220 * np.cos(0.5 * theta) + 400 * np.cos(1.5 * theta + 1.0)
                             + 150 * np.cos(2 * theta))
    cols["speed_rpm"] = np.full_like(t, rpm)
    np.savetxt(path, np.column_stack(list(cols.values())), delimiter=",",
               header=",".join(cols), comments="", fmt="%.6f")
    return path


def test_mean_cycle_spectrum_of_a_log_recovers_half_orders(tmp_path):
    from torqlog.signal.cycles import CycleOptions, analyse_cycles

    cycles = analyse_cycles(_engine_log(tmp_path / "engine.csv"), CycleOptions(revs_per_cycle=2))
    spec = mean_cycle_spectrum(cycles, max_order=4)
    assert spec.revs_per_cycle == 2
    assert spec.order.tolist() == [k / 2 for k in range(1, 9)]
    for order, amp in {0.5: 220.0, 1.5: 400.0, 2.0: 150.0}.items():
        assert _amp(spec, order) == pytest.approx(amp, rel=0.01)
    assert _amp(spec, 1.0) == pytest.approx(0.0, abs=1.0)
    assert spec.mean == pytest.approx(400.0, rel=0.01)


def test_mean_cycle_spectrum_needs_torque(tmp_path):
    from torqlog.signal.cycles import CycleOptions, analyse_cycles

    log = _engine_log(tmp_path / "speed_only.csv", torque=False)
    cycles = analyse_cycles(log, CycleOptions(revs_per_cycle=2))
    with pytest.raises(DataError) as err:
        mean_cycle_spectrum(cycles)
    assert str(err.value) == (f"{log}: no torque channel, so no order spectrum of the torque; "
                              f"name the torque column with --torque COL, or leave out --log "
                              f"to assume every order significant")
