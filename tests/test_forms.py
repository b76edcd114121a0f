"""Tests for synth.outputs.forms: PID forms, Tustin with pre-warping, ZOH, sampled loop.

External references named beside each check:
scipy.signal.cont2discrete (methods 'bilinear' and 'zoh'), scipy.signal.freqresp,
scipy.signal.freqz, scipy.signal.dlsim, scipy.signal.lti.output, scipy.signal.lfilter,
numpy.roots, numpy.polyval; Astrom and Hagglund, "PID Controllers: Theory,
Design and Tuning" (ISA, 1995), from memory; Ogata, "Discrete-Time Control
Systems" (2nd ed., 1995), from memory; common practice of the trade.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from scipy.signal import cont2discrete, dlsim, freqresp, freqz, lti

from synth.errors import InputError
from synth.outputs.forms import (
    PidParallel,
    PidStandard,
    difference_equation,
    discrete_implementation,
    factored_text,
    pid_parallel_from_standard,
    pid_parallel_from_tf,
    pid_standard_from_parallel,
    polynomial_text,
    sample_rate_warning,
    sampled_loop_check,
    tf_from_pid_parallel,
    tustin_prewarp,
    zoh_discretise,
)
from synth.problem.expression import parse_rational


def _pad(a, n):
    a = np.trim_zeros(np.atleast_1d(np.asarray(a, dtype=float)).ravel(), "f")
    return np.pad(a, (n - a.size, 0))


def _same_poly(got, ref, rtol=1e-9, atol_rel=1e-12):
    n = max(np.size(got), np.size(np.ravel(ref)))
    g, r = _pad(got, n), _pad(np.ravel(ref), n)
    np.testing.assert_allclose(g, r, rtol=rtol, atol=atol_rel * np.max(np.abs(r)))


def _same_numerator(got, ref, ref_den, rtol=1e-7):
    """Compare a discrete numerator with scipy's, within scipy's own accuracy.

    scipy.signal.cont2discrete reaches the numerator through a state-space
    form and a difference of characteristic polynomials, so its absolute error
    is a few hundred rounding units of the denominator's coefficients; with
    fast sampling the numerator itself is tiny (about T^r for relative degree
    r) and that error dominates. Beyond it we ask for ``rtol``.
    """
    n = max(np.size(got), np.size(np.ravel(ref)))
    g, r = _pad(got, n), _pad(np.ravel(ref), n)
    atol = 1e3 * np.finfo(float).eps * np.max(np.abs(ref_den)) * n
    np.testing.assert_allclose(g, r, rtol=rtol, atol=atol)


# ---- stable random compensators / plants from real roots and complex pairs --

@st.composite
def _stable_poly(draw, min_deg=1, max_deg=4):
    deg = draw(st.integers(min_deg, max_deg))
    roots = []
    while len(roots) < deg:
        if deg - len(roots) >= 2 and draw(st.booleans()):
            re = -draw(st.floats(0.1, 20.0))
            im = draw(st.floats(0.1, 20.0))
            roots += [complex(re, im), complex(re, -im)]
        else:
            roots.append(-draw(st.floats(0.05, 30.0)))
    return np.real(np.poly(roots))


@st.composite
def _proper_tf(draw, max_deg=4, strictly=False):
    den = draw(_stable_poly(1, max_deg))
    nmax = den.size - 1 - (1 if strictly else 0)
    ndeg = draw(st.integers(0, nmax))
    num = np.atleast_1d(draw(_stable_poly(0, ndeg))) if ndeg > 0 else np.array([1.0])
    k = draw(st.floats(0.1, 50.0)) * draw(st.sampled_from([1.0, -1.0]))
    return num * k, den


# ---------------------------------------------------------------------------
# PID forms
# ---------------------------------------------------------------------------

def _pid_value(p: PidParallel, s):
    # The defining formula of the parallel form (Astrom and Hagglund 1995, from memory).
    deriv = p.kd * s / (p.tf * s + 1.0)
    return p.kp + p.ki / s + deriv


@given(st.floats(-50, 50), st.floats(-50, 50), st.floats(-5, 5), st.floats(0.001, 2.0))
@settings(max_examples=80, deadline=None)
def test_pid_tf_matches_defining_formula(kp, ki, kd, tf):
    p = PidParallel(kp, ki, kd, tf)
    num, den = tf_from_pid_parallel(p)
    for s in (0.3 + 0.7j, -2.0 + 5.0j, 11.0j):
        ref = _pid_value(p, s)
        got = np.polyval(num, s) / np.polyval(den, s)
        assert abs(got - ref) <= 1e-9 * (1 + abs(ref))


@given(st.floats(0.01, 50), st.floats(0.01, 50), st.floats(0.01, 5), st.floats(0.001, 2.0))
@settings(max_examples=80, deadline=None)
def test_pid_round_trip_tf(kp, ki, kd, tf):
    p = PidParallel(kp, ki, kd, tf)
    q = pid_parallel_from_tf(*tf_from_pid_parallel(p))
    assert q is not None
    np.testing.assert_allclose([q.kp, q.ki, q.kd, q.tf], [kp, ki, kd, tf], rtol=1e-8, atol=1e-10)


@given(st.floats(0.01, 50), st.floats(0.01, 20), st.one_of(st.just(0.0), st.floats(1e-6, 5)),
       st.floats(2.0, 30.0))
@settings(max_examples=80, deadline=None)
def test_standard_parallel_relations_astrom_hagglund(kc, ti, td, n):
    # Astrom and Hagglund (1995), from memory: Kp = Kc, Ki = Kc/Ti, Kd = Kc Td, Tf = Td/N.
    q = PidStandard(kc, ti, td, n)
    p = pid_parallel_from_standard(q)
    assert p.kp == pytest.approx(kc)
    assert p.ki == pytest.approx(kc / ti)
    assert p.kd == pytest.approx(kc * td)
    assert p.tf == pytest.approx(td / n if td else 0.0)
    back = pid_standard_from_parallel(p)
    assert back.kc == pytest.approx(kc)
    assert back.ti == pytest.approx(ti)
    assert back.td == pytest.approx(td)
    if td:
        assert back.n == pytest.approx(n)
    else:
        assert math.isinf(back.n)


def test_standard_form_value_equals_parallel_value():
    # Kc (1 + 1/(Ti s) + Td s/((Td/N) s + 1)) evaluated directly (Astrom and Hagglund, from memory).
    kc, ti, td, n = 2.0, 4.0, 0.5, 10.0
    p = pid_parallel_from_standard(PidStandard(kc, ti, td, n))
    s = 0.4 + 1.3j
    ref = kc * (1 + 1 / (ti * s) + td * s / ((td / n) * s + 1))
    assert _pid_value(p, s) == pytest.approx(ref, rel=1e-12)


@pytest.mark.parametrize(
    ("num", "den", "kind", "expected"),
    [
        ([4.0], [2.0], "P", (2.0, 0.0, 0.0, 0.0)),
        ([2.0, 6.0], [1.0, 0.0], "PI", (2.0, 6.0, 0.0, 0.0)),        # 2 + 6/s
        ([0.5, 2.0], [1.0], "PD", (2.0, 0.0, 0.5, 0.0)),              # ideal PD
        ([1.0, 3.0, 2.0], [1.0, 0.0], "PID", (3.0, 2.0, 1.0, 0.0)),   # ideal PID
        # lead 10 (s+1)/(s+10) = 1 + 0.9 s/(0.1 s + 1): filtered PD
        ([10.0, 10.0], [1.0, 10.0], "PD", (1.0, 0.0, 0.9, 0.1)),
    ],
)
def test_recognised_special_cases(num, den, kind, expected):
    p = pid_parallel_from_tf(num, den)
    assert p is not None and p.kind == kind
    np.testing.assert_allclose([p.kp, p.ki, p.kd, p.tf], expected, rtol=1e-12, atol=1e-15)
    s = 0.7 + 2.0j
    assert _pid_value(p, s) == pytest.approx(np.polyval(num, s) / np.polyval(den, s), rel=1e-12)


def test_lag_is_pd_form_with_negative_derivative_gain():
    # (s + 1)/(s + 0.1): valid arithmetic, not a textbook PD (common practice).
    p = pid_parallel_from_tf([1.0, 1.0], [1.0, 0.1])
    assert p is not None and p.kd < 0 and not p.conventional
    s = 1j
    assert _pid_value(p, s) == pytest.approx((s + 1) / (s + 0.1), rel=1e-12)


@pytest.mark.parametrize(
    ("num", "den"),
    [
        ([1.0], [1.0, 0.0, 0.0]),             # double integrator
        ([1.0, 2.0], [1.0, 3.0, 2.0]),        # two poles, no integrator
        ([1.0], [1.0, 1.0, 1.0, 1.0]),        # third order
        ([1.0, 1.0], [1.0, -2.0]),            # filter pole in the right half-plane
        ([1.0, 2.0, 3.0], [1.0]),             # double derivative
        ([1.0, 2.0, 3.0], [1.0, 5.0]),        # improper with a filter pole
    ],
)
def test_not_pid_type(num, den):
    assert pid_parallel_from_tf(num, den) is None


def test_pure_integral_has_no_standard_form():
    assert pid_standard_from_parallel(PidParallel(0.0, 3.0, 0.0, 0.0)) is None


def test_standard_json_maps_infinity_to_null():
    q = pid_standard_from_parallel(PidParallel(2.0, 0.0, 0.0, 0.0))
    assert q.to_json() == {"kc": 2.0, "ti": None, "td": 0.0, "n": None}


# ---------------------------------------------------------------------------
# Tustin
# ---------------------------------------------------------------------------

@given(_proper_tf(), st.sampled_from([0.01, 0.05, 0.2]))
@settings(max_examples=60, deadline=None)
def test_tustin_without_prewarp_matches_scipy_bilinear(tf, T):
    # (At T = 1e-3 scipy's state-space route loses ~1e-5 relative accuracy in
    # the numerator, so the fast-sampling case is checked by the fact below.)
    num, den = tf
    assume(np.all(np.abs(np.roots(den)) < 0.5 / T))  # keep away from the s = 2/T singularity
    numd, dend = tustin_prewarp(num, den, T)
    ref_num, ref_den, _ = cont2discrete((num, den), T, method="bilinear")
    _same_poly(dend, ref_den, rtol=1e-7, atol_rel=1e-10)
    _same_numerator(numd, ref_num, ref_den)


@given(_proper_tf(), st.sampled_from([0.01, 0.05, 0.2]), st.floats(0.05, 0.9))
@settings(max_examples=60, deadline=None)
def test_prewarp_exact_at_warp_frequency(tf, T, frac):
    # C(j w) == Cd(exp(j w T)) at w = w_warp: scipy.signal.freqresp vs scipy.signal.freqz.
    num, den = tf
    w = frac * math.pi / T
    numd, dend = tustin_prewarp(num, den, T, w_warp=w)
    _, hc = freqresp((num, den), w=[w])
    _, hd = freqz(numd, dend, worN=[w * T])
    assert abs(hd[0] - hc[0]) <= 1e-7 * (1 + abs(hc[0]))


@given(_proper_tf(), st.sampled_from([0.01, 0.05]), st.floats(0.05, 0.8))
@settings(max_examples=60, deadline=None)
def test_prewarp_equals_bilinear_of_frequency_scaled_system(tf, T, frac):
    # s = c (z-1)/(z+1) = a * (2/T)(z-1)/(z+1) with a = c T/2: plain bilinear
    # (scipy.signal.cont2discrete) applied to C(a s).
    num, den = tf
    w = frac * math.pi / T
    c = w / math.tan(w * T / 2)
    a = c * T / 2
    scale = lambda p: np.asarray(p) * a ** np.arange(len(p) - 1, -1, -1)  # noqa: E731
    assume(np.all(np.abs(np.roots(den)) < 0.5 * c))
    numd, dend = tustin_prewarp(num, den, T, w_warp=w)
    ref_num, ref_den, _ = cont2discrete((scale(num), scale(den)), T, method="bilinear")
    _same_poly(dend, ref_den, rtol=1e-7, atol_rel=1e-10)
    _same_numerator(numd, ref_num, ref_den)


def test_tustin_all_pole_zeros_at_minus_one_fast_sampling():
    # Common practice: Tustin maps the zeros at s = infinity to z = -1, so an
    # all-pole C(s) of order n gets the numerator k (z + 1)^n, and the static
    # gain is kept: Cd(1) = C(0).
    numd, dend = tustin_prewarp([1.0], [1.0, 3.0, 4.0, 2.0], 0.001)
    np.testing.assert_allclose(numd / numd[0], [1.0, 3.0, 3.0, 1.0], rtol=1e-12)
    assert np.polyval(numd, 1.0) / np.polyval(dend, 1.0) == pytest.approx(0.5, rel=1e-6)


def test_tustin_of_integrator_is_trapezoidal_rule():
    # Common practice: Ki/s by Tustin is u[k] = u[k-1] + Ki T/2 (e[k] + e[k-1]).
    ki, T = 3.0, 0.1
    de = difference_equation(*tustin_prewarp([ki], [1.0, 0.0], T))
    np.testing.assert_allclose(de.b, [ki * T / 2, ki * T / 2])
    np.testing.assert_allclose(de.a, [1.0, -1.0])
    assert de.text == "u[k] = 0.15 e[k] + 0.15 e[k-1] + 1 u[k-1]"


def test_tustin_errors():
    with pytest.raises(InputError, match="Nyquist"):
        tustin_prewarp([1.0], [1.0, 1.0], 0.1, w_warp=40.0)
    with pytest.raises(InputError, match="sample time"):
        tustin_prewarp([1.0], [1.0, 1.0], 0.0)
    with pytest.raises(InputError, match="singular"):
        tustin_prewarp([1.0], [1.0, -20.0], 0.1)  # pole at s = 2/T


# ---------------------------------------------------------------------------
# difference equation
# ---------------------------------------------------------------------------

def test_difference_equation_recursion_matches_scipy_lfilter():
    # Run the recursion u[k] = sum b e - sum a u by hand; scipy.signal.lfilter is the reference.
    from scipy.signal import lfilter

    numd, dend = [2.0, -1.2, 0.3], [4.0, -2.0, 0.5]
    de = difference_equation(numd, dend)
    assert de.a[0] == 1.0
    rng = np.random.default_rng(3)
    e = rng.standard_normal(50)
    u = np.zeros_like(e)
    for k in range(e.size):
        acc = sum(de.b[i] * e[k - i] for i in range(len(de.b)) if k - i >= 0)
        acc -= sum(de.a[i] * u[k - i] for i in range(1, len(de.a)) if k - i >= 0)
        u[k] = acc
    np.testing.assert_allclose(u, lfilter(numd, dend, e), rtol=1e-12, atol=1e-12)


def test_difference_equation_pads_delays_and_rejects_noncausal():
    de = difference_equation([1.0], [1.0, -0.5])
    assert de.b == (0.0, 1.0)
    assert de.text == "u[k] = 1 e[k-1] + 0.5 u[k-1]"
    with pytest.raises(InputError, match="causal"):
        difference_equation([1.0, 0.0, 0.0], [1.0, 0.5])


# ---------------------------------------------------------------------------
# zero-order hold
# ---------------------------------------------------------------------------

@given(_proper_tf(max_deg=5), st.sampled_from([0.001, 0.01, 0.1, 0.5]))
@settings(max_examples=60, deadline=None)
def test_zoh_matches_scipy_cont2discrete(tf, T):
    num, den = tf
    numd, dend = zoh_discretise(num, den, T)
    ref_num, ref_den, _ = cont2discrete((num, den), T, method="zoh")
    # (the 50-digit check below pins our own accuracy at fast sampling,
    # where scipy's numerator loses digits)
    _same_poly(dend, ref_den, rtol=1e-7, atol_rel=1e-10)
    _same_numerator(numd, ref_num, ref_den)


@pytest.mark.parametrize(
    ("num", "den"),
    [
        ([1.0], [1.0, 0.0, 0.0]),                  # double integrator
        ([4.0], [1.0, 8.0, 0.0, 0.0]),             # contract's example plant
        ([1.0, -2.0], [1.0, 3.0, 2.0]),            # right-half-plane zero
        ([1.0], [1.0, 0.0, -9.0]),                 # unstable pole pair
        ([2.0, 1.0], [1.0, 4.0]),                  # biproper
        ([1.0], [1.0, 0.2, 100.0]),                # lightly damped
    ],
)
def test_zoh_trade_plants_match_scipy(num, den):
    for T in (0.01, 0.1):
        numd, dend = zoh_discretise(num, den, T)
        ref_num, ref_den, _ = cont2discrete((num, den), T, method="zoh")
        _same_poly(dend, ref_den, rtol=1e-8)
        _same_numerator(numd, ref_num, ref_den)


@pytest.mark.parametrize("T", [1e-4, 1e-3, 0.1, 1.0])
def test_zoh_against_partial_fractions_in_high_precision(T):
    # Independent method: G(z) = (1 - 1/z) Z{G(s)/s} = (z - 1) sum_i r_i / (z - exp(p_i T))
    # over the (distinct) poles p_i of G(s)/s with residues r_i (Franklin, Powell
    # and Workman, Digital Control of Dynamic Systems, from memory), evaluated
    # with 50-digit arithmetic in mpmath.
    mp = pytest.importorskip("mpmath")
    mp.mp.dps = 50
    poles = [mp.mpf(-1), mp.mpc(-1, 1), mp.mpc(-1, -1)]
    num, den = [1.0, 0.5], [1.0, 3.0, 4.0, 2.0]  # (s + 0.5)/((s+1)(s^2+2s+2))
    all_p = [mp.mpf(0)] + poles

    def g_over_s(s):
        return (s + mp.mpf("0.5")) / ((s + 1) * (s * s + 2 * s + 2) * s)

    def residue(p):
        others = [q for q in all_p if q != p]
        val = (p + mp.mpf("0.5"))
        for q in others:
            val /= (p - q)
        return val

    numd, dend = zoh_discretise(num, den, T)
    for z in (mp.mpf("0.5"), mp.mpc("1.2", "0.3"), mp.mpf("-0.7"), mp.mpc("0.99", "0.01")):
        ref = (z - 1) * mp.fsum(residue(p) / (z - mp.exp(p * T)) for p in all_p)
        zc = complex(z)
        got = np.polyval(numd, zc) / np.polyval(dend, zc)
        assert abs(got - complex(ref)) <= 1e-9 * abs(complex(ref))
    assert g_over_s(mp.mpf(1)) != 0  # the reference function is well defined


def test_zoh_double_integrator_closed_form():
    # Common practice (handbook result): 1/s^2 by ZOH is T^2 (z + 1) / (2 (z - 1)^2).
    T = 0.2
    numd, dend = zoh_discretise([1.0], [1.0, 0.0, 0.0], T)
    np.testing.assert_allclose(numd, [T**2 / 2, T**2 / 2], rtol=1e-12)
    np.testing.assert_allclose(dend, [1.0, -2.0, 1.0], rtol=1e-12)


def test_zoh_whole_sample_delay_adds_poles_at_origin():
    # exp(-2 s T) under the hold is z^-2 (common practice).
    num, den, T = [1.0, 2.0], [1.0, 3.0, 5.0], 0.1
    n0, d0 = zoh_discretise(num, den, T)
    n2, d2 = zoh_discretise(num, den, T, dead_time=2 * T)
    np.testing.assert_allclose(n2, n0)
    np.testing.assert_allclose(d2, np.concatenate([d0, [0.0, 0.0]]))


@pytest.mark.parametrize("delay", [0.03, 0.17, 0.25])
def test_zoh_fractional_delay_matches_delayed_continuous_step(delay):
    # A held unit step is an exact step, so the sampled response is the
    # continuous step response delayed: y[k] = y_c(kT - delay) (scipy.signal.lti.output).
    num, den, T, h = [2.0, 1.0], [1.0, 3.0, 2.0], 0.1, 0.01
    t = np.arange(0, 3.0 + h / 2, h)
    _, yc, _ = lti(num, den).output(np.ones_like(t), t)
    numd, dend = zoh_discretise(num, den, T, dead_time=delay)
    k = np.arange(25)
    from scipy.signal import lfilter

    yd = lfilter(np.pad(numd, (dend.size - numd.size, 0)), dend, np.ones(k.size))
    tk = k * T - delay
    ref = np.where(tk < -1e-12, 0.0, np.interp(np.maximum(tk, 0.0), t, yc))
    np.testing.assert_allclose(yd, ref, atol=2e-6)


def test_zoh_errors():
    with pytest.raises(InputError, match="improper"):
        zoh_discretise([1.0, 0.0, 0.0], [1.0, 1.0], 0.1)
    with pytest.raises(InputError, match="dead time"):
        zoh_discretise([1.0], [1.0, 1.0], 0.1, dead_time=-1.0)
    with pytest.raises(InputError, match="non-finite"):
        zoh_discretise([float("nan")], [1.0, 1.0], 0.1)


# ---------------------------------------------------------------------------
# sampled loop
# ---------------------------------------------------------------------------

def _reference_loop(g, c, T, w=None):
    """Closed loop from scipy's ZOH plant and scipy's bilinear compensator."""
    gn, gd, _ = cont2discrete(g, T, method="zoh")
    if w:
        a = (w / math.tan(w * T / 2)) * T / 2
        cn_s = np.asarray(c[0]) * a ** np.arange(len(c[0]) - 1, -1, -1)
        cd_s = np.asarray(c[1]) * a ** np.arange(len(c[1]) - 1, -1, -1)
        cn, cd, _ = cont2discrete((cn_s, cd_s), T, method="bilinear")
    else:
        cn, cd, _ = cont2discrete(c, T, method="bilinear")
    gn, cn = np.ravel(gn), np.ravel(cn)
    char = np.polyadd(np.polymul(cd, gd), np.polymul(cn, gn))
    return np.trim_zeros(np.polymul(cn, gn), "f"), char


@pytest.mark.parametrize("T", [0.01, 0.05, 0.2, 0.5, 1.0])
def test_sampled_loop_stability_matches_numpy_roots(T):
    # Lead-compensated servo; slow sampling eventually destabilises it.
    g = ([1.0], [1.0, 1.0, 0.0])
    c = ([20.0, 20.0], [1.0, 10.0])
    gn, gd = zoh_discretise(*g, T)
    cn, cd = tustin_prewarp(*c, T)
    chk = sampled_loop_check(gn, gd, cn, cd, T)
    _, char = _reference_loop(g, c, T)
    rho = np.max(np.abs(np.roots(char)))
    assert chk.spectral_radius == pytest.approx(rho, rel=1e-7)
    assert chk.stable == (rho < 1)


def test_sampled_proportional_loop_critical_gain_ogata():
    # Ogata, Discrete-Time Control Systems (2nd ed.), from memory: K/(s(s+1)) with
    # a zero-order hold and T = 1 s is stable for 0 < K < 2.3925.
    g_num, g_den = zoh_discretise([1.0], [1.0, 1.0, 0.0], 1.0)
    for k, ok in [(2.35, True), (2.43, False), (1.0, True)]:
        chk = sampled_loop_check(g_num, g_den, [k], [1.0], 1.0)
        assert chk.stable is ok


def test_sampled_overshoot_matches_scipy_dlsim():
    # Overshoot of the sampled loop from scipy.signal.dlsim on the closed loop
    # built from scipy's ZOH plant and pre-warped bilinear compensator.
    T, w = 0.05, 3.0
    g = ([1.0], [1.0, 1.0, 0.0])
    c = ([100.0, 100.0], [1.0, 10.0])  # continuous loop s^2 + 10 s + 100, damping 0.5
    impl = discrete_implementation(*c, *g, T, w_warp=w)
    num, char = _reference_loop(g, c, T, w=w)
    n = 2000
    _, y = dlsim((num, char, T), np.ones(n))
    y = y.ravel()
    final = np.polyval(num, 1.0) / np.polyval(char, 1.0)
    ref = (y.max() - final) / final * 100
    assert impl.loop.stable
    assert ref > 10.0  # the case really overshoots (about 16 % in continuous time)
    assert impl.loop.overshoot_percent == pytest.approx(ref, abs=1e-6)
    assert impl.loop.final_value == pytest.approx(1.0, abs=1e-9)  # type-1 loop


def test_unstable_loop_reports_no_overshoot():
    gn, gd = zoh_discretise([1.0], [1.0, 1.0, 0.0], 1.0)
    chk = sampled_loop_check(gn, gd, [5.0], [1.0], 1.0)
    assert not chk.stable and chk.overshoot_percent is None and chk.spectral_radius > 1


def test_loop_with_marginal_root_is_not_stable():
    # An uncancelled integrator on both sides of a zero loop gain: root at z = 1 exactly.
    chk = sampled_loop_check([0.0], [1.0, -1.0], [1.0], [1.0], 0.1)
    assert not chk.stable


def test_unreduced_characteristic_keeps_cancelled_unstable_mode():
    # Contract loop convention: C cancels the plant's unstable pole z = 1.5; the
    # unreduced characteristic polynomial still has that root.
    chk = sampled_loop_check([1.0], [1.0, -1.5], [1.0, -1.5], [1.0, 0.0], 0.1)
    assert not chk.stable
    assert chk.spectral_radius == pytest.approx(1.5)


def test_sample_rate_warning_thresholds():
    # Common practice: sample at 10 to 30 times the closed-loop bandwidth (Franklin, Powell and
    # Workman, from memory).
    bw = 10.0
    slow = sample_rate_warning(2 * math.pi / (5 * bw), bw)
    mid = sample_rate_warning(2 * math.pi / (25 * bw), bw)
    fast = sample_rate_warning(2 * math.pi / (35 * bw), bw)
    assert slow.startswith("warning:") and "5 times" in slow
    assert mid.startswith("note:")
    assert fast is None
    with pytest.raises(InputError):
        sample_rate_warning(0.01, 0.0)


# ---------------------------------------------------------------------------
# printed forms
# ---------------------------------------------------------------------------

def test_polynomial_text():
    assert polynomial_text([1.0, -2.5, 0.0, -1.0]) == "s^3 - 2.5 s^2 - 1"
    assert polynomial_text([-1.0, 0.0]) == "-s"
    assert polynomial_text([0.0]) == "0"


@given(_proper_tf(max_deg=4))
@settings(max_examples=40, deadline=None)
def test_factored_text_evaluates_like_coefficients(tf):
    # The printed factors describe the same function: numpy.polyval on the
    # original coefficients is the reference.
    num, den = tf
    text = factored_text(num, den, digits=14)
    pn, pd = parse_rational(text)
    s = 0.31 + 0.77j
    ref = np.polyval(num, s) / np.polyval(den, s)
    got = np.polyval(pn, s) / np.polyval(pd, s)
    assert abs(got - ref) <= 1e-8 * (1 + abs(ref))


def test_factored_text_example():
    assert factored_text([2.0, 4.0], [1.0, 2.0, 5.0, 0.0]) == "2 (s + 2) / (s (s^2 + 2 s + 5))"
