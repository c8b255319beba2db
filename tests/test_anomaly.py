"""Tests of the cycle-shape model: control limits against their published formulas
(computed independently with scipy.stats), false-alarm rate, angle window, run patterns,
detection of simulated faults, refusals."""

from __future__ import annotations

import json

import numpy as np
import pytest
from scipy import stats

from torqlog.demo.simulate import Fault, simulate, truth_cycles, write_log
from torqlog.errors import DataError
from torqlog.signal import anomaly as an
from torqlog.signal.cycles import CycleOptions, analyse_cycles, shape_model_from_log

NB = 36
ANG = np.linspace(0.0, 2.0 * np.pi, NB, endpoint=False)


def _gauss_cycles(rng: np.random.Generator, n: int) -> np.ndarray:
    """Invented Gaussian cycles: a fixed shape, two latent factors and white noise."""
    base = 1000.0 * np.sin(ANG) ** 2
    return (base + rng.normal(0, 30, (n, 1)) * np.cos(ANG) + rng.normal(0, 20, (n, 1))
            + rng.normal(0, 5, (n, NB)))


# ----------------------------------------------------------------------------- limits
@pytest.mark.parametrize(("k", "n", "alpha"), [(2, 100, 0.01), (5, 300, 0.0025), (8, 60, 0.05)])
def test_t2_limit_matches_formula_via_beta(k: int, n: int, alpha: float) -> None:
    # Tracy, Young & Mason (1992) eq. 6: k(n+1)(n-1)/(n(n-k)) F(1-α; k, n-k). The F
    # quantile is computed here independently from the beta distribution:
    # d1·X/(d1·X + d2) ~ Beta(d1/2, d2/2) for X ~ F(d1, d2).
    b = stats.beta.ppf(1 - alpha, k / 2, (n - k) / 2)
    f = (n - k) * b / (k * (1 - b))
    expected = k * (n + 1) * (n - 1) / (n * (n - k)) * f
    assert an.t2_limit(k, n, alpha) == pytest.approx(expected, rel=1e-9)


def test_q_limit_equal_eigenvalues_is_chi_square() -> None:
    # Jackson & Mudholkar (1979): with m equal unit eigenvalues Q ~ chi-square(m);
    # their approximation is within 0.5 % of scipy's chi-square quantile.
    for m, alpha in [(10, 0.05), (30, 0.01), (60, 0.0025)]:
        assert an.q_limit(np.ones(m), alpha) == pytest.approx(stats.chi2.ppf(1 - alpha, m),
                                                              rel=5e-3)


def test_q_limit_unequal_eigenvalues_against_monte_carlo() -> None:
    # Q = Σ λ_i z_i², z_i ~ N(0, 1): its 99 % quantile from 400 000 seeded draws
    # against the Jackson & Mudholkar (1979) limit, an approximation that is a little
    # conservative for spread eigenvalues (within 3 %, never below).
    lam = np.geomspace(3.0, 0.1, 20)
    z = stats.norm.rvs(size=(400_000, lam.size), random_state=5)
    q = (z * z) @ lam
    mc = np.quantile(q, 0.99)
    assert mc <= an.q_limit(lam, 0.01) <= 1.03 * mc
    # and the formula itself, eq. 3.4: (Q/θ1)^h0 is normal with mean
    # 1 + θ2 h0 (h0 − 1)/θ1² and SD √(2 θ2 h0²)/θ1 (scipy.stats.norm quantile)
    t1, t2, t3 = (np.sum(lam**i) for i in (1, 2, 3))
    h0 = 1 - 2 * t1 * t3 / (3 * t2**2)
    ql = stats.norm.ppf(0.99, 1 + t2 * h0 * (h0 - 1) / t1**2, np.sqrt(2 * t2 * h0**2) / t1)
    assert an.q_limit(lam, 0.01) == pytest.approx(t1 * ql ** (1 / h0), rel=1e-12)


def test_sidak_split_gives_overall_rate() -> None:
    # Šidák (1967): two independent tests at α each alarm at 1 − (1 − α)².
    a = an.sidak_alpha(0.01)
    assert 1 - (1 - a) ** 2 == pytest.approx(0.01, rel=1e-12)


def test_false_alarm_rate_on_gaussian_cycles_within_binomial_interval() -> None:
    # With a large reference the model's rate on new Gaussian cycles is the nominal one;
    # the count of alarms in 20 000 cycles lies in the binomial 99.9 % interval
    # (scipy.stats.binom) — Q's limit may be a little conservative, never liberal.
    rng = np.random.default_rng(11)
    fa = 0.01
    m = an.fit_model({"torque": _gauss_cycles(rng, 3000)}, false_alarm=fa, trim=False)
    t2, q, _ = m.score(_gauss_cycles(rng, 20_000))
    alarms = int(((t2 > m.t2_limit) | (q > m.q_limit)).sum())
    lo, hi = stats.binom.interval(0.999, 20_000, fa)
    assert lo <= alarms <= hi, (alarms, lo, hi)
    per_test = stats.binom.interval(0.999, 20_000, an.sidak_alpha(fa))
    assert per_test[0] <= int((t2 > m.t2_limit).sum()) <= per_test[1]


# ----------------------------------------------------------------------------- where / runs
def test_describe_cycle_finds_the_deficit_window() -> None:
    rng = np.random.default_rng(3)
    m = an.fit_model({"torque": _gauss_cycles(rng, 400)}, trim=False)
    x = _gauss_cycles(rng, 1)[0]
    deg = np.degrees(ANG) + 5.0  # bin centres
    x[(deg > 70) & (deg < 125)] -= 150.0  # 15 % of the 1000 N·m peak
    t2, q, e = m.score(x[None, :])
    assert max(t2[0] / m.t2_limit, q[0] / m.q_limit) > 1
    w = an.describe_cycle(m, x, float(t2[0]), float(q[0]), e[0])
    assert w["channel"] == "torque" and w["direction"] == "low"
    assert 60 <= w["window_deg"][0] <= 80 and 120 <= w["window_deg"][1] <= 140
    assert 10 < w["deviation_pct"] < 20
    assert "low between" in w["text"]


def test_flag_runs_patterns() -> None:
    cyc = np.arange(1, 201)
    every7 = cyc % 7 == 0
    r = an.flag_runs(every7, cyc)
    assert (r["pattern"], r["every"]) == ("recurring", 7)
    assert r["text"] == "recurring every 7th cycle"
    sus = cyc >= 120
    r = an.flag_runs(sus, cyc, cyc * 0.5)
    assert (r["pattern"], r["from_cycle"], r["from_t_s"]) == ("sustained", 120, 60.0)
    iso = np.isin(cyc, [5, 77, 150])
    assert an.flag_runs(iso, cyc)["pattern"] == "isolated"
    assert an.flag_runs(np.zeros(200, bool), cyc)["text"] == "no abnormal cycles"


def test_model_save_load_round_trip(tmp_path) -> None:
    rng = np.random.default_rng(4)
    m = an.fit_model({"torque": _gauss_cycles(rng, 200)})
    p = m.save(tmp_path / "m.json")
    back = an.load_model(p)
    x = _gauss_cycles(rng, 5)
    np.testing.assert_allclose(back.score(x)[0], m.score(x)[0], rtol=1e-12)
    assert back.t2_limit == m.t2_limit and back.channels == ("torque",)
    (tmp_path / "bad.json").write_text(json.dumps({"a": 1}))
    with pytest.raises(DataError, match="not a shape-model file"):
        an.load_model(tmp_path / "bad.json")


def test_too_few_cycles_refused_with_count() -> None:
    rng = np.random.default_rng(5)
    with pytest.raises(DataError, match=r"^25 clean cycles .* at least 40"):
        an.fit_model({"torque": _gauss_cycles(rng, 25)})


# ----------------------------------------------------------------------------- simulated faults
@pytest.fixture(scope="module")
def logs(tmp_path_factory):
    d = tmp_path_factory.mktemp("shape")
    out = {}
    for key, machine, dur, fault in [
            ("healthy_c", "compressor", 40.0, None),
            ("leak", "compressor", 30.0, Fault("valve-leak", rate=0.1, seed=2)),
            ("healthy_p", "press", 120.0, None),
            ("slip", "press", 80.0, Fault("clutch-slip")),
            ("tooth", "press", 80.0, Fault("gear-tooth")),
            ("healthy_e", "engine", 8.0, None),
            ("misfire", "engine", 8.0, Fault("misfire"))]:
        # the engine (1500 rpm) at 3 kHz: 2.7° per sample, enough for 10° model bins
        rate = 3000.0 if machine == "engine" else 1000.0
        log = simulate(machine, duration=dur, rate=rate, seed=sum(map(ord, key)), fault=fault)
        p = write_log(log, d / f"{key}.csv")
        out[key] = (p, log)
    return out


@pytest.mark.parametrize(("key", "ref", "revs"), [("leak", "healthy_c", 1),
                                                  ("slip", "healthy_p", 1),
                                                  ("tooth", "healthy_p", 1),
                                                  ("misfire", "healthy_e", 2)])
def test_simulated_faults_detected(logs, key: str, ref: str, revs: int) -> None:
    # Fault injection with known truth (invented scenarios): ≥ 95 % of the faulty cycles
    # flagged at the default severity, few false alarms (the full campaign with ≥ 2000
    # healthy cycles is benchmarks/anomaly_detection.py).
    o = CycleOptions(revs_per_cycle=revs)
    model = shape_model_from_log(logs[ref][0], o)
    res = analyse_cycles(logs[key][0], o, shape_model=model)
    c = res.columns
    truth, touched = truth_cycles(logs[key][1].options["fault"]["events"], c["t_start_s"],
                                  c["duration_s"])
    scored = np.isfinite(c["anomaly_score"])
    assert truth[scored].sum() >= 8
    assert c["anomaly"][truth & scored].mean() >= 0.95
    # short seeded logs: at most 1 false alarm in 20 healthy cycles
    assert c["anomaly"][~touched & scored].mean() <= 0.05
    assert res.summary["anomaly"]["abnormal"] == int(c["anomaly"].sum())


def test_self_learned_model_finds_valve_leak_window(logs) -> None:
    res = analyse_cycles(logs["leak"][0], shape_model=None)
    a = res.anomaly
    assert a.flagged >= 20
    w = a.worst[0]["where"]
    assert w["channel"] == "torque" and w["direction"] == "low"
    assert "abnormal cycles of" in a.sentence and "low between" in a.sentence
    d = res.to_dict()
    assert {"anomaly", "anomaly_score"} <= set(d["cycles"][0])
    assert d["anomaly"]["flagged"] == a.flagged


def test_reference_of_another_machine_refused(logs) -> None:
    model = shape_model_from_log(logs["healthy_p"][0])
    with pytest.raises(DataError, match=r"reference cycles last .* s, this log's .* another"):
        analyse_cycles(logs["leak"][0], shape_model=model)
    eng = shape_model_from_log(logs["healthy_e"][0], CycleOptions(revs_per_cycle=2))
    with pytest.raises(DataError, match="2 rev per cycle .* has 1"):
        analyse_cycles(logs["leak"][0], shape_model=eng)


def test_short_log_gets_a_note_not_scores(tmp_path) -> None:
    p = write_log(simulate("press", duration=20.0, rate=500.0, seed=2), tmp_path / "s.csv")
    res = analyse_cycles(p)
    assert np.isnan(res.columns["anomaly_score"]).all()
    assert any("cycle shape not checked" in n and "at least 40" in n for n in res.notes)
    with pytest.raises(DataError, match=r"cannot serve as shape reference: \d+ clean cycles"):
        shape_model_from_log(p)


def test_abnormal_effect_on_design_energy_swing() -> None:
    # p95 with and without the abnormal cycles (numpy's linear-interpolation quantile)
    de = np.arange(1.0, 101.0)
    score = np.where(de > 95, 2.0, 0.5)
    eff = an.abnormal_effect({"flag": np.array([""] * 100), "energy_swing_J": de,
                              "anomaly_score": score}, 0.95)
    assert eff["abnormal"] == 5
    assert eff["design_energy_swing_J"] == pytest.approx(95.05)
    assert eff["design_energy_swing_without_J"] == pytest.approx(np.quantile(de[:95], 0.95))
    assert eff["change"] < 0
    assert an.abnormal_effect({"flag": np.array([""]), "energy_swing_J": np.ones(1),
                               "anomaly_score": np.full(1, np.nan)}) is None


def test_trend_rows_carry_the_anomaly_rate_and_chart_it() -> None:
    # abnormal / scored cycles per shift; a shift with a rise is flagged by the
    # individuals chart like any other figure (limits from the baseline shifts)
    import pandas as pd

    from torqlog.fleet.shifts import ShiftCalendar
    from torqlog.fleet.trend import DriftOptions, detect_drift, group_cycles

    rng = np.random.default_rng(8)
    n_shift, per = 12, 200
    start = pd.Timestamp("2026-03-02T06:00:00Z") + pd.to_timedelta(
        np.repeat(np.arange(n_shift) * 8.0, per) + np.tile(np.arange(per) * 0.02, n_shift),
        unit="h")
    rate = np.where(np.arange(n_shift) < 11, 0.01, 0.2)
    score = np.where(rng.random(n_shift * per) < np.repeat(rate, per), 3.0, 0.5)
    score[:5] = np.nan  # not scored (learning)
    cycles = pd.DataFrame({
        "machine": "C2", "file": "f", "start_time": start, "cycle": np.arange(start.size) + 1,
        "flag": "", "duration_s": 0.1, "energy_swing_J": 700.0, "cs": 0.04,
        "torque_peak_Nm": 560.0, "work_J": 1000.0, "anomaly_score": score})
    _, g = group_cycles(cycles, ShiftCalendar())
    first = int((score[:per] > 1).sum())
    assert g["anomaly_rate"].iloc[0] == pytest.approx(first / (per - 5))
    flags, *_ = detect_drift(g, DriftOptions(figures=("anomaly_rate",)))
    assert flags[11] and all(f.startswith("anomaly_rate:") for f in flags[11])


def test_cli_simulate_fault_and_cycles_shape_options(logs, tmp_path) -> None:
    from click.testing import CliRunner

    from torqlog.cli import cli

    r = CliRunner()
    out = tmp_path / "leak.csv"
    res = r.invoke(cli, ["simulate", "compressor", "-o", str(out), "--duration", "5",
                         "--fault", "valve-leak", "--fault-every", "4"])
    assert res.exit_code == 0, res.output
    truth = json.loads((tmp_path / "leak.csv.truth.json").read_text())
    assert truth["fault"]["name"] == "valve-leak" and truth["fault"]["pick"] == "every"
    assert len(truth["fault"]["events"]) >= 10
    model = tmp_path / "m.json"
    res = r.invoke(cli, ["cycles", str(logs["healthy_c"][0]), "--save-shape-model", str(model),
                         "--format", "json"])
    assert res.exit_code == 0, res.output
    res = r.invoke(cli, ["cycles", str(out), "--shape-model", str(model), "--format", "json"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    assert d["summary"]["anomaly"]["abnormal"] >= 10
    res = r.invoke(cli, ["cycles", str(logs["healthy_p"][0]), "--shape-model", str(model)])
    assert res.exit_code == 1
    assert "reference cycles last" in res.output
    res = r.invoke(cli, ["simulate", "press", "-o", str(tmp_path / "x.csv"), "--fault", "dent"])
    assert res.exit_code == 2 and "unknown fault 'dent'; valid faults:" in res.output
