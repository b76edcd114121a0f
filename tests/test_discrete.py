"""The discrete controller model (synth/verify/discrete.py) against outside references.

* Linear part: scipy.signal.cont2discrete (method "bilinear") followed by
  scipy.signal.dlsim; pre-warped Tustin is plain Tustin at the equivalent
  period 2/c (Franklin, Powell and Workman, Digital Control of Dynamic
  Systems, ch. 6, from memory: s = c (z - 1)/(z + 1), c = w / tan(w T / 2)).
* Limits and anti-windup: the observer-form relation
  A_aw v = T r - S y + (A_aw - R) u with u the limited v (Astrom and
  Wittenmark, Computer-Controlled Systems, sec. 9.4, from memory), evaluated
  with scipy.signal.lfilter on the whole sequences.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import cont2discrete, dlsim, lfilter

from synth.errors import InputError
from synth.verify.controller import AntiWindup, Controller, ReferenceShaping
from synth.verify.discrete import DF2T, SOS, ZMap, discrete_controller


def _dlsim(num, den, period, u):
    nd, dd, _ = cont2discrete((np.asarray(num, float), np.asarray(den, float)), period,
                              method="bilinear")
    _, y = dlsim((np.ravel(nd), dd, period), u)
    return np.ravel(y)


def _ctrl(num, den, **kw):
    return Controller(tuple(float(x) for x in num), tuple(float(x) for x in den), **kw)


def _signals(n=300, seed=3):
    rng = np.random.default_rng(seed)
    return rng.standard_normal(n), rng.standard_normal(n)


# a third-order compensator: integrator, lead, complex pole pair (a cascade of sections)
NUM3 = np.polymul([2.0, 1.0], np.polymul([1.0, 3.0], [1.0, 0.5]))
DEN3 = np.polymul([1.0, 0.0], np.polymul([1.0, 10.0], [1.0, 4.0, 20.0]))

CASES = [
    ("PI", [2.0, 1.0], [1.0, 0.0]),
    ("lead", [5.0, 10.0], [1.0, 40.0]),
    ("PID", [3.0, 8.0, 2.0], [0.05, 1.0, 0.0]),
    ("third order", NUM3, DEN3),
]


@pytest.mark.parametrize("name,num,den", CASES, ids=[c[0] for c in CASES])
def test_linear_part_matches_cont2discrete_and_dlsim(name, num, den):
    period = 0.02
    r, y = _signals()
    model = discrete_controller(_ctrl(num, den), ZMap("tustin", period))
    expected = _dlsim(num, den, period, r - y)
    got = model.simulate(r, y)
    assert np.max(np.abs(got - expected)) <= 1e-9 * np.max(np.abs(expected))
    order = len(den) - 1
    assert model.realisation == (DF2T if order <= 2 else SOS)
    assert all(s.order <= 2 for s in model.sections)


@pytest.mark.parametrize("name,num,den", CASES, ids=[c[0] for c in CASES])
def test_prewarped_tustin_is_tustin_at_the_equivalent_period(name, num, den):
    period, warp = 0.02, 7.0
    c = warp / np.tan(warp * period / 2)
    r, y = _signals(seed=5)
    model = discrete_controller(_ctrl(num, den), ZMap("tustin-prewarp", period, warp))
    expected = _dlsim(num, den, 2.0 / c, r - y)
    got = model.simulate(r, y)
    assert np.max(np.abs(got - expected)) <= 1e-9 * np.max(np.abs(expected))


def test_a_fast_loop_is_an_ordinary_loop():
    # C_k(s) = k^N num(s/k) / (k^M den(s/k)) = k^(N-M) C(s/k), sampled k times faster, gives the
    # same sequence as C at the original period times k^(N-M) (Tustin depends on s T only); the
    # reference is computed at the original scale, where cont2discrete is well conditioned
    k = 1e5
    num = np.asarray(NUM3) * k ** np.arange(NUM3.size)
    den = np.asarray(DEN3) * k ** np.arange(DEN3.size)
    period = 0.02
    r, y = _signals(seed=7)
    model = discrete_controller(_ctrl(num, den), ZMap("tustin", period / k))
    expected = _dlsim(NUM3, DEN3, period, r - y) * k ** (NUM3.size - DEN3.size)
    got = model.simulate(r, y)
    assert np.max(np.abs(got - expected)) <= 1e-9 * np.max(np.abs(expected))


def test_batch_of_sequences_matches_dlsim_column_by_column():
    period = 0.05
    num, den = CASES[3][1], CASES[3][2]
    model = discrete_controller(_ctrl(num, den), ZMap("tustin", period))
    rng = np.random.default_rng(11)
    r, y = rng.standard_normal((120, 4)), rng.standard_normal((120, 4))
    got = model.simulate(r, y)
    for j in range(4):
        expected = _dlsim(num, den, period, r[:, j] - y[:, j])
        assert np.max(np.abs(got[:, j] - expected)) <= 1e-9 * np.max(np.abs(expected))


def test_setpoint_weights_follow_the_weighted_pid():
    # PID: Kp + Ki/s + Kd s/(Tf s + 1); u = Kp (b r - y) + Ki/s (r - y) + Kd s/(Tf s + 1) (c r - y)
    # (Astrom and Hagglund, Advanced PID Control, ch. 3)
    kp, ki, kd, tf, b, c = 2.0, 1.5, 0.4, 0.05, 0.4, 0.2
    num = [kp * tf + kd, kp + ki * tf, ki]
    den = [tf, 1.0, 0.0]
    period = 0.01
    shaping = ReferenceShaping(setpoint_weights=(b, c))
    model = discrete_controller(_ctrl(num, den, shaping=shaping), ZMap("tustin", period))
    r, y = _signals(seed=13)
    reference_path = [kp * b * tf + kd * c, kp * b + ki * tf, ki]
    expected = _dlsim(reference_path, den, period, r) - _dlsim(num, den, period, y)
    got = model.simulate(r, y)
    assert np.max(np.abs(got - expected)) <= 1e-9 * np.max(np.abs(expected))


def test_prefilter_runs_ahead_of_the_error():
    num, den = [2.0, 1.0], [1.0, 0.0]
    fnum, fden = [1.0, 2.0], [0.5, 1.0, 3.0, 4.0]   # third order: its own cascade
    period = 0.05
    shaping = ReferenceShaping(numerator=tuple(fnum), denominator=tuple(fden))
    model = discrete_controller(_ctrl(num, den, shaping=shaping), ZMap("tustin", period))
    r, y = _signals(seed=17)
    filtered = _dlsim(fnum, fden, period, r)
    expected = _dlsim(num, den, period, filtered - y)
    got = model.simulate(r, y)
    assert np.max(np.abs(got - expected)) <= 1e-9 * np.max(np.abs(expected))
    assert len(model.prefilter) == 2


def _observer_form_check(model, r, y, u):
    """u must equal the limited v of A_aw v = F r... - S y + (A_aw - A) u (scipy.signal.lfilter)."""
    s, a = model.transfer()
    a_aw = model.tracking_polynomial()
    fn, fd = np.ones(1), np.ones(1)
    for sec in model.prefilter:
        fn, fd = np.polymul(fn, sec.b), np.polymul(fd, sec.a)
    t = s
    if model.sections[0].t is not None:
        t = np.asarray(model.sections[0].t)
        for sec in model.sections[1:]:
            t = np.polymul(t, sec.b)
    v = (lfilter(t, a_aw, lfilter(fn, fd, r)) - lfilter(s, a_aw, y)
         + lfilter(np.polysub(a_aw, a), a_aw, u))
    held = np.concatenate([[0.0], u[:-1]])
    step = (model.max_rate or np.inf) * model.period
    lo, hi = model.limits or (-np.inf, np.inf)
    expected = np.clip(np.clip(v, held - step, held + step), lo, hi)
    return np.max(np.abs(expected - u)) / np.max(np.abs(u))


AW_CASES = [
    ("PI back-calculation", [2.0, 1.0], [1.0, 0.0],
     AntiWindup("back-calculation", {"tracking_time": 0.8}), None),
    ("PID back-calculation, set-point weights", [2.1, 2.075, 1.5], [0.05, 1.0, 0.0],
     AntiWindup("back-calculation", {"tracking_time": 0.5}),
     ReferenceShaping(setpoint_weights=(0.5, 0.0))),
    ("unstable third order, observer, prefilter", np.polymul([2, 1], [1, 3, 1]),
     np.polymul([1, 0], [1, -0.5, 4]), AntiWindup("observer", {"tracking_time": 0.3}),
     ReferenceShaping(numerator=(1.0,), denominator=(0.5, 1.0))),
    ("third order back-calculation, sections", NUM3, DEN3,
     AntiWindup("back-calculation", {"tracking_time": 0.3}), None),
    ("PI conditioning", [2.0, 1.0], [1.0, 0.0], AntiWindup("conditioning", {}), None),
    ("PI without anti-windup", [2.0, 1.0], [1.0, 0.0], None, None),
]


@pytest.mark.parametrize("name,num,den,aw,shaping", AW_CASES, ids=[c[0] for c in AW_CASES])
def test_limits_and_anti_windup_follow_the_observer_form(name, num, den, aw, shaping):
    period = 0.05
    model = discrete_controller(_ctrl(num, den, anti_windup=aw, shaping=shaping),
                                ZMap("tustin-prewarp", period, 2.0), limits=(-1.0, 1.5),
                                max_rate=20.0)
    k = np.arange(400)
    r = np.where(k > 10, 50.0, 0.0) + np.where(k > 200, -80.0, 0.0)
    y = 0.3 * np.sin(0.05 * k)
    u = model.simulate(r, y)
    assert _observer_form_check(model, r, y, u) <= 1e-9
    assert u.min() >= -1.0 and u.max() <= 1.5
    assert np.max(np.abs(np.diff(np.concatenate([[0.0], u])))) <= 20.0 * period * (1 + 1e-12)
    # the run really went into the limits, so the check covered the held output
    assert np.sum(u == 1.5) > 5
    # with anti-windup the output leaves the upper limit soon after the reference drops;
    # without it the wound-up integrator holds it there (the textbook windup)
    assert (np.sum(u == -1.0) > 5) == (aw is not None)


def test_back_calculation_moves_only_the_integrator_pole():
    # Tustin maps s = -1/Tt to z = (c - 1/Tt)/(c + 1/Tt) and keeps the filter pole's image
    period, tt, tf = 0.05, 0.8, 0.05
    num, den = [2.1, 2.075, 1.5], [tf, 1.0, 0.0]
    model = discrete_controller(
        _ctrl(num, den, anti_windup=AntiWindup("back-calculation", {"tracking_time": tt})),
        ZMap("tustin", period), limits=(-1.0, 1.0))
    c = 2.0 / period
    roots = np.sort(np.roots(model.tracking_polynomial()).real)
    expected = np.sort([(c - 1 / tt) / (c + 1 / tt), (c - 1 / tf) / (c + 1 / tf)])
    assert np.allclose(roots, expected, rtol=1e-9, atol=0)


def test_a_controller_given_in_z_runs_as_given():
    numz, denz = [0.5, -0.3, 0.05], [1.0, -1.2, 0.2]
    model = discrete_controller(_ctrl([1.0], [1.0]), ZMap("direct", 0.1), given_z=(numz, denz))
    r, y = _signals(seed=19)
    expected = lfilter(numz, denz, r - y)
    assert np.max(np.abs(model.simulate(r, y) - expected)) <= 1e-9 * np.max(np.abs(expected))


@pytest.mark.parametrize("aw,num,den,shaping,match", [
    (AntiWindup("clamp-it", {}), [2.0, 1.0], [1.0, 0.0], None, "unknown anti-windup scheme"),
    (AntiWindup("back-calculation", {}), [2.0, 1.0], [1.0, 0.0], None, "needs tracking_time"),
    (AntiWindup("back-calculation", {"tracking_time": -1.0}), [2.0, 1.0], [1.0, 0.0], None,
     "tracking_time must be"),
    (AntiWindup("back-calculation", {"tracking_time": 1.0}), [5.0, 10.0], [1.0, 40.0], None,
     "integral action"),
    (AntiWindup("conditioning", {}), [1.0, -1.0], [1.0, 0.0], None, "minimum-phase"),
    (None, [1.0, 2.0, 1.0], [1.0, 0.0], None, "improper"),
    (None, np.polymul([1, 1], [1, 2]), np.polymul([1, 3], [1, 4]),
     ReferenceShaping(setpoint_weights=(0.5, 0.0)), "P, PI, PD or PID"),
])
def test_bad_designs_are_one_line_errors(aw, num, den, shaping, match):
    with pytest.raises(InputError, match=match):
        discrete_controller(_ctrl(num, den, anti_windup=aw, shaping=shaping),
                            ZMap("tustin", 0.05), limits=(-1.0, 1.0))


def test_bad_limits_and_rate():
    with pytest.raises(InputError, match="low < high"):
        discrete_controller(_ctrl([1.0], [1.0]), ZMap("tustin", 0.1), limits=(1.0, 1.0))
    with pytest.raises(InputError, match="max_rate"):
        discrete_controller(_ctrl([1.0], [1.0]), ZMap("tustin", 0.1), max_rate=0.0)
