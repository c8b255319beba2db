"""Rainflow counting against ASTM E1049 and an independent implementation; life."""

from __future__ import annotations

import json
from collections import Counter

import numpy as np
import pytest
from click.testing import CliRunner

from torqlog.cli import cli
from torqlog.errors import UsageError
from torqlog.shaft.life import count_torque, damage_equivalent_range, periodic_damage_sum
from torqlog.shaft.rainflow import RainflowCounter, rainflow

ASTM = np.array([-2, 1, -3, 5, -1, 3, -4, 4, -2], float)


def test_astm_e1049_example_exactly():
    # ASTM E1049-85, Fig. 6 and Table 4 (rainflow counting): range 3: 0.5, 4: 1.5,
    # 6: 0.5, 8: 1.0, 9: 0.5 (ranges 1, 2, 5, 7, 10: none)
    r, _, n = rainflow(ASTM)
    table = Counter()
    for rng, c in zip(r, n, strict=True):
        table[float(rng)] += c
    assert dict(table) == {3.0: 0.5, 4.0: 1.5, 6.0: 0.5, 8.0: 1.0, 9.0: 0.5}


def test_against_rainflow_package_and_streaming():
    # the independent implementation of the `rainflow` package (PyPI), test-only
    import rainflow as rf

    rng = np.random.default_rng(7)
    x = np.cumsum(rng.normal(size=20000)) + 5 * rng.normal(size=20000)
    ref = Counter()
    for r, _, c, _, _ in rf.extract_cycles(x):
        ref[round(r, 9)] += c
    ours = Counter()
    r, _, n = rainflow(x)
    for a, c in zip(r, n, strict=True):
        ours[round(float(a), 9)] += c
    assert ours == ref
    # streamed in uneven chunks, the damage sum and cycle count are those of the whole
    m = 4.0
    whole = float((n * r**m).sum())
    counter = RainflowCounter((m,))
    for piece in np.array_split(x, [7, 500, 501, 9000, 15000]):
        counter.add(piece)
    counter.finish()
    assert counter.damage_sums[0] == pytest.approx(whole, rel=1e-12)
    assert counter.cycles == pytest.approx(float(n.sum()))
    assert sum(counter.histogram()["range_counts"]) == pytest.approx(float(n.sum()))


def test_damage_equivalent_and_periodic():
    # DEL = (sum n dT^m / N_eq)^(1/m), half cycles 0.5: ASTM ranges with m = 3, N_eq = 4
    res = count_torque([ASTM[:4], ASTM[4:]], sn_slope=3.0, equivalent_cycles=4.0)
    s = 0.5 * 27 + 1.5 * 64 + 0.5 * 216 + 1.0 * 512 + 0.5 * 729
    assert res.damage_sum == pytest.approx(s)
    d = res.to_dict()
    assert d["damage_equivalent_torque_Nm"] == pytest.approx((s / 4.0) ** (1 / 3))
    assert (d["sn_slope"], d["equivalent_cycles"]) == (3.0, 4.0)
    # a sinusoid repeated: one cycle of range 2A per period
    phi = np.arange(360) * 2 * np.pi / 360
    assert periodic_damage_sum(100 + 50 * np.sin(phi + np.pi / 3), 5.0) == pytest.approx(100.0**5)
    assert damage_equivalent_range(100.0**5, 5.0, 1.0) == pytest.approx(100.0)
    with pytest.raises(UsageError, match=r"^sn_slope \(S-N slope m\) must be positive, "
                                         r"got -1$"):
        count_torque([ASTM], sn_slope=-1.0)


def test_life_command(tmp_path):
    res = CliRunner().invoke(cli, ["life", "sample_data/press_comma.csv", "--profile",
                                   "sample_data/press.toml", "--add-inertia", "150",
                                   "--format", "json"])
    assert res.exit_code == 0, res.output
    d = json.loads(res.stdout)
    assert {"damage_equivalent_torque_Nm", "sn_slope", "equivalent_cycles",
            "life_ratio_after_before"} <= set(d)
    assert d["sn_slope"] == 5.0 and d["equivalent_cycles"] == 1e7
    # more inertia smooths the drive torque: life after/before above 1
    assert d["life_ratio_after_before"] > 1.0
    bad = CliRunner().invoke(cli, ["life", "sample_data/press_comma.csv", "--sn-slope", "0"])
    assert bad.exit_code == 2
    assert bad.stderr == "Error: sn_slope (S-N slope m) must be positive, got 0\n"
