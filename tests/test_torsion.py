"""Torsional natural frequencies against closed-form results and scipy as an independent
solver; sources are named beside each check."""

import math

import numpy as np
import pytest
import scipy.linalg

from torqlog.errors import UsageError
from torqlog.shaft.lateral import ShaftSegment
from torqlog.shaft.torsion import (
    ASSUMED_MAX_ORDER,
    TorsionalChain,
    significant_orders,
    torsional_check,
    torsional_modes,
    torsional_stiffness,
)
from torqlog.signal.spectrum import order_spectrum


def _hz(omega2):
    return math.sqrt(omega2) / (2 * math.pi)


def test_torsional_stiffness_hollow():
    # Gere & Timoshenko, torsion of circular bars: k = G J / L, J = pi (d^4 - di^4) / 32
    seg = ShaftSegment(0.8, 0.1, 0.05)
    assert torsional_stiffness(seg, 80e9) == pytest.approx(
        80e9 * math.pi * (0.1**4 - 0.05**4) / 32 / 0.8, rel=1e-12)


def test_two_inertia_chain():
    # Den Hartog, Mechanical Vibrations (two discs on a shaft), from memory:
    # f = (1/2 pi) sqrt(k (J1 + J2) / (J1 J2)); the other mode is the rigid body at 0 Hz.
    j1, j2, k = 0.35, 310.0, 2.1e6
    modes = torsional_modes(TorsionalChain(("motor", "flywheel"), (j1, j2), (k,)))
    assert modes.freqs[0] == 0.0
    assert modes.rigid_body.tolist() == [True, False]
    assert modes.freqs[1] == pytest.approx(_hz(k * (j1 + j2) / (j1 * j2)), rel=1e-3)
    # nodal ratio of the elastic mode: J1 theta1 = -J2 theta2
    s = modes.shapes[1]
    assert j1 * s[0] == pytest.approx(-j2 * s[1], rel=1e-9)


def test_three_inertia_chain_against_scipy_eigvals():
    # Independent solver: eigenvalues of the dynamic matrix J^-1 K (scipy.linalg.eigvals).
    j = np.array([0.35, 310.0, 40.0])
    k = np.array([2.1e6, 8.5e6])
    K = np.array([[k[0], -k[0], 0.0], [-k[0], k[0] + k[1], -k[1]], [0.0, -k[1], k[1]]])
    w2 = np.sort(scipy.linalg.eigvals(np.diag(1 / j) @ K).real)
    expected = np.sqrt(np.clip(w2, 0, None)) / (2 * np.pi)
    modes = torsional_modes(TorsionalChain(("motor", "flywheel", "crank"), j, k))
    assert modes.freqs[0] == 0.0
    np.testing.assert_allclose(modes.freqs[1:], expected[1:], rtol=1e-9)
    assert modes.shapes.shape == (3, 3)


def test_torsional_check_flags_mode_near_significant_order():
    j1, j2, k = 2.0, 2.0, 1.0e5
    chain = TorsionalChain(("a", "b"), (j1, j2), (k,))
    f = _hz(k * (j1 + j2) / (j1 * j2))  # Den Hartog two-disc formula
    speed = 2 * math.pi * f / 4.0 * 1.05  # order 4 lies 5 % above the mode
    res = torsional_check(chain, {4.0: 0.3, 2.0: 0.01}, speed, band=0.10, min_share=0.05)
    d = res.to_dict()
    assert d["verdict"] == "fail"
    assert len(d["near_orders"]) == 1
    hit = d["near_orders"][0]
    assert hit["order"] == 4.0 and hit["share"] == 0.3
    assert hit["detune"] == pytest.approx(1 / 1.05 - 1, rel=1e-9)
    # the same order with a share below min_share is not significant
    assert torsional_check(chain, {4.0: 0.01}, speed).verdict == "pass"
    assert torsional_check(chain, [4.0], speed, band=0.04).verdict == "pass"
    assert torsional_check(chain).verdict == "not checked"  # no speed: modes only


# ----------------------------------------------------------------- orders to check
def test_significant_orders_from_a_spectrum():
    # Synthetic torque with orders 1, 3 and a weak 7: the single-sided DFT amplitudes equal
    # the written amplitudes (Brigham, The Fast Fourier Transform and its Applications,
    # 1988), so the shares are amplitude / root-sum-square of 300, 200 and 10.
    theta = np.arange(360) * 2 * np.pi / 360
    torque = 1000 + 300 * np.cos(theta) + 200 * np.cos(3 * theta + 0.4) + 10 * np.cos(7 * theta)
    order, share, source = significant_orders(order_spectrum(torque), min_share=0.05)
    rss = math.sqrt(300**2 + 200**2 + 10**2)
    assert order.tolist() == [1.0, 3.0]
    np.testing.assert_allclose(share, [300 / rss, 200 / rss], rtol=1e-9)
    assert source == "spectrum"


def test_significant_orders_assumed_and_given():
    # Without a spectrum every order k / revs_per_cycle up to ASSUMED_MAX_ORDER counts: a
    # four-stroke cycle of 2 revolutions has half orders (Ker Wilson, Practical Solution
    # of Torsional Vibration Problems, vol. 2, from memory).
    order, share, source = significant_orders(None, revs_per_cycle=2)
    assert ASSUMED_MAX_ORDER == 10.0
    np.testing.assert_array_equal(order, np.arange(1, 21) / 2)
    assert np.isnan(share).all()
    assert source == "assumed: every order up to 10 in steps of 0.5"
    order, share, source = significant_orders({2.0: 0.4, 5.0: 0.01}, min_share=0.05)
    assert order.tolist() == [2.0] and share.tolist() == [0.4]
    assert source == "given with shares"
    with pytest.raises(UsageError, match=r"^orders must be positive multiples of the shaft "
                                         r"speed$"):
        significant_orders([1.0, 0.0])
