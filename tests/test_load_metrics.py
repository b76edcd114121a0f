"""Load-disturbance and noise metrics of the verifier against independent computations.

References, named beside each check:

* ``scipy.signal.step`` of the closed-loop transfer function ``G/(1+CG)``
  (delay-free loops) and a loop stepped with ``scipy.signal.cont2discrete``
  (bilinear) forms of plant and controller and an exact delay buffer (loops
  with dead time), for the load-step IAE and peak;
* ``scipy.signal.freqresp`` on a dense grid with the exact ``exp(-jwT)``, for
  the peak complementary sensitivity Mt and the noise gain ``max |C/(1+L)|``;
* the identity ``IE = integral of y = 1/ki`` after a unit load step for a PI
  loop (common practice; K. J. Astrom and T. Hagglund, *Advanced PID
  Control*, ISA, 2006, sec. 4.3).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import signal

from synth.problem.requirements import problem_from_text
from synth.verify.simulation import integral_abs, simulate_load
from synth.verify.verdict import verify


def _problem(num, den, dead_time=0.0, req=""):
    return problem_from_text(f"""
[plant]
numerator = {list(num)}
denominator = {list(den)}
dead_time = {dead_time}
[requirements]
{req}
""")


def _scipy_load_step(num_g, den_g, num_c, den_c, t):
    """Output after a unit load step: scipy.signal.step of G/(1+CG) = num_G den_C / char."""
    char = np.polyadd(np.polymul(den_c, den_g), np.polymul(num_c, num_g))
    _, y = signal.step(signal.TransferFunction(np.polymul(num_g, den_c), char), T=t)
    return y


def _delay_loop_load_step(num_g, den_g, dead_time, num_c, den_c, h, t_end):
    """Unit load step with the exact delay: bilinear discretisations and a delay buffer.

    Plant and controller each by scipy.signal.cont2discrete (method "bilinear",
    second-order accurate); the plant input is ``u + d`` delayed by exactly
    ``dead_time / h`` samples.
    """
    m = int(round(dead_time / h))
    Ag, Bg, Cg, Dg, _ = signal.cont2discrete(signal.tf2ss(num_g, den_g), h, method="bilinear")
    Ac, Bc, Cc, Dc, _ = signal.cont2discrete(signal.tf2ss(num_c, den_c), h, method="bilinear")
    xg = np.zeros(Ag.shape[0])
    xc = np.zeros(Ac.shape[0])
    buf = [0.0] * m
    steps = int(round(t_end / h))
    y = np.zeros(steps + 1)
    for k in range(steps + 1):
        v = buf[k % m] if m else 0.0            # (u + d)(t - T)
        yk = float(Cg[0] @ xg + Dg[0, 0] * v)
        e = -yk
        uk = float(Cc[0] @ xc + Dc[0, 0] * e)
        y[k] = yk
        if m:
            buf[k % m] = uk + 1.0
        xg = Ag @ xg + Bg[:, 0] * v
        xc = Ac @ xc + Bc[:, 0] * e
    return np.arange(steps + 1) * h, y


@pytest.mark.parametrize("num_g, den_g, num_c, den_c", [
    ([1.0], [1.0, 3.0, 3.0, 1.0], [0.9, 0.35], [1.0, 0.0]),           # PI on 1/(s+1)^3
    ([2.0], [1.0, 0.4, 4.0], [0.5, 1.2, 1.0], [1.0, 6.0, 0.0]),        # PID on a resonance
    ([1.0, 2.0], [1.0, 1.0, 0.0], [3.0, 1.0], [1.0, 10.0]),            # lead on an integrator
])
def test_load_iae_and_peak_against_scipy_step(num_g, den_g, num_c, den_c):
    p = _problem(num_g, den_g)
    v = verify(p, num_c, den_c)
    assert v.stable
    t = np.linspace(0.0, 400.0, 400001)
    y = _scipy_load_step(num_g, den_g, num_c, den_c, t)
    assert v.metrics["load_peak"] == pytest.approx(np.max(np.abs(y)), rel=1e-4)
    if den_c[-1] == 0.0:
        assert v.metrics["load_iae"] == pytest.approx(np.trapezoid(np.abs(y), t), rel=1e-4)
    else:
        # no integral action: the output keeps an offset after the load step (common practice),
        # so the IAE is unbounded and reported as null
        assert abs(y[-1]) > 1e-3
        assert v.metrics["load_iae"] is None


@pytest.mark.parametrize("dead_time, num_g, den_g, num_c, den_c", [
    (1.0, [1.0], [1.0, 1.0], [0.36, 0.37], [1.0, 0.0]),
    (0.5, [1.0], [2.0, 3.0, 1.0], [1.4, 2.0, 1.0], [1.0, 5.0, 0.0]),
])
def test_load_iae_with_exact_dead_time_against_a_delay_buffer_loop(dead_time, num_g, den_g,
                                                                   num_c, den_c):
    p = _problem(num_g, den_g, dead_time=dead_time)
    v = verify(p, num_c, den_c)
    assert v.stable and v.exact_delay
    t, y = _delay_loop_load_step(num_g, den_g, dead_time, num_c, den_c, 2e-3, 150.0)
    assert v.metrics["load_peak"] == pytest.approx(np.max(np.abs(y)), rel=2e-4)
    assert v.metrics["load_iae"] == pytest.approx(np.trapezoid(np.abs(y), t), rel=2e-4)


@pytest.mark.parametrize("dead_time, kp, ki", [(0.0, 1.0, 0.2), (1.0, 0.36, 0.37),
                                              (1.0, 0.1, 0.05), (0.3, 2.0, 1.5)])
def test_integrated_error_after_a_load_step_is_one_over_ki(dead_time, kp, ki):
    # IE = int y dt = 1/ki for a stable PI loop after a unit load step at the plant input
    # (common practice; Astrom and Hagglund 2006, sec. 4.3), here on 1/(s+1) e^{-sT}
    p = _problem([1.0], [1.0, 1.0], dead_time=dead_time)
    resp = simulate_load(p.plant, [kp, ki], [1.0, 0.0], t_end=600.0)
    ie = float(np.sum(0.5 * np.diff(resp.t) * (resp.y[1:] + resp.y[:-1])))
    assert ie == pytest.approx(1.0 / ki, rel=2e-4)
    assert resp.final_value == 0.0
    # a response that keeps its sign has IAE = IE
    if np.all(resp.y >= 0):
        assert integral_abs(resp.t, resp.y) == pytest.approx(1.0 / ki, rel=1e-4)


def _freqresp_peaks(num_g, den_g, dead_time, num_c, den_c):
    """Mt and max |C/(1+L)| from scipy.signal.freqresp on a dense grid, exact delay."""
    w = np.geomspace(1e-4, 1e4, 800001)
    _, g = signal.freqresp(signal.TransferFunction(num_g, den_g), w)
    _, c = signal.freqresp(signal.TransferFunction(num_c, den_c), w)
    g = g * np.exp(-1j * w * dead_time)
    L = g * c
    return np.max(np.abs(L / (1 + L))), np.max(np.abs(c / (1 + L)))


@pytest.mark.parametrize("dead_time, num_g, den_g, num_c, den_c", [
    (0.0, [1.0], [1.0, 3.0, 3.0, 1.0], [0.9, 0.35], [1.0, 0.0]),
    (1.0, [1.0], [1.0, 1.0], [0.8, 0.6], [1.0, 0.0]),                 # Mt above 1
    (0.2, [2.0], [1.0, 0.4, 4.0], [0.5, 1.2, 1.0], [1.0, 6.0, 0.0]),  # PID: noise gain ~ 0.5
    (0.0, [10.0], [1.0, 1.0], [2.0], [1.0]),                          # type 0: Mt = T(0) < 1
])
def test_mt_and_noise_gain_against_freqresp(dead_time, num_g, den_g, num_c, den_c):
    p = _problem(num_g, den_g, dead_time=dead_time)
    v = verify(p, num_c, den_c)
    assert v.stable
    mt, noise = _freqresp_peaks(num_g, den_g, dead_time, num_c, den_c)
    assert v.metrics["peak_complementary_sensitivity"] == pytest.approx(mt, rel=1e-4)
    assert v.metrics["noise_gain"] == pytest.approx(noise, rel=1e-4)


def test_noise_gain_of_a_biproper_compensator_includes_its_high_frequency_gain():
    # PID with filter: |C(jw)| -> C(inf) = 5 at high frequency where L -> 0, so the noise gain
    # is at least 5 (common practice: the filtered derivative's high-frequency gain)
    p = _problem([1.0], [1.0, 2.0, 1.0])
    num_c = np.polymul([5.0], [1.0, 1.0, 0.5])
    v = verify(p, num_c, [1.0, 20.0, 0.0])
    assert v.metrics["noise_gain"] >= 5.0 * (1 - 1e-12)
    _, noise = _freqresp_peaks([1.0], [1.0, 2.0, 1.0], 0.0, num_c, [1.0, 20.0, 0.0])
    assert v.metrics["noise_gain"] == pytest.approx(noise, rel=1e-4)


@pytest.mark.parametrize("key, limit, ok", [("max_load_iae", 6.0, True), ("max_load_iae", 4.0, False),
                                            ("max_load_peak", 0.9, True),
                                            ("max_noise_gain", 0.5, False),
                                            ("max_peak_complementary_sensitivity", 1.2, True)])
def test_new_requirements_are_judged(key, limit, ok):
    # PI 0.8 + 0.2/s on 1/(s+1): IE = 1/ki = 5 and y >= 0 (overdamped), so IAE = 5
    # (common practice); noise gain >= kp = 0.8 (the high-frequency limit of C)
    p = _problem([1.0], [1.0, 1.0], req=f"{key} = {limit}")
    v = verify(p, [0.8, 0.2], [1.0, 0.0])
    assert v.metrics["load_iae"] == pytest.approx(5.0, rel=1e-4)
    assert v.feasible is ok
    if not ok:
        assert len(v.violations) == 1 and f"{limit:g}" in v.violations[0]


def test_load_iae_unbounded_without_integral_action_fails_a_limit():
    p = _problem([1.0], [1.0, 1.0], req="max_load_iae = 100.0")
    v = verify(p, [4.0], [1.0])
    assert v.metrics["load_iae"] is None
    assert not v.feasible
    assert "no integral action" in v.violations[0]
    assert math.isfinite(v.metrics["load_peak"])
