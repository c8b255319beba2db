"""Torsional forced response against Rao's closed form and scipy's solve_ivp."""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.integrate

from torqlog.errors import UsageError
from torqlog.shaft.torsion import TorsionalChain
from torqlog.shaft.torsional_response import (
    chain_matrices,
    complex_orders,
    forced_response,
    modal_damping_matrix,
)


def test_two_inertia_closed_form():
    # Rao, Mechanical Vibrations, 5th ed., sec. 3.4: steady state of a damped single
    # degree of freedom, X = F0 / (k - m W^2 + i c W), applied to the relative twist of two
    # discs (reduced inertia mu = J1 J2 / (J1 + J2), torque T0 on disc 1 gives the
    # relative coordinate the force T0 J2 / (J1 + J2)); modal damping zeta equals a
    # damper c = 2 zeta sqrt(k mu) between the discs.
    j1, j2, k, zeta = 3.0, 12.0, 4.0e5, 0.03
    chain = TorsionalChain(("drive", "crank"), (j1, j2), (k,))
    mu = j1 * j2 / (j1 + j2)
    wn = math.sqrt(k / mu)
    c = 2 * zeta * math.sqrt(k * mu)
    t0 = 1500.0
    for ratio in (0.3, 0.97, 1.0, 1.6):
        W = ratio * wn
        twist = (t0 * j2 / (j1 + j2)) / (k - mu * W**2 + 1j * c * W)
        res = forced_response(chain, np.array([1.0]), np.array([t0 + 0j]), 0.0, W,
                              excitation_at="drive", damping_ratio=zeta)
        assert abs(res.dynamic[0, 0]) == pytest.approx(abs(k * twist), rel=1e-9)
        # quasi-static: the crank's share of the torque, T0 J2 / (J1 + J2)
        assert abs(res.quasi_static[0, 0]) == pytest.approx(t0 * j2 / (j1 + j2), rel=1e-12)
    # at resonance the amplification is 1 / (2 zeta) (Rao eq. 3.33 at r = 1)
    res = forced_response(chain, np.array([1.0]), np.array([t0 + 0j]), 0.0, wn,
                          excitation_at="drive", damping_ratio=zeta)
    assert res.amplification[0, 0] == pytest.approx(1 / (2 * zeta), rel=1e-9)


def test_three_inertia_against_solve_ivp():
    # the same chain integrated in time with scipy (solve_ivp, independent of the modal
    # sum), two orders with phases; steady state after the transient has decayed
    chain = TorsionalChain(("motor", "flywheel", "crank"), (1.0, 2.0, 1.5), (5.0e3, 8.0e3))
    zeta, speed = 0.05, 40.0
    order = np.array([1.0, 2.0])
    amp = np.array([200.0 + 0j, 120.0 * np.exp(0.7j)])
    res = forced_response(chain, order, amp, 0.0, speed, damping_ratio=zeta, n_angle=2000)
    J, K = chain_matrices(chain)
    C = modal_damping_matrix(chain, zeta)
    jinv = np.linalg.inv(J)

    def rhs(t, y):
        th, om = y[:3], y[3:]
        f = np.zeros(3)
        f[2] = (amp * np.exp(1j * order * speed * t)).real.sum()
        return np.concatenate([om, jinv @ (f - C @ om - K @ th)])

    period = 2 * math.pi / speed
    t_end = 40 * period
    t = np.linspace(t_end - period, t_end, 2001)[:-1]
    sol = scipy.integrate.solve_ivp(rhs, (0.0, t_end), np.zeros(6), t_eval=t, rtol=1e-9,
                                    atol=1e-12, method="DOP853")
    th = sol.y[:3]
    k = np.array(chain.stiffnesses)
    sec = k[:, None] * (th[:-1] - th[1:])
    sec = sec - sec.mean(axis=1, keepdims=True)
    np.testing.assert_allclose(np.abs(sec).max(axis=1), res.dynamic_peak, rtol=1e-3)


def test_complex_orders_round_trip_and_peak_torque():
    phi = np.arange(360) * 2 * np.pi / 360
    torque = 900.0 + 400.0 * np.cos(phi + 0.3) + 100.0 * np.sin(3 * phi)
    o, a, m = complex_orders(torque)
    assert m == pytest.approx(900.0)
    assert abs(a[0]) == pytest.approx(400.0) and np.angle(a[0]) == pytest.approx(0.3)
    assert abs(a[2]) == pytest.approx(100.0)
    # a stiff chain transmits the quasi-static torque: with a huge drive inertia and a
    # light crank, the section carries the whole torque (share J1 / (J1 + J2) -> 1)
    chain = TorsionalChain(("motor", "crank"), (1e6, 1e-3), (1e9,))
    res = forced_response(chain, o, a, m, 10.0)
    assert res.torque_max[0] == pytest.approx(torque.max(), rel=1e-4)
    assert res.mean[0] == pytest.approx(900.0)
    with pytest.raises(UsageError, match=r"^damping ratio must be at least 0 and below 1, "
                                         r"got 1.2$"):
        forced_response(chain, o, a, m, 10.0, damping_ratio=1.2)
    with pytest.raises(UsageError, match=r"^no element 'ram' in the torsional chain; valid: "
                                         r"motor, crank$"):
        forced_response(chain, o, a, m, 10.0, excitation_at="ram")
