"""The verifier against textbook values and independent computations with scipy.signal."""

import math

import numpy as np
import pytest
from scipy import signal
from scipy.interpolate import pade as scipy_pade

from synth.numerics.poly import batch_polymul
from synth.problem.requirements import problem_from_text
from synth.verify.screening import screen_batch
from synth.verify.simulation import step_metrics, step_response
from synth.verify.verdict import METRIC_KEYS, verify


def _problem(num, den, req="", dead_time=0.0, extra=""):
    return problem_from_text(f"""
[plant]
numerator = {list(num)}
denominator = {list(den)}
dead_time = {dead_time}
{extra}
[requirements]
{req}
""")


# ----------------------------------------------------------------------------
# frequency domain
# ----------------------------------------------------------------------------

TYPE1 = _problem([1.0], [1.0, 3.0, 2.0, 0.0])  # 1 / (s (s+1) (s+2))


def _freqresp_margins(num, den):
    """Margins from a dense scipy.signal.freqresp sweep (independent reference)."""
    w = np.geomspace(1e-3, 1e3, 400001)
    _, L = signal.freqresp(signal.TransferFunction(num, den), w)
    mag = np.abs(L)
    i = np.flatnonzero(np.diff(np.sign(mag - 1.0)))[0]
    pm = 180.0 + np.degrees(np.angle(L[i]))
    ph = np.unwrap(np.angle(L))
    j = np.flatnonzero(np.diff(np.sign(ph + np.pi)))[0]
    gm_db = -20.0 * np.log10(mag[j])
    ms = np.max(1.0 / np.abs(1.0 + L))
    return pm, gm_db, ms, w[i]


def test_margins_of_the_textbook_type1_loop():
    # L = K / (s (s+1) (s+2)), K = 1: the Routh array puts the stability limit at K = 6,
    # so the gain margin is 6 = 15.56 dB (K. Ogata, Modern Control Engineering, 5th ed.,
    # ch. 7, from memory; common practice)
    v = verify(TYPE1, [1.0], [1.0])
    assert v.feasible and v.stable
    assert v.metrics["gain_margin_db"] == pytest.approx(20 * math.log10(6.0), abs=1e-6)
    pm, gm_db, ms, wc = _freqresp_margins([1.0], [1.0, 3.0, 2.0, 0.0])
    assert v.metrics["phase_margin_deg"] == pytest.approx(pm, abs=0.01)
    assert v.metrics["gain_margin_db"] == pytest.approx(gm_db, abs=0.01)
    assert v.metrics["peak_sensitivity"] == pytest.approx(ms, rel=1e-4)
    assert v.metrics["crossover_frequency"] == pytest.approx(wc, rel=1e-4)
    # the delay margin rotates the crossover onto -1: PM (rad) / wc
    assert v.metrics["delay_margin"] == pytest.approx(math.radians(pm) / wc, rel=1e-3)
    # stable plant-gain factors (0, 6): Routh-Hurwitz (common practice)
    lo, hi = v.metrics["stable_plant_gain_range"]
    assert lo == pytest.approx(0.0, abs=1e-9) and hi == pytest.approx(6.0, rel=1e-9)


def test_lead_compensated_margins_against_freqresp():
    num_c, den_c = [12.0, 12.0 * 0.8], [1.0, 6.0]
    v = verify(TYPE1, num_c, den_c)
    num_l = np.polymul(num_c, [1.0])
    den_l = np.polymul(den_c, [1.0, 3.0, 2.0, 0.0])
    pm, gm_db, ms, _ = _freqresp_margins(num_l, den_l)
    assert v.metrics["phase_margin_deg"] == pytest.approx(pm, abs=0.01)
    assert v.metrics["gain_margin_db"] == pytest.approx(gm_db, abs=0.01)
    assert v.metrics["peak_sensitivity"] == pytest.approx(ms, rel=1e-4)


def test_no_phase_crossover_gives_an_unbounded_gain_margin():
    # L = 2 / (s + 1): the phase never reaches -180 deg (common practice)
    v = verify(_problem([2.0], [1.0, 1.0]), [1.0], [1.0])
    assert v.metrics["gain_margin_db"] is None
    assert v.metrics["stable_plant_gain_range"][1] is None


def test_dead_time_enters_the_margins_exactly():
    # L = 1 / (s + 1) * exp(-0.5 s): crossover at w = 0 (|L| < 1) ... use K = 2:
    # |L| = 1 at w = sqrt(3); the phase there is -atan(sqrt 3) - 0.5 sqrt 3 (exact)
    p = _problem([1.0], [1.0, 1.0], dead_time=0.5)
    v = verify(p, [2.0], [1.0])
    wc = math.sqrt(3.0)
    phase = -math.atan(wc) - 0.5 * wc
    assert v.metrics["crossover_frequency"] == pytest.approx(wc, rel=1e-8)
    assert v.metrics["phase_margin_deg"] == pytest.approx(180 + math.degrees(phase), abs=1e-6)
    assert v.metrics["delay_margin"] == pytest.approx((math.pi + phase) / wc, rel=1e-8)


# ----------------------------------------------------------------------------
# time domain
# ----------------------------------------------------------------------------


@pytest.mark.parametrize("zeta", [0.3, 0.5, 0.7])
def test_second_order_step_metrics(zeta):
    # L = wn^2 / (s (s + 2 zeta wn)) closes to the standard second-order loop; overshoot
    # 100 exp(-pi zeta / sqrt(1 - zeta^2)) (common practice); settling and rise times
    # against scipy.signal.step on the closed loop
    wn = 2.0
    p = _problem([wn * wn], [1.0, 2 * zeta * wn, 0.0])
    v = verify(p, [1.0], [1.0])
    assert v.metrics["overshoot_percent"] == pytest.approx(
        100 * math.exp(-math.pi * zeta / math.sqrt(1 - zeta**2)), rel=1e-4)
    assert v.metrics["steady_state_error"] == pytest.approx(0.0, abs=1e-12)
    assert v.metrics["min_damping_ratio"] == pytest.approx(zeta, rel=1e-9)
    t = np.linspace(0.0, 20.0, 40001)
    _, y = signal.step(signal.TransferFunction([wn * wn], [1.0, 2 * zeta * wn, wn * wn]), T=t)
    outside = np.flatnonzero(np.abs(y - 1.0) > 0.02)
    assert v.metrics["settling_time"] == pytest.approx(t[outside[-1]], abs=1e-3)
    rise = t[np.argmax(y >= 0.9)] - t[np.argmax(y >= 0.1)]
    assert v.metrics["rise_time"] == pytest.approx(rise, abs=1e-3)


def test_control_effort_and_final_value_of_a_type0_loop():
    # P control of 1/(s+1): u(0+) = K and y(inf) = K/(1+K) (common practice)
    p = _problem([1.0], [1.0, 1.0], req="max_steady_state_error = 0.05\nmax_control_effort = 3.0")
    v = verify(p, [4.0], [1.0])
    assert v.metrics["peak_control_effort"] == pytest.approx(4.0, rel=1e-12)
    assert v.metrics["final_value"] == pytest.approx(0.8, rel=1e-12)
    assert v.metrics["steady_state_error"] == pytest.approx(0.2, rel=1e-12)
    assert not v.feasible
    assert any("steady-state error 0.2 exceeds 0.05" in s for s in v.violations)
    assert any("peak control effort 4 exceeds 3" in s for s in v.violations)


def test_step_response_against_scipy_simulation_for_a_lead_loop():
    # reference: scipy.signal.TransferFunction.output (scipy's linear simulator)
    num_c, den_c = [12.0, 9.6], [1.0, 6.0]
    r = step_response(TYPE1, num_c, den_c)
    num_l = np.polymul(num_c, [1.0])
    den_l = np.polymul(den_c, [1.0, 3.0, 2.0, 0.0])
    cl = signal.TransferFunction(num_l, np.polyadd(den_l, num_l))
    _, y, _ = cl.output(np.ones_like(r.t[r.t < 15]), r.t[r.t < 15])
    np.testing.assert_allclose(r.y[r.t < 15], y, atol=1e-6)
    # compensator output U = C / (1 + L) R
    ucl = signal.TransferFunction(np.polymul(num_c, [1.0, 3.0, 2.0, 0.0]),
                                  np.polyadd(den_l, num_l))
    _, u, _ = ucl.output(np.ones_like(r.t[r.t < 15]), r.t[r.t < 15])
    np.testing.assert_allclose(r.u[r.t < 15][1:], u[1:], atol=1e-5)


def test_exact_dead_time_against_the_method_of_steps():
    # y' = -y + K (1 - y(t - 1)) for G = exp(-s)/(s+1) under P control: solved interval by
    # interval (method of steps; R. Bellman and K. L. Cooke, Differential-Difference
    # Equations, 1963): y = K (1 - e^-(t-1)) on [1, 2] and, with tau = t - 2,
    # y = K - K^2 + K^2 tau e^-tau + (K (1 - e^-1) - K + K^2) e^-tau on [2, 3]
    K = 0.6
    p = _problem([1.0], [1.0, 1.0], dead_time=1.0)
    r = step_response(p, [K], [1.0])
    assert r.exact_delay
    t, y = r.t, r.y
    assert np.max(np.abs(y[t < 1.0])) == 0.0
    m1 = (t >= 1.0) & (t <= 2.0)
    np.testing.assert_allclose(y[m1], K * (1 - np.exp(-(t[m1] - 1))), atol=1e-12)
    m2 = (t >= 2.0) & (t <= 3.0)
    tau = t[m2] - 2.0
    ref = K - K**2 + K**2 * tau * np.exp(-tau) + (K * (1 - math.exp(-1)) - K + K**2) * np.exp(-tau)
    np.testing.assert_allclose(y[m2], ref, atol=1e-6)
    assert r.final_value == pytest.approx(K / (1 + K), rel=1e-12)


def test_exact_dead_time_against_a_high_order_pade_closed_loop():
    # PI control of exp(-0.8 s)/(s+1)^2 against scipy.signal.step of the closed loop with
    # scipy.interpolate.pade's order-[10/10] approximant of the delay
    T = 0.8
    p = _problem([1.0], [1.0, 2.0, 1.0], dead_time=T)
    num_c, den_c = [0.5, 0.3], [1.0, 0.0]
    r = step_response(p, num_c, den_c)
    c = [(-T) ** k / math.factorial(k) for k in range(21)]
    pn, pd = scipy_pade(c, 10)
    g_num = np.polymul(pn.coeffs, [1.0])
    g_den = np.polymul(pd.coeffs, [1.0, 2.0, 1.0])
    num_l = np.polymul(num_c, g_num)
    den_l = np.polymul(den_c, g_den)
    sel = r.t < 30
    _, y = signal.step(signal.TransferFunction(num_l, np.polyadd(den_l, num_l)), T=r.t[sel])
    np.testing.assert_allclose(r.y[sel], y, atol=2e-4)


def test_step_metrics_definitions_on_a_known_curve():
    # hand-made response: overshoot against the final value, settling = last time outside
    # the band (definitions of the contract; common practice)
    from synth.verify.simulation import StepResponse

    t = np.linspace(0, 10, 10001)
    y = 2.0 * (1 - np.exp(-t) * np.cos(3 * t))
    resp = StepResponse(t=t, y=y, u=np.zeros_like(t), final_value=2.0, exact_delay=True)
    m = step_metrics(resp, 2.0)
    peak = np.max(y)
    assert m["overshoot_percent"] == pytest.approx((peak - 2.0) / 2.0 * 100, rel=1e-9)
    last = t[np.flatnonzero(np.abs(y - 2.0) > 0.04)[-1]]
    assert m["settling_time"] == pytest.approx(last, abs=1e-3)
    assert m["steady_state_error"] == pytest.approx(1.0)


# ----------------------------------------------------------------------------
# stability and internal stability
# ----------------------------------------------------------------------------


def test_closed_loop_poles_are_the_roots_of_the_unreduced_polynomial():
    p = _problem([1.0, -1.0], [1.0, 1.0, -6.0])  # (s-1)/((s-2)(s+3))
    num_c, den_c = [-3.0, -1.0], [1.0, -4.0]
    v = verify(p, num_c, den_c)
    ref = np.roots(np.polyadd(np.polymul(den_c, [1.0, 1.0, -6.0]),
                              np.polymul(num_c, [1.0, -1.0])))  # numpy.roots
    np.testing.assert_allclose(np.sort_complex(np.array(v.closed_loop_poles)),
                               np.sort_complex(ref), rtol=1e-9, atol=1e-12)
    assert v.stable == bool(np.all(ref.real < 0))


def test_unstable_cancellation_is_rejected_and_named():
    # G = 1/((s-1)(s+2)); C = 10 (s-1)/(s+5) cancels the unstable pole. The reduced
    # loop 10/((s+2)(s+5)) looks perfectly stable ...
    p = _problem([1.0], [1.0, 1.0, -2.0])
    num_c, den_c = [10.0, -10.0], [1.0, 5.0]
    reduced = np.roots(np.polyadd([1.0, 7.0, 10.0], [10.0]))
    assert np.all(reduced.real < 0)
    # ... but the unreduced polynomial keeps the mode at s = 1 (numpy.roots)
    full = np.roots(np.polyadd(np.polymul(den_c, [1.0, 1.0, -2.0]), np.polymul(num_c, [1.0])))
    assert np.any(np.abs(full - 1.0) < 1e-6)
    v = verify(p, num_c, den_c)
    assert not v.feasible and not v.internally_stable and not v.stable
    assert any("internally unstable" in s and "cancels the plant pole at 1" in s
               for s in v.violations)


def test_stable_cancellation_is_allowed_and_noted():
    p = _problem([1.0], [1.0, 3.0, 2.0])  # poles -1, -2
    v = verify(p, [5.0, 5.0], [1.0, 0.0])  # PI zero on the plant pole at -1
    assert v.feasible and v.internally_stable
    assert any("cancels the plant pole at -1" in n for n in v.notes)


def test_plant_gain_range_requirement():
    # 1/(s(s+1)(s+2)) with K = 2: stable for plant-gain factors (0, 3) (Routh: K < 6)
    p = _problem([1.0], [1.0, 3.0, 2.0, 0.0], req="plant_gain_range = [0.5, 4.0]")
    v = verify(p, [2.0], [1.0])
    lo, hi = v.metrics["stable_plant_gain_range"]
    assert hi == pytest.approx(3.0, rel=1e-9)
    assert not v.feasible
    assert any("plant-gain factors in (0, 3)" in s and "[0.5, 4]" in s for s in v.violations)
    p2 = _problem([1.0], [1.0, 3.0, 2.0, 0.0], req="plant_gain_range = [0.5, 2.5]")
    assert verify(p2, [2.0], [1.0]).feasible


def test_gain_range_violation_names_the_numbers():
    p = _problem([1.0], [1.0, 1.0], req="gain_range = [0.0, 5.0]")
    v = verify(p, [8.0], [1.0])
    assert any("gain 8 is outside the allowed gain range [0, 5]" in s for s in v.violations)


def test_unstable_loop_reports_only_poles_and_is_infeasible():
    v = verify(TYPE1, [7.0], [1.0])  # beyond the Routh limit K = 6
    assert not v.stable and not v.feasible
    assert v.metrics["overshoot_percent"] is None
    assert v.shortfall >= 100.0
    assert set(METRIC_KEYS) <= set(v.metrics)


def test_violation_messages_carry_the_numbers():
    p = _problem([4.0], [1.0, 2.0, 0.0], req="max_overshoot_percent = 5.0\n"
                 "min_phase_margin_deg = 70.0\nmin_damping_ratio = 0.8")
    v = verify(p, [1.0], [1.0])  # wn = 2, zeta = 0.5: overshoot 16.3 %
    text = " | ".join(v.violations)
    assert "overshoot 16.3 % exceeds 5 %" in text
    assert "damping ratio 0.5 of the pole at -1" in text and "below 0.8" in text
    assert "phase margin" in text and "below 70 deg" in text


def test_screen_batch_agrees_with_numpy_roots():
    p = _problem([1.0], [1.0, 3.0, 2.0, 0.0], req="max_overshoot_percent = 20.0\n"
                 "max_settling_time = 8.0\nplant_gain_range = [0.5, 1.5]")
    rng = np.random.default_rng(3)
    k = rng.uniform(0.05, 8.0, 300)
    z = rng.uniform(0.1, 5.0, 300)
    nums = np.stack([k, k * z], axis=1)
    dens = np.stack([np.ones(300), 8.0 * np.ones(300)], axis=1)
    res = screen_batch(p, nums, dens)
    region = p.region
    for i in range(300):
        num_l = np.polymul(nums[i], [1.0])
        den_l = np.polymul(dens[i], [1.0, 3.0, 2.0, 0.0])
        r = np.roots(np.polyadd(den_l, num_l))  # numpy.roots
        if np.min(np.abs(r.real)) < 1e-6:
            continue  # the documented boundary band
        assert res.stable[i] == bool(np.all(r.real < 0))
        margin = np.min(region.margin(r))
        if abs(margin) > 1e-6:
            assert res.in_region[i] == bool(margin > 0)
        tests = [np.roots(np.polyadd(den_l, f * num_l))
                 for f in np.geomspace(0.5, 1.5, 3)]  # the screened factors
        worst = max(float(np.max(e.real)) for e in tests)
        if abs(worst) > 1e-6:
            assert res.plant_range_ok[i] == (worst < 0)


def test_lightly_damped_mode_margins_against_freqresp():
    # a flexible mode with damping 0.0005: crossings within a fraction of a percent of
    # 10 rad/s must still be found (dense scipy.signal.freqresp sweep as the reference)
    den = np.polymul([1.0, 0.0, 0.0], [1.0, 2 * 0.0005 * 10.0, 100.0])
    p = _problem([100.0], den.tolist())
    num_c, den_c = [0.2, 0.05], [1.0, 2.0]  # the resonance peak sets Ms and a crossover
    v = verify(p, num_c, den_c)
    w = np.geomspace(1e-2, 1e3, 2_000_001)
    _, L = signal.freqresp(signal.TransferFunction(np.polymul(num_c, [100.0]),
                                                   np.polymul(den_c, den)), w)
    ms = np.max(1.0 / np.abs(1.0 + L))
    assert v.metrics["peak_sensitivity"] == pytest.approx(ms, rel=1e-3)
    assert v.stable
    tf = signal.TransferFunction(np.polymul(num_c, [100.0]), np.polymul(den_c, den))

    def pm_at(i):  # resolve each crossing with a second, local freqresp sweep
        _, loc = signal.freqresp(tf, np.linspace(w[i], w[i + 1], 2001))
        j = int(np.argmin(np.abs(np.abs(loc) - 1.0)))
        return 180.0 - abs(np.degrees(np.angle(loc[j])))

    cross = np.flatnonzero(np.diff(np.sign(np.abs(L) - 1.0)))
    pm = min(pm_at(i) for i in cross)
    assert v.metrics["phase_margin_deg"] == pytest.approx(pm, abs=0.05)
    pc = np.flatnonzero((np.diff(np.sign(L.imag)) != 0) & (L.real[:-1] < 0))
    gm = -20 * np.log10(max(abs(L[i]) for i in pc if abs(L[i]) < 1.0))
    assert v.metrics["gain_margin_db"] == pytest.approx(gm, abs=0.01)


def test_batch_polymul_matches_numpy_polymul():
    """Reference: numpy.polymul, row by row."""
    rng = np.random.default_rng(7)
    P = rng.normal(size=(5, 4))
    q = rng.normal(size=3)
    out = batch_polymul(P, q)
    assert out.shape == (5, 6)
    for row, p in zip(out, P, strict=True):
        assert np.allclose(row, np.polymul(p, q), rtol=1e-13, atol=1e-13)


def test_slow_pole_hidden_by_a_loop_zero_is_noted():
    # Double integrator with a lead whose zero sits almost at the origin: the loop
    # keeps a closed-loop pole next to that zero. The reference step barely shows
    # it, but the disturbance response G/(1+CG) decays at its rate (scipy.signal.step).
    prob = _problem([1.0], [1.0, 0.0, 0.0], "max_settling_time = 20.0\n")
    num_c, den_c = [0.6, 0.6 * 0.002], [1.0, 8.0]
    v = verify(prob, num_c, den_c)
    char = np.polyadd(np.polymul(den_c, [1.0, 0.0, 0.0]), num_c)
    slow = min(np.roots(char), key=lambda r: -r.real)  # numpy.roots
    assert -slow.real < 0.003
    assert any("slow closed-loop pole" in n for n in v.notes), v.notes
    # the disturbance step response G/(1+CG) = den_c / char is still far from its
    # final value long after the fast modes have gone
    t = np.linspace(0, 200, 4001)
    _, y = signal.step((den_c, char), T=t)
    final = den_c[-1] / char[-1]
    assert abs(y[-1] - final) > 0.2 * abs(final)
    # a design without such a pair gets no note
    v2 = verify(prob, [0.6, 0.6 * 0.5], [1.0, 8.0])
    assert not any("slow closed-loop pole" in n for n in v2.notes)


# ----------------------------------------------------------------------------
# what outputs draw: loop_frequency and curves
# ----------------------------------------------------------------------------


def test_bandwidth_and_crossovers_of_textbook_loops():
    from synth.verify.frequency import loop_frequency

    # L = 3/s: T = 3/(s + 3), bandwidth exactly 3 rad/s, crossover 3, margin 90 deg (by hand)
    p = _problem([3.0], [1.0, 0.0])
    f = loop_frequency(p.plant, [1.0], [1.0])
    assert f.bandwidth == pytest.approx(3.0, rel=1e-9)
    assert f.crossover_frequency == pytest.approx(3.0, rel=1e-9)
    assert f.phase_margin_deg == pytest.approx(90.0, rel=1e-9)
    # K/(s (s+1) (s+2)): phase crossover at sqrt(2) rad/s where |L| = K/6 (Ogata, from memory)
    f = loop_frequency(TYPE1.plant, [2.0], [1.0])
    assert f.phase_crossovers == pytest.approx((math.sqrt(2.0),), rel=1e-9)
    assert f.gain_margin_db == pytest.approx(20.0 * math.log10(3.0), rel=1e-9)
    # standard second order T = wn^2 / (s^2 + 2 zeta wn s + wn^2): bandwidth
    # wn sqrt(1 - 2 zeta^2 + sqrt(4 zeta^4 - 4 zeta^2 + 2)) (Ogata, from memory)
    zeta, wn = 0.4, 5.0
    p = _problem([wn * wn], [1.0, 2.0 * zeta * wn, 0.0])
    f = loop_frequency(p.plant, [1.0], [1.0])
    ref = wn * math.sqrt(1 - 2 * zeta**2 + math.sqrt(4 * zeta**4 - 4 * zeta**2 + 2))
    assert f.bandwidth == pytest.approx(ref, rel=1e-9)
    # the sensitivity peak and where it is, against scipy.signal.freqresp on a dense grid
    w = np.geomspace(0.1, 100.0, 400001)
    _, L = signal.freqresp(signal.TransferFunction([wn * wn], [1.0, 2.0 * zeta * wn, 0.0]), w)
    S = np.abs(1.0 / (1.0 + L))
    assert f.peak_sensitivity == pytest.approx(float(np.max(S)), rel=1e-6)
    assert f.peak_frequency == pytest.approx(float(w[np.argmax(S)]), rel=1e-3)
    # the curve itself is L(jw) on the verifier's grid (scipy.signal.freqresp at those points)
    _, Lref = signal.freqresp(signal.TransferFunction([wn * wn], [1.0, 2.0 * zeta * wn, 0.0]),
                              f.w)
    assert np.allclose(f.loop, Lref, rtol=1e-12, atol=0)


def test_curves_hold_the_verdicts_step_and_margins():
    from synth.verify.curves import curves

    # lead 4 (s+1)/(s+8) around 1/(s(s+1)(s+2)): the curves' step is the verifier's own
    # simulation, checked here against scipy.signal.TransferFunction.output
    num_c, den_c = [4.0, 4.0], [1.0, 8.0]
    c = curves(TYPE1, num_c, den_c)
    assert c.stable and c.step is not None
    ol_num = np.polymul(num_c, [1.0])
    cl = signal.TransferFunction(ol_num, np.polyadd(np.polymul(den_c, [1.0, 3.0, 2.0, 0.0]),
                                                    ol_num))
    keep = c.step.t < 20
    _, y, _ = cl.output(np.ones(np.count_nonzero(keep)), c.step.t[keep])
    assert np.allclose(c.step.y[keep], y, rtol=0, atol=1e-8)
    v = verify(TYPE1, num_c, den_c)
    assert c.frequency.phase_margin_deg == v.metrics["phase_margin_deg"]
    assert c.frequency.peak_sensitivity == v.metrics["peak_sensitivity"]
    # an ideal derivative has no step response to draw (its effort to a step is an impulse)
    assert curves(TYPE1, [1.0, 1.0, 0.0], [1.0]).step is None


@pytest.mark.parametrize("num, den", [
    ([1.0], [1.0, 3.0, 3.0, 1.0]),
    ([2.0, 1.5, 0.4], [1.0, 5.0, 0.0]),                 # biproper PID with filter
    ([1e-9, 2.0, 1.0], [3.0, 2.0, 1.0]),                # a tiny leading coefficient is kept
    ([[1.0, 2.0, 3.0], [0.0, -1.0, -1.0]], [1.0, 3.0, 0.0]),   # one input, two outputs
    ([5.0], [2.0]),                                     # a constant
])
def test_realisation_is_scipys_controller_canonical_form(num, den):
    # the same matrices as scipy.signal.tf2ss (synth writes the form out to avoid importing
    # scipy.signal at start-up)
    import warnings

    from synth.verify.simulation import realise

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", signal.BadCoefficients)
        ref = signal.tf2ss(num, den)
    got = realise(num, den)
    if np.asarray(den).size == 1:      # scipy gives a 1 x 1 zero state for a constant
        np.testing.assert_allclose(got[3], ref[3], rtol=1e-15)
        return
    for a, b in zip(got, ref, strict=True):
        np.testing.assert_allclose(a, b, rtol=1e-15, atol=0)
