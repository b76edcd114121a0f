"""The sampled-data loop the verifier judges with [sampling]: samples, between samples, frequency.

External references:
* (the loop at its samples against scipy.signal.cont2discrete plus scipy.signal.dlsim is in
  tests/test_sampled_design.py);
* scipy.signal.cont2discrete (zero-order hold at a fine step, state space from
  scipy.signal.tf2ss) and scipy.signal.dlsim, exact
  for an input held between the fine points, for the continuous output between the samples, with a fractional computation delay, a dead time and a load step, and
  scipy.signal.lfilter of the design's C(z) for the controller's outputs;
* an independent hybrid simulation (tests/independent.py: scipy.signal.cont2discrete at a fine
  step, scipy.signal.lfilter sample by sample) for the verdict's step metrics;
* scipy.signal.freqz of the ZOH plant and C(z) for margins, Ms, Mt and the noise gain;
* the phase lag of a zero-order hold, w T / 2 (common practice; Franklin, Powell and Workman,
  from memory), exact for an integrating plant;
* K/(s(s+1)) behind a hold at T = 1 s is stable for 0 < K < 2.3925 (K. Ogata, Discrete-Time
  Control Systems, 2nd ed., 1995, from memory); exactly (1 - 1/e)/(1 - 2/e) (mpmath);
* a loop's phase margin as its sampling gets fast tends to the continuous loop's less
  w_c T / 2 (scipy.signal.freqresp for the continuous loop);
* the exported C (the export tests' compiler and harness) run on the verifier's own sampled
  measurements returns the verifier's controller outputs.
"""

from __future__ import annotations

import math
import subprocess

import numpy as np
import pytest
from scipy.signal import cont2discrete, dlsim, freqresp, freqz, lfilter, tf2ss

from synth.problem.plant import Plant
from synth.problem.requirements import problem_from_text
from synth.problem.sampling import Sampling
from synth.verify.controller import Controller
from synth.verify.discrete import ZMap, discrete_controller
from synth.verify.hybrid import sampled_loop
from synth.verify.sampled import map_design
from synth.verify.verdict import verify
from tests.independent import sampled_step

PLANT = ([1.0], [1.0, 3.0, 2.0])            # 1/((s + 1)(s + 2))
RESONANT = ([4.0], [1.0, 0.8, 4.0])         # lightly damped: ripple between samples
PI = ((2.0, 3.0), (1.0, 0.0))               # 2 (s + 1.5) / s


def _held_response(plant_tf, v, step):
    """The plant's output on a uniform grid of ``step`` with ``v`` held between grid points.

    A held input makes the zero-order-hold discretisation exact at every grid
    point: scipy.signal.cont2discrete (method "zoh") then scipy.signal.dlsim.
    """
    # in state space (scipy.signal.tf2ss): a transfer function at a step this fine has its
    # poles crowded at z = 1, where polynomial coefficients lose the digits
    ad, bd, cd, dd, _ = cont2discrete(tf2ss(*plant_tf), step, method="zoh")
    _, y, _ = dlsim((ad, bd, cd, dd, step), v)
    return np.ravel(y)


def _loop(plant_tf, controller_tf, period, tau=0.0, dead_time=0.0, method="tustin"):
    plant = Plant.from_coefficients(*plant_tf, dead_time=dead_time)
    model = discrete_controller(Controller(*controller_tf), ZMap(method, period),
                                compute_delay=tau)
    return plant, model, sampled_loop(plant, model)


@pytest.mark.parametrize("plant_tf,tau,dead,load", [
    (PLANT, 0.037, 0.0, 0.0),
    (PLANT, 0.1, 0.123, 0.5),
    (RESONANT, 0.05, 0.21, -0.3),
])
def test_between_samples_matches_the_held_input_reference(plant_tf, tau, dead, load):
    period = 0.1
    fine = period / 1000                    # the grid holds every sample and switch time
    plant, model, loop = _loop(plant_tf, ((0.6, 0.6), (1.0, 0.0)), period, tau, dead)
    t_end = 6.0
    resp = loop.simulate(t_end, reference=1.0, load=load, points=20)
    k = resp.u_samples.size
    # the controller's outputs are C(z) (the design's difference equation, scipy.signal.lfilter)
    # on the sampled error
    cn, cd = model.transfer()
    u_ref = lfilter(cn, cd, 1.0 - resp.y_samples)
    assert np.max(np.abs(resp.u_samples - u_ref)) <= 1e-9 * np.max(np.abs(u_ref))
    # the plant: its rational part driven by the held output, delayed by the dead time and
    # the computation delay, plus the load after the dead time (held input: _held_response)
    t = np.arange(int(round(k * period / fine)) + 1) * fine
    idx = np.floor((t - (dead + tau)) / period + 1e-9).astype(int)
    v = np.where(idx >= 0, resp.u_samples[np.clip(idx, 0, k - 1)], 0.0)
    v = v + np.where(t >= dead - 1e-12, load, 0.0)
    y_ref = _held_response(plant_tf, v, fine)
    i = np.round(resp.t / fine).astype(int)
    keep = (i > 0) & (i < t.size)
    err = np.max(np.abs(resp.y[keep] - y_ref[i[keep]]))
    assert err <= 1e-9 * np.max(np.abs(y_ref))


def test_the_hold_lags_by_half_a_period_in_the_sampled_loop():
    # G = 1/s behind a hold is T/(z - 1): -90 deg - w T / 2 exactly; a computation delay of
    # one period adds w T (z^-1)
    period = 0.02
    for tau, extra in ((0.0, 0.0), (period, 1.0)):
        _, _, loop = _loop(([1.0], [1.0, 0.0]), ((1.0,), (1.0,)), period, tau)
        w = np.array([0.5, 3.0, 40.0, 120.0])
        phase = np.degrees(np.unwrap(np.angle(loop.loop_response(1j * w * period))))
        expected = -90.0 - np.degrees(w * period / 2) - extra * np.degrees(w * period)
        assert np.allclose(phase, expected, rtol=1e-9, atol=0)


def test_critical_gain_of_a_sampled_integrating_loop():
    import mpmath

    exact = float((1 - 1 / mpmath.e) / (1 - 2 / mpmath.e))
    assert exact == pytest.approx(2.3925, abs=5e-4)      # Ogata's figure, from memory
    problem = problem_from_text("[plant]\nnumerator = [1.0]\ndenominator = [1.0, 1.0, 0.0]\n"
                                "[sampling]\nperiod = 1.0\n", "ogata.toml")
    v = verify(problem, [1.0], [1.0])
    lo, hi = v.metrics["stable_plant_gain_range"]
    assert lo == 0.0 and hi == pytest.approx(exact, rel=1e-9)
    assert v.metrics["gain_margin_db"] == pytest.approx(20 * math.log10(exact), rel=1e-9)
    past = verify(problem, [1.01 * exact], [1.0])
    assert not past.stable and past.violations[0].startswith("sampled loop unstable at T = 1 s")


def _freqz(num, den, w, period):
    num, den = np.atleast_1d(num), np.atleast_1d(den)
    n = max(num.size, den.size)
    num, den = np.pad(num, (n - num.size, 0)), np.pad(den, (n - den.size, 0))
    _, h = freqz(num, den, worN=np.asarray(w) * period)
    return h


def test_margins_and_peaks_match_freqz():
    period, tau = 0.1, 0.1
    plant = Plant.from_coefficients(*PLANT)
    sampling = Sampling(period, tau)
    model, _, _ = map_design(plant, Controller(*PI), sampling)
    loop = sampled_loop(plant, model)
    from synth.verify.frequency import frequency_grid

    f = loop.frequency(frequency_grid(plant, *PI))
    gnd, gdd, _ = cont2discrete(PLANT, period, method="zoh")
    gnd, gdd = np.ravel(gnd), np.concatenate([gdd, [0.0]])      # z^-1: the delay of one period
    cn, cd = model.transfer()
    w = np.linspace(1e-4, math.pi / period, 400_001)
    L = _freqz(np.polymul(cn, gnd), np.polymul(cd, gdd), w, period)
    C = _freqz(cn, cd, w, period)
    assert f.peak_sensitivity == pytest.approx(np.max(1 / np.abs(1 + L)), rel=1e-6)
    assert f.peak_complementary_sensitivity == pytest.approx(np.max(np.abs(L / (1 + L))),
                                                             rel=1e-6)
    assert f.noise_gain == pytest.approx(np.max(np.abs(C / (1 + L))), rel=1e-6)
    i = int(np.flatnonzero(np.diff(np.sign(np.abs(L) - 1)))[0])
    pm = 180 + np.degrees(np.angle(L[i]))
    assert f.phase_margin_deg == pytest.approx(pm, abs=1e-3)
    j = int(np.flatnonzero((np.diff(np.sign(L.imag)) != 0) & (L.real[:-1] < 0))[0])
    assert f.gain_margin_db == pytest.approx(-20 * np.log10(np.abs(L[j])), abs=1e-3)


@pytest.mark.parametrize("scale", [1e-4, 1.0, 1e5])
def test_fast_sampling_tends_to_the_continuous_margin_less_the_hold(scale):
    # a loop sampled at 2000 times its crossover, at three time scales: the poles crowd z = 1,
    # yet the phase margin is the continuous one (scipy.signal.freqresp, at time scale 1 and
    # moved to each scale) less w_c T / 2
    _, lc = freqresp(((2.0, 3.0), (1.0, 3.0, 2.0, 0.0)), w=np.geomspace(1e-3, 1e3, 400_001))
    w = np.geomspace(1e-3, 1e3, 400_001)
    i = int(np.flatnonzero(np.diff(np.sign(np.abs(lc) - 1)))[0])
    wc, pm = w[i] * scale, 180 + np.degrees(np.angle(lc[i]))
    num = [scale**2]
    den = [1.0, 3.0 * scale, 2.0 * scale**2]
    pi = ((2.0, 3.0 * scale), (1.0, 0.0))
    period = 2 * math.pi / (2000 * wc)
    plant = Plant.from_coefficients(num, den)
    model, _, _ = map_design(plant, Controller(*pi), Sampling(period))
    loop = sampled_loop(plant, model)
    from synth.verify.frequency import frequency_grid

    f = loop.frequency(frequency_grid(plant, *pi))
    assert f.crossover_frequency == pytest.approx(wc, rel=1e-3)
    assert f.phase_margin_deg == pytest.approx(pm - math.degrees(wc * period / 2), abs=2e-3)
    assert loop.final_value() == pytest.approx(1.0, rel=1e-9)   # integral action (common practice)


# ---------------------------------------------------------------------------------------------
# the verdict's time-domain metrics: an independent hybrid simulation
# ---------------------------------------------------------------------------------------------


def test_the_verdicts_step_metrics_are_those_of_the_output_between_samples():
    text = ("[plant]\nnumerator = [4.0]\ndenominator = [1.0, 0.8, 4.0]\n"
            "[requirements]\nmax_overshoot_percent = 60.0\nmax_settling_time = 12.0\n"
            "[sampling]\nperiod = 0.9\ncompute_delay = 0.45\n")
    problem = problem_from_text(text, "ripple.toml")
    controller = ((0.25, 0.35), (1.0, 0.0))
    v = verify(problem, *controller)
    assert v.stable
    model, _, _ = map_design(problem.plant, Controller(*controller), problem.sampling)
    cn, cd = model.transfer()
    t, y, u = sampled_step(problem.plant, 0.9, 0.45, cn, cd, 60.0)
    final = v.metrics["final_value"]
    assert final == pytest.approx(1.0, rel=1e-9)                 # integral action
    overshoot = (np.max(y) - final) / final * 100
    at_samples = (np.max(y[::400]) - final) / final * 100
    assert overshoot > at_samples + 1.0                          # the ripple the samples miss
    assert v.metrics["overshoot_percent"] == pytest.approx(overshoot, abs=0.05)
    outside = np.flatnonzero(np.abs(y - final) > 0.02 * final)
    assert v.metrics["settling_time"] == pytest.approx(t[outside[-1]], abs=0.9 / 32)
    assert v.metrics["peak_control_effort"] == pytest.approx(np.max(np.abs(u)), rel=1e-9)


# ---------------------------------------------------------------------------------------------
# the exported code runs what the verifier simulated
# ---------------------------------------------------------------------------------------------


CC = __import__("shutil").which("gcc") or __import__("shutil").which("cc")


def _run_exported_c(tmp_path, document, reference, measurements) -> np.ndarray:
    """The design's exported C compiled with the export tests' harness, run on these inputs."""
    from synth.outputs.export import export_design
    from tests.test_export import _HARNESS

    exported = export_design(document, 1, "c", "loop_ctl")
    for name, body in exported.files:
        (tmp_path / name).write_text(body)
    (tmp_path / "main.c").write_text(_HARNESS.replace("NAME", "loop_ctl"))
    subprocess.run([CC, "-std=c99", "-O0", "-o", str(tmp_path / "run"), str(tmp_path / "main.c"),
                    str(tmp_path / "loop_ctl.c"), "-lm"], check=True, cwd=tmp_path)
    rows = "reference,measurement,output\n" + "".join(
        f"{reference!r},{y!r},0\n" for y in np.asarray(measurements).tolist())
    out = subprocess.run([str(tmp_path / "run")], input=rows, capture_output=True, text=True,
                         check=True).stdout.split()
    return np.array([float(x) for x in out])


@pytest.mark.skipif(CC is None, reason="no C compiler on this machine (.ci/run installs gcc)")
def test_exported_c_reproduces_the_verifiers_sampled_simulation(tmp_path):
    from synth.design import run_design
    from synth.outputs.document import read_design
    from synth.outputs.export import discrete_model

    text = ("[plant]\nnumerator = [1.0]\ndenominator = [1.0, 3.0, 2.0]\ndead_time = 0.02\n"
            "[requirements]\nmax_overshoot_percent = 15.0\nmax_settling_time = 4.0\n"
            "[search]\nstructures = [\"PID\"]\neffort = 0.1\nkeep = 2\n"
            "[sampling]\nperiod = 0.05\ncompute_delay = 0.02\n")
    problem = problem_from_text(text, "c.toml")
    run = run_design(problem)
    document = read_design(run.to_json(), "run.json")
    # the verifier's sampled loop with the controller the export rebuilds from the document
    model = discrete_model(document, document.design(1))
    resp = sampled_loop(problem.plant, model).simulate(4.0)
    got = _run_exported_c(tmp_path, document, 1.0, resp.y_samples)
    assert got.size == resp.u_samples.size
    assert np.max(np.abs(got - resp.u_samples)) <= 1e-9 * np.max(np.abs(resp.u_samples))


@pytest.mark.skipif(CC is None, reason="no C compiler on this machine (.ci/run installs gcc)")
def test_the_saturated_sampled_loop_runs_the_exported_program(tmp_path):
    # PI with output limits, a rate limit and back-calculation (the export tests' case), a
    # reference step that drives the output into the upper limit
    from synth.outputs.document import read_design
    from synth.outputs.export import discrete_model
    from tests.test_export import CASES

    document = read_design(CASES["pi_aw"], "pi_aw.json")
    model = discrete_model(document, document.design(1))
    plant = Plant.from_coefficients(*PLANT)
    period, tau = model.period, model.compute_delay
    resp = sampled_loop(plant, model).simulate(5.0, reference=3.0, points=10)
    assert resp.limited and np.max(resp.u_samples) == 4.0 and np.min(resp.u_samples) >= -2.0
    # the controller: the exported C on the verifier's measurements
    got = _run_exported_c(tmp_path, document, 3.0, resp.y_samples)
    assert np.max(np.abs(got - resp.u_samples)) <= 1e-9 * np.max(np.abs(resp.u_samples))
    # the plant between the samples, driven by the held, delayed output (_held_response)
    fine = period / 1000
    k = resp.u_samples.size
    t = np.arange(int(round(k * period / fine)) + 1) * fine
    idx = np.floor((t - tau) / period + 1e-9).astype(int)
    v = np.where(idx >= 0, resp.u_samples[np.clip(idx, 0, k - 1)], 0.0)
    y_ref = _held_response(PLANT, v, fine)
    i = np.round(resp.t / fine).astype(int)
    keep = (i > 0) & (i < t.size)
    assert np.max(np.abs(resp.y[keep] - y_ref[i[keep]])) <= 1e-9 * np.max(np.abs(y_ref))
