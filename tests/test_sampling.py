"""The [sampling] table (synth/problem/sampling.py): parsing and the sample-rate advice.

External references: the contract ("[sampling] period > 0 s, compute_delay in
0 .. period, default 0"); the common-practice sample rate of 10 to 30 times
the closed-loop bandwidth (Franklin, Powell and Workman, Digital Control of
Dynamic Systems, ch. 11, from memory); the 10-90 % rise time of a first-order
lag, ln(9) time constants (common practice).
"""

from __future__ import annotations

import math

import pytest

from synth.errors import InputError
from synth.problem.requirements import problem_from_text
from synth.problem.sampling import Sampling, asked_bandwidth, sampling_advice

PLANT = "[plant]\nnumerator = [1.0]\ndenominator = [1.0, 1.0]\n"


def test_sampling_table_is_read():
    p = problem_from_text(PLANT + "[sampling]\nperiod = 0.01\ncompute_delay = 0.004\n")
    assert p.sampling == Sampling(period=0.01, compute_delay=0.004)
    assert problem_from_text(PLANT + "[sampling]\nperiod = 2\n").sampling.compute_delay == 0.0
    assert problem_from_text(PLANT).sampling is None


def test_compute_delay_may_equal_the_period():
    p = problem_from_text(PLANT + "[sampling]\nperiod = 0.01\ncompute_delay = 0.01\n")
    assert p.sampling.compute_delay == p.sampling.period


@pytest.mark.parametrize("table,key,needle", [
    ("period = 0.0", "sampling.period", "must be > 0"),
    ("period = -1.0", "sampling.period", "must be > 0"),
    ("period = 'fast'", "sampling.period", "must be a number"),
    ("period = nan", "sampling.period", "finite"),
    ("compute_delay = 0.0", "sampling.period", "missing"),
    ("period = 0.01\ncompute_delay = 0.02", "sampling.compute_delay", "must not exceed"),
    ("period = 0.01\ncompute_delay = -0.001", "sampling.compute_delay", ">= 0"),
    ("period = 0.01\nrate = 3", "sampling.rate", "unknown key"),
    ("period = 1e-12", "sampling.period", "time scales"),
])
def test_bad_sampling_is_one_line_naming_the_key(table, key, needle):
    with pytest.raises(InputError) as info:
        problem_from_text(PLANT + "[sampling]\n" + table + "\n", "f.toml")
    text = str(info.value)
    assert "\n" not in text and key in text and needle in text and "f.toml" in text


def test_sampling_must_be_a_table():
    with pytest.raises(InputError, match="must be a table"):
        problem_from_text("sampling = 3\n" + PLANT, "f.toml")


def test_asked_bandwidth_from_the_rise_time():
    # a first-order lag rises from 10 % to 90 % in ln(9) time constants (common practice)
    p = problem_from_text(PLANT + "[requirements]\nmax_rise_time = 0.5\n")
    bw, by = asked_bandwidth(p.requirements)
    assert bw == pytest.approx(math.log(9) / 0.5, rel=1e-12)
    assert "max_rise_time" in by


def test_asked_bandwidth_from_the_settling_time():
    # settling into a 2 % band within Ts asks for a decay rate ln(50)/Ts (the region's rule)
    p = problem_from_text(PLANT + "[requirements]\nmax_settling_time = 4.0\n")
    bw, _ = asked_bandwidth(p.requirements)
    assert bw == pytest.approx(math.log(50) / 4.0, rel=1e-12)
    assert asked_bandwidth(problem_from_text(PLANT).requirements) is None


@pytest.mark.parametrize("times,word", [(5.0, "warning:"), (20.0, "note:"), (40.0, None)])
def test_sample_rate_advice_follows_common_practice(times, word):
    # bandwidth ln(9)/tr; choose T so that 2 pi / T = times * bandwidth
    p = problem_from_text(PLANT + "[requirements]\nmax_rise_time = 1.0\n")
    bw = math.log(9.0)
    period = 2 * math.pi / (times * bw)
    advice = sampling_advice(Sampling(period), p.requirements)
    assert advice.ratio == pytest.approx(times, rel=1e-12)
    if word is None:
        assert advice.message is None
    else:
        assert advice.message.startswith(word)
        assert f"{times:.3g} times" in advice.message
