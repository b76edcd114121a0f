"""The benchmark's yardstick (tests/benchmarks/peers.py) against outside references.

The MIGO optimum against a brute-force (kp, ki) grid whose Ms comes from
numpy.polyval and whose stability from numpy.roots; the load-step simulator
against scipy.signal.lti.output (no delay) and a scipy.integrate.solve_ivp
method-of-steps solution (exact delay); IE = 1/ki after a load step (common
practice, Astrom and Hagglund); Ms, Mt and the noise gain against
scipy.signal.freqresp on a very dense grid; the Nyquist count against
numpy.roots.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from benchmarks import peers
from scipy import signal
from scipy.integrate import solve_ivp
from scipy.interpolate import pade

from synth.tuning import amigo, half_rule, published_tunings, simc


def _plant(name):
    return next(p for p in peers.BATCH if p.name == name)


# ----------------------------------------------------------------------------
# the batch itself
# ----------------------------------------------------------------------------


def test_batch_plants_are_what_their_names_say():
    # equal lags: binomial coefficients (math.comb); four lags: numpy.poly of the poles
    assert _plant("lags-n8").den == tuple(float(math.comb(8, k)) for k in range(9))
    d = np.asarray(_plant("spread-a0.5").den)
    ref = np.poly([-1.0, -2.0, -4.0, -8.0])
    assert d / d[-1] == pytest.approx(ref / ref[-1], rel=1e-12)
    assert _plant("rhpz-a2").num == (-2.0, 1.0)
    assert _plant("fopdt-T10").dead_time == 1.0 and _plant("int-L1-T0").den == (1.0, 0.0)
    assert len(peers.BATCH) >= 20 and len({p.name for p in peers.BATCH}) == len(peers.BATCH)
    assert set(peers.QUICK) <= {p.name for p in peers.BATCH}


# ----------------------------------------------------------------------------
# MIGO against brute force
# ----------------------------------------------------------------------------


def _closed_loop_stable(p, kp, ki, pade_order=6):
    """All roots of the characteristic polynomial in the open left half-plane (numpy.roots).

    The dead time by its Pade form of order 6 (scipy.interpolate.pade of exp(-x)).
    """
    num, den = np.asarray(p.num), np.asarray(p.den)
    if p.dead_time:
        taylor = [(-p.dead_time) ** k / math.factorial(k) for k in range(2 * pade_order + 1)]
        pn, pd = pade(taylor, pade_order)
        num, den = np.polymul(num, pn.coeffs), np.polymul(den, pd.coeffs)
    char = np.polyadd(np.polymul(den, [1.0, 0.0]), np.polymul(num, [kp, ki]))
    return bool(np.all(np.roots(char).real < 0))


@pytest.mark.parametrize("name", ["fopdt-T1", "lags-n4"])
def test_migo_against_brute_force_grid(name):
    p = _plant(name)
    ms = 1.4
    ref = peers.migo_pi(p, ms)
    w = np.logspace(-3, 1.5, 3000)
    G = (np.polyval(p.num, 1j * w) / np.polyval(p.den, 1j * w)) * np.exp(-1j * w * p.dead_time)
    kps = np.linspace(0.0, 1.5 * ref.kp, 91)[1:]
    kis = np.linspace(0.0, 1.5 * ref.ki, 151)[1:]
    best = 0.0
    for kp in kps:
        C = kp + kis[:, None] / (1j * w[None, :])
        worst = np.max(1.0 / np.abs(1.0 + C * G[None, :]), axis=1)
        for ki in kis[worst <= ms][::-1]:
            if ki <= best:
                break
            if _closed_loop_stable(p, kp, ki):
                best = ki
                break
    dki = kis[1] - kis[0]
    # the grid's best is at most the optimum (up to the frequency grid's resolution)
    # and no further below it than the grid steps allow
    assert best <= ref.ki * (1 + 1e-3)
    assert best >= ref.ki - 2 * dki
    # and the reference design sits on the limit
    assert ref.ms == pytest.approx(ms, rel=1e-3)


# ----------------------------------------------------------------------------
# the load-step simulator
# ----------------------------------------------------------------------------


def test_load_response_without_delay_against_scipy():
    # AMIGO PI on 1/(s+1)^4: Y/D = G/(1 + C G) = N Dc / (D Dc + N Nc), by numpy.polymul,
    # simulated with scipy.signal.lti.output on a fine grid.
    p = _plant("lags-n4")
    t = amigo(half_rule(p.num, p.den, 0.0, order=1), "PI")
    nc, dc = t.transfer_function()
    r = peers.load_responses(p, [(nc, dc)])
    num = np.polymul(p.num, dc)
    den = np.polyadd(np.polymul(p.den, dc), np.polymul(p.num, nc))
    tt = np.linspace(0.0, r.horizon, 80001)
    _, y, _ = signal.lti(num, den).output(np.ones_like(tt), tt)
    assert r.settled[0]
    assert r.iae[0] == pytest.approx(np.trapezoid(np.abs(y), tt), rel=1e-5)
    assert r.peak[0] == pytest.approx(np.max(np.abs(y)), rel=1e-4)


def _method_of_steps(kp, ki, T, L, horizon):
    """e^{-Ls}/(Ts+1) under a PI after a unit load step: solve_ivp interval by interval.

    States: plant x, controller integral z of e = -x, running IAE.  On
    [kL, (k+1)L] the delayed controller output is known from the previous
    interval's dense solution.
    """
    segments = []

    def u_delayed(t):
        if t <= L or not segments:       # u(t - L) = 0 before the step reaches the controller
            return 0.0
        # the interval that holds t - L (the solver may look a hair past an end)
        k = min(max(int((t - L) // L), 0), len(segments) - 1)
        x, z, _ = segments[k](t - L)
        return -kp * x + ki * z          # u = kp e + ki int e, e = -x

    state = [0.0, 0.0, 0.0]
    t0 = 0.0
    while t0 < horizon - 1e-12:
        t1 = min(t0 + L, horizon)

        def f(t, s):
            x, z, _ = s
            return [(-x + 1.0 + u_delayed(t)) / T, -x, abs(x)]

        sol = solve_ivp(f, (t0, t1), state, rtol=1e-11, atol=1e-13, dense_output=True,
                        method="DOP853")
        segments.append(sol.sol)
        state = list(sol.y[:, -1])
        t0 = t1
    return state


def test_load_response_with_delay_against_method_of_steps():
    # SIMC PI on e^{-s}/(s+1), exact delay, against scipy.integrate.solve_ivp
    p = _plant("fopdt-T1")
    t = simc(half_rule(p.num, p.den, p.dead_time, order=1), "PI")
    r = peers.load_responses(p, [t.transfer_function()], horizon=40.0)
    x, z, iae = _method_of_steps(t.kp, t.ki, 1.0, 1.0, r.horizon)
    assert r.iae[0] == pytest.approx(iae, rel=2e-5)
    assert r.ie[0] == pytest.approx(-z, rel=2e-5)


@pytest.mark.parametrize("name", ["fopdt-T0.3", "int-L1-T1", "rhpz-a1", "osc-z0.3-L0.2"])
def test_integrated_error_is_one_over_ki(name):
    # After a unit load step, a stable PI loop has IE = int y dt = 1/ki (common practice;
    # Astrom and Hagglund, Advanced PID Control, 2006, section 4.4).  Fixed horizon, so the
    # simulator's stopping test plays no part.
    p = _plant(name)
    rs = published_tunings(p.num, p.den, p.dead_time, structures=("PI",))
    t = next(x for x in rs.tunings if x.rule == "AMIGO")
    nc, dc = t.transfer_function()
    assert peers.nyquist_unstable(p, nc, dc) == 0
    r = peers.load_responses(p, [(nc, dc)], horizon=400.0 * max(t.ti, 1.0))
    assert r.ie[0] == pytest.approx(1.0 / t.ki, rel=1e-6)
    assert r.iae[0] >= r.ie[0] * (1 - 1e-12)


# ----------------------------------------------------------------------------
# frequency-domain figures
# ----------------------------------------------------------------------------


def test_loop_figures_against_dense_freqresp():
    # AMIGO PID (filtered) on e^{-s}/(s+1)^2: Ms, Mt and max |C/(1+L)| against
    # scipy.signal.freqresp on 400 000 points (up to where |C| is at its high-frequency limit).
    p = _plant("sopdt-T1")
    rs = published_tunings(p.num, p.den, p.dead_time, structures=("PID",))
    t = next(x for x in rs.tunings if x.rule == "AMIGO")
    nc, dc = t.transfer_function()
    f = peers.loop_figures(p, nc, dc)
    w = np.logspace(-3, 5, 400001)
    _, G = signal.freqresp((p.num, p.den), w)
    _, C = signal.freqresp((nc, dc), w)
    L = G * np.exp(-1j * w * p.dead_time) * C
    assert f.stable
    assert f.ms == pytest.approx(np.max(np.abs(1 / (1 + L))), rel=1e-6)
    assert f.mt == pytest.approx(np.max(np.abs(L / (1 + L))), rel=1e-6)
    assert f.noise_gain == pytest.approx(np.max(np.abs(C / (1 + L))), rel=1e-6)


@pytest.mark.parametrize("kp, ki", [(1.0, 0.3), (3.0, 0.3), (8.0, 4.0), (12.0, 0.5)])
def test_nyquist_count_against_numpy_roots(kp, ki):
    # 1/(s+1)^3 under a PI: closed-loop poles in the right half-plane by numpy.roots
    p = _plant("lags-n3")
    char = np.polyadd(np.polymul(p.den, [1.0, 0.0]), np.polymul(p.num, [kp, ki]))
    expected = int(np.sum(np.roots(char).real > 0))
    assert peers.nyquist_unstable(p, [kp, ki], [1.0, 0.0]) == expected
