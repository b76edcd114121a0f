"""Published tuning rules and model reductions (synth.tuning) against their papers.

Every expected value is quoted from the paper named in the test (from
memory where marked), worked by hand from the paper's formula, or computed
by an outside reference (closed-form step responses with mpmath,
scipy.signal.step, scipy.signal.freqresp, numpy.polyval).
"""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
from scipy import signal

from synth.tuning import (
    ProcessModel,
    RuleNotApplicable,
    Tuning,
    amigo,
    half_rule,
    half_rule_factors,
    imc,
    published_tunings,
    simc,
    step_response_model,
    ziegler_nichols,
)


def _poly(*factors):
    p = np.array([1.0])
    for f in factors:
        p = np.polymul(p, f)
    return p


# ----------------------------------------------------------------------------
# the half rule
# ----------------------------------------------------------------------------

# Skogestad (2003), the example with an inverse-response zero and seven lags
# (section 3, from memory):
#   g0 = (-0.3s+1)(0.08s+1) / ((2s+1)(s+1)(0.4s+1)(0.2s+1)(0.05s+1)^3)
# gives FOPDT k = 1, tau = 2.5, theta = 1.47 and SOPDT tau1 = 2, tau2 = 1.2,
# theta = 0.77 (the zero 0.08 goes against the lag 0.2 by rule T3).
_E_NUM = _poly([-0.3, 1.0], [0.08, 1.0])
_E_DEN = _poly([2.0, 1.0], [1.0, 1.0], [0.4, 1.0], [0.2, 1.0], [0.05, 1.0], [0.05, 1.0],
               [0.05, 1.0])


def test_half_rule_skogestad_example_first_order():
    m = half_rule(_E_NUM, _E_DEN, 0.0, order=1)
    assert m.gain == pytest.approx(1.0, rel=1e-9)
    assert m.time_constants == pytest.approx((2.5,), rel=1e-9)
    assert m.dead_time == pytest.approx(1.47, rel=1e-9)
    assert not m.integrating


def test_half_rule_skogestad_example_second_order():
    m = half_rule(_E_NUM, _E_DEN, 0.0, order=2)
    assert m.time_constants == pytest.approx((2.0, 1.2), rel=1e-9)
    assert m.dead_time == pytest.approx(0.77, rel=1e-9)


def test_half_rule_lags_only_by_hand():
    # 1/((s+1)(0.2s+1)(0.04s+1)(0.008s+1)) e^{-0.1 s}, by the rule (Skogestad 2003,
    # eqs. 10-11) worked by hand: tau = 1 + 0.1, theta = 0.1 + 0.1 + 0.04 + 0.008;
    # second order: tau2 = 0.2 + 0.02, theta = 0.1 + 0.02 + 0.008.
    den = _poly([1.0, 1.0], [0.2, 1.0], [0.04, 1.0], [0.008, 1.0])
    m1 = half_rule([3.0], den, 0.1, order=1)
    assert (m1.gain, *m1.time_constants, m1.dead_time) == pytest.approx((3.0, 1.1, 0.248), rel=1e-9)
    m2 = half_rule([3.0], den, 0.1, order=2)
    assert (*m2.time_constants, m2.dead_time) == pytest.approx((1.0, 0.22, 0.128), rel=1e-9)


def test_half_rule_repeated_poles_exact():
    # (s+1)^-8: tau = 1 + 1/2, theta = 1/2 + 6 (by hand); numpy.roots splits the
    # eightfold root by about 1 %, so this checks that the ring is merged.
    den = np.array([math.comb(8, k) for k in range(9)], dtype=float)
    m = half_rule([1.0], den, 0.0, order=1)
    assert m.time_constants == pytest.approx((1.5,), rel=1e-9)
    assert m.dead_time == pytest.approx(6.5, rel=1e-9)


def test_half_rule_numerator_rules_by_hand():
    # Rule T2 (tau0 >= T0 >= 5 theta): 2(15s+1)/((20s+1)(s+1)(0.1s+1)^2):
    # theta without the zero is 0.5 + 0.2 = 0.7, 15 >= 3.5, so (15s+1)/(20s+1) ~ 15/20;
    # then FOPDT of 1.5/((s+1)(0.1s+1)^2): tau = 1.05, theta = 0.15.
    m = half_rule(_poly([30.0, 2.0]), _poly([20.0, 1.0], [1.0, 1.0], [0.1, 1.0], [0.1, 1.0]),
                  0.0, order=1)
    assert (m.gain, *m.time_constants, m.dead_time) == pytest.approx((1.5, 1.05, 0.15), rel=1e-9)
    # Rule T1 (T0 >= tau0 >= theta): (5s+1)/((2s+1)(0.1s+1)) e^{-0.5s}: tau0 = 2,
    # theta = 0.55 <= 2, so the pair becomes the gain 5/2; left: e^{-0.5s}/(0.1s+1).
    m = half_rule([5.0, 1.0], _poly([2.0, 1.0], [0.1, 1.0]), 0.5, order=1)
    assert (m.gain, *m.time_constants, m.dead_time) == pytest.approx((2.5, 0.1, 0.5), rel=1e-9)


def test_half_rule_integrating_by_hand():
    # e^{-s}/(s(0.5s+1)(0.1s+1)): the integrator is an infinitely slow lag, so
    # first order keeps k'/s with theta = 1 + 0.25 + 0.1; second order keeps
    # 1/(0.55 s + 1) with theta = 1 + 0.05.
    den = _poly([1.0, 0.0], [0.5, 1.0], [0.1, 1.0])
    m1 = half_rule([2.0], den, 1.0, order=1)
    assert m1.integrating and m1.time_constants == ()
    assert (m1.gain, m1.dead_time) == pytest.approx((2.0, 1.35), rel=1e-9)
    m2 = half_rule([2.0], den, 1.0, order=2)
    assert m2.time_constants == pytest.approx((0.55,), rel=1e-9)
    assert m2.dead_time == pytest.approx(1.05, rel=1e-9)


@pytest.mark.parametrize("scale", [1e-4, 1e6])
def test_half_rule_time_scaling(scale):
    # The half rule is homogeneous in time (common practice): G(s/c) has every time
    # constant and the delay multiplied by 1/c.  Plants at 1e-4 and 1e6 rad/s.
    c = scale
    num = _E_NUM * np.array([c ** -2, c ** -1, 1.0])
    den = _E_DEN * np.array([c ** -k for k in range(_E_DEN.size - 1, -1, -1)])
    m = half_rule(num, den, 0.0, order=2)
    assert m.time_constants == pytest.approx((2.0 / c, 1.2 / c), rel=1e-8)
    assert m.dead_time == pytest.approx(0.77 / c, rel=1e-8)


def test_half_rule_refuses_what_it_cannot_do():
    with pytest.raises(RuleNotApplicable, match="complex pair"):
        half_rule([1.0], _poly([1.0, 1.0], [1.0, 0.2, 1.0]))
    with pytest.raises(RuleNotApplicable, match="unstable"):
        half_rule([1.0], _poly([1.0, -1.0], [1.0, 2.0]))
    with pytest.raises(RuleNotApplicable, match="poles at the origin"):
        half_rule([1.0], [1.0, 1.0, 0.0, 0.0])
    with pytest.raises(ValueError):
        half_rule_factors(1.0, [-1.0])


# ----------------------------------------------------------------------------
# step-response models
# ----------------------------------------------------------------------------


def _erlang4(t):
    """Unit-step response of 1/(s+1)^4 in closed form (mpmath)."""
    t = mpmath.mpf(t)
    return 1 - mpmath.exp(-t) * (1 + t + t ** 2 / 2 + t ** 3 / 6)


def test_tangent_methods_on_four_lags_closed_form():
    # 1/(s+1)^4 e^{-0.5 s}: the steepest slope is at the inflection t = 3 (the impulse
    # response t^3 e^{-t}/6 peaks there); the tangent meets the time axis at
    # L = 3 - y(3)/y'(3) (+ 0.5).  Ziegler-Nichols: T = 1/y'(3); Astrom-Hagglund:
    # T = t63 - L.  References: closed form with mpmath.
    den = np.array([1.0, 4.0, 6.0, 4.0, 1.0])
    y3 = _erlang4(3)
    slope = 27 * mpmath.exp(-3) / 6
    L = float(3 - y3 / slope) + 0.5
    t63 = float(mpmath.findroot(lambda t: _erlang4(t) - mpmath.mpf("0.632"), 4.3)) + 0.5
    zn = step_response_model([2.0], den, 0.5, "tangent")
    assert zn.gain == pytest.approx(2.0, rel=1e-12)
    assert zn.dead_time == pytest.approx(L, rel=1e-8)
    assert zn.time_constants[0] == pytest.approx(float(1 / slope), rel=1e-8)
    ah = step_response_model([2.0], den, 0.5, "tangent-63")
    assert ah.dead_time == pytest.approx(L, rel=1e-8)
    assert ah.time_constants[0] == pytest.approx(t63 - L, rel=1e-8)


def test_two_point_method_on_fopdt_closed_form():
    # K e^{-2s}/(5s+1): y reaches p at t = 2 + 5 ln(1/(1-p)); the two-point fit is
    # T = 1.5 (t63 - t28), L = t63 - T (Smith 1972), worked with math.log.
    t28 = 2 + 5 * math.log(1 / (1 - 0.283))
    t63 = 2 + 5 * math.log(1 / (1 - 0.632))
    T = 1.5 * (t63 - t28)
    m = step_response_model([0.7], [5.0, 1.0], 2.0, "two-point")
    assert m.gain == pytest.approx(0.7, rel=1e-12)
    assert m.time_constants[0] == pytest.approx(T, rel=1e-8)
    assert m.dead_time == pytest.approx(t63 - T, rel=1e-8)


def test_integrating_asymptote_against_scipy_step():
    # e^{-s}(2s+1)/(s(3s+1)(0.5s+1)): the step response approaches Kv (t - L);
    # check the model against scipy.signal.step of the rational part far out.
    num = [2.0, 1.0]
    den = _poly([1.0, 0.0], [3.0, 1.0], [0.5, 1.0])
    m = step_response_model(num, den, 1.0)
    assert m.integrating and m.gain == pytest.approx(1.0, rel=1e-12)
    t = np.linspace(0.0, 200.0, 20001)
    _, y = signal.step((num, den), T=t)
    # y(t) ~ Kv (t - (L - dead time)) for large t
    assert t[-1] - y[-1] / m.gain + 1.0 == pytest.approx(m.dead_time, rel=1e-5)


def test_step_model_refuses_unstable_and_double_integrator():
    with pytest.raises(RuleNotApplicable):
        step_response_model([1.0], [1.0, -1.0])
    with pytest.raises(RuleNotApplicable):
        step_response_model([1.0], [1.0, 0.0, 0.0])


# ----------------------------------------------------------------------------
# the rules
# ----------------------------------------------------------------------------


def test_ziegler_nichols_table():
    # Astrom and Hagglund (2004), Table 1 (the step-response method): with
    # a = K L / T = 0.5 and L = 2: PI kp = 0.9/a, Ti = 3L; PID kp = 1.2/a, Ti = 2L, Td = L/2.
    m = ProcessModel(gain=1.0, time_constants=(4.0,), dead_time=2.0)
    pi = ziegler_nichols(m, "PI")
    assert (pi.kp, pi.ti) == pytest.approx((1.8, 6.0), rel=1e-12)
    pid = ziegler_nichols(m, "PID")
    assert (pid.kp, pid.ti, pid.td) == pytest.approx((2.4, 4.0, 1.0), rel=1e-12)
    assert pid.filter_time == pytest.approx(0.1, rel=1e-12)   # Td/10, the documented default
    # integrating: a = Kv L
    mi = ProcessModel(gain=0.25, time_constants=(), dead_time=2.0, integrating=True)
    assert ziegler_nichols(mi, "PI").kp == pytest.approx(1.8, rel=1e-12)


def test_simc_skogestad_example_settings():
    # Skogestad (2003), the same example as the half rule above (from memory):
    # PI Kc = 0.85, tauI = 2.5 (FOPDT, tau_c = theta); series PID Kc = 1.30,
    # tauI = 2, tauD = 1.2 (SOPDT).  Published to two or three digits.
    pi = simc(half_rule(_E_NUM, _E_DEN, 0.0, order=1), "PI")
    assert pi.kp == pytest.approx(0.85, rel=5e-3)
    assert pi.ti == pytest.approx(2.5, rel=1e-9)
    pid = simc(half_rule(_E_NUM, _E_DEN, 0.0, order=2), "PID")
    kc = pid.ki * 2.0                      # series Kc = ki * tauI with tauI = 2
    assert kc == pytest.approx(1.30, rel=5e-3)
    # parallel form of Kc (1 + 1/(2s))(1.2 s + 1)
    assert pid.kp == pytest.approx(kc * (1 + 1.2 / 2.0), rel=1e-9)
    assert pid.kd == pytest.approx(kc * 1.2, rel=1e-9)


def _margins(num_l, den_l, delay):
    """Ms, gain margin and phase margin (deg) from scipy.signal.freqresp on a dense grid."""
    w = np.logspace(-3, 2, 400001)
    _, L = signal.freqresp((num_l, den_l), w)
    L = L * np.exp(-1j * w * delay)
    ms = float(np.max(1 / np.abs(1 + L)))
    ph = np.unwrap(np.angle(L))
    i = int(np.argmax(ph < -np.pi))
    gm = float(1 / np.abs(L[i]))
    j = int(np.argmax(np.abs(L) < 1))
    pm = float(np.degrees(np.pi + ph[j]))
    return ms, gm, pm


@pytest.mark.parametrize("case, expected", [
    # Skogestad (2003), robustness table for tau_c = theta (from memory):
    # integrating process: GM 2.96, PM 46.9 deg, Ms 1.70;
    # lag with tau1 <= 8 theta: GM 3.14, PM 61.4 deg, Ms 1.59.
    ("integrating", (1.70, 2.96, 46.9)),
    ("lag", (1.59, 3.14, 61.4)),
])
def test_simc_robustness_as_published(case, expected):
    if case == "integrating":
        model = ProcessModel(gain=1.0, time_constants=(), dead_time=1.0, integrating=True)
        den_g = [1.0, 0.0]
    else:
        model = ProcessModel(gain=1.0, time_constants=(3.0,), dead_time=1.0)
        den_g = [3.0, 1.0]
    num_c, den_c = simc(model, "PI").transfer_function()
    ms, gm, pm = _margins(np.polymul(num_c, [1.0]), np.polymul(den_c, den_g), 1.0)
    # published to three digits: within half a unit of the last one
    assert ms == pytest.approx(expected[0], rel=3e-3)
    assert gm == pytest.approx(expected[1], rel=2e-3)
    assert pm == pytest.approx(expected[2], rel=1.1e-3)


def test_amigo_formulas_by_hand():
    # Astrom and Hagglund (2004): K = L = T = 1 gives PI kp = 0.15 + (0.35 - 1/4) = 0.25,
    # Ti = 0.35 + 13/20 = 1; PID kp = 0.2 + 0.45 = 0.65, Ti = 1.2/1.1, Td = 0.5/1.3.
    m = ProcessModel(gain=1.0, time_constants=(1.0,), dead_time=1.0)
    pi = amigo(m, "PI")
    assert (pi.kp, pi.ti) == pytest.approx((0.25, 1.0), rel=1e-12)
    pid = amigo(m, "PID")
    assert (pid.kp, pid.ti, pid.td) == pytest.approx((0.65, 1.2 / 1.1, 0.5 / 1.3), rel=1e-12)


def test_amigo_lag_formulas_tend_to_the_published_integrating_ones():
    # The paper gives the integrating case separately: PI kp = 0.35/(Kv L), Ti = 13.4 L;
    # PID kp = 0.45/(Kv L), Ti = 8 L, Td = 0.5 L.  A lag K/(Ts+1) with K = Kv T and
    # T >> L behaves as Kv/s, so the lag formulas must approach them (13.35 rounds to 13.4).
    kv, L, T = 0.5, 2.0, 2e7
    lag = ProcessModel(gain=kv * T, time_constants=(T,), dead_time=L)
    integ = ProcessModel(gain=kv, time_constants=(), dead_time=L, integrating=True)
    a, b = amigo(lag, "PI"), amigo(integ, "PI")
    assert a.kp == pytest.approx(b.kp, rel=1e-5) and b.kp == pytest.approx(0.35, rel=1e-12)
    assert a.ti == pytest.approx(b.ti, rel=5e-3) and b.ti == pytest.approx(13.4 * L, rel=1e-12)
    a, b = amigo(lag, "PID"), amigo(integ, "PID")
    assert (a.kp, a.ti, a.td) == pytest.approx((b.kp, b.ti, b.td), rel=1e-5)


def test_imc_pid_gives_the_imc_closed_loop():
    # Rivera, Morari and Skogestad (1986): with the first-order Pade form of the delay,
    # the IMC-PID with filter makes T(s) = (1 - theta s/2) / ((lam s + 1)(1 + theta s/2))
    # exactly (the IMC design T = G+ f).  Checked at test points with numpy.polyval.
    K, tau, theta, lam = 2.0, 4.0, 1.0, 0.9
    t = imc(ProcessModel(gain=K, time_constants=(tau,), dead_time=theta), "PID", lam=lam)
    nc, dc = t.transfer_function()
    ng = np.polymul([K], [-theta / 2, 1.0])
    dg = np.polymul([tau, 1.0], [theta / 2, 1.0])
    for s in (0.3j, 1.7j, 0.2 + 5j, -0.4 + 0.1j):
        L = np.polyval(nc, s) * np.polyval(ng, s) / (np.polyval(dc, s) * np.polyval(dg, s))
        T = (1 - theta * s / 2) / ((lam * s + 1) * (1 + theta * s / 2))
        assert L / (1 + L) == pytest.approx(T, rel=1e-12)


def test_imc_pi_by_hand_and_default_lambda():
    # Rivera et al. (1986), FOPDT PI row (from memory): K kp = (2 tau + theta)/(2 lam),
    # Ti = tau + theta/2; default lam = 1.7 theta (the paper's recommended lower limit).
    t = imc(ProcessModel(gain=2.0, time_constants=(4.0,), dead_time=1.0), "PI")
    assert t.kp == pytest.approx(9.0 / (2 * 2.0 * 1.7), rel=1e-12)
    assert t.ti == pytest.approx(4.5, rel=1e-12)


def test_transfer_function_is_the_parallel_form():
    # kp + ki/s + kd s/(Tf s + 1) (derivative filter) and (kp + ki/s + kd s)/(Tf s + 1)
    # evaluated directly, against numpy.polyval of the returned polynomials.
    for on in ("derivative", "controller"):
        t = Tuning("x", "PID", kp=1.3, ki=0.4, kd=0.7, filter_time=0.05, filter_on=on)
        num, den = t.transfer_function()
        for s in (0.1j, 2j, 30j):
            direct = (1.3 + 0.4 / s + 0.7 * s / (0.05 * s + 1) if on == "derivative"
                      else (1.3 + 0.4 / s + 0.7 * s) / (0.05 * s + 1))
            assert np.polyval(num, s) / np.polyval(den, s) == pytest.approx(direct, rel=1e-12)
    with pytest.raises(ValueError):
        Tuning("x", "PID", kp=1.0, ki=1.0, kd=1.0).transfer_function()


def test_published_tunings_fall_back_and_skip_with_reasons():
    # complex poles: the half rule does not apply, SIMC/IMC use the two-point fit and say so
    rs = published_tunings([1.0], _poly([1.0, 1.0], [1.0, 0.6, 1.0]), 0.2)
    simc_pi = next(t for t in rs.tunings if t.rule == "SIMC" and t.structure == "PI")
    assert any("two-point" in n for n in simc_pi.notes)
    # an integrating plant: IMC has no rule; the others use their integrating forms
    rs = published_tunings([1.0], [1.0, 0.0], 1.0)
    assert {(r, s) for r, s, _ in rs.skipped} >= {("IMC", "PI"), ("IMC", "PID")}
    assert all(t.model.integrating for t in rs.tunings)
