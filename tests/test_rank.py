"""Ranking rules: feasible first, then the objective; nearest infeasible next, no duplicates.

External references: the textbook overshoot of a second-order loop (common
practice), the identity IE = 1/ki of a PI loop after a unit load step (common
practice; Astrom and Hagglund, Advanced PID Control, 2006, sec. 4.3), and
peak sensitivities from scipy.signal.freqresp.
"""

import dataclasses
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import signal

from synth.problem.requirements import Requirements, problem_from_text
from synth.rank import rank_designs
from synth.strategies import Candidate
from synth.verify.verdict import verify

# 4 / (s (s + 2)) under P control K: wn = 2 sqrt(K), zeta = 1 / (2 sqrt(K))
PROBLEM = problem_from_text("""
[plant]
numerator = [4.0]
denominator = [1.0, 2.0, 0.0]
[requirements]
max_overshoot_percent = 10.0
[search]
keep = 10
""")


def _cand(structure, num, den, origin="search"):
    return Candidate(structure=structure, origin=origin, params=(0.0,) * {"P": 1, "lead": 3}[structure],
                     num=tuple(num), den=tuple(den))


def _pairs(cands):
    return [(c, verify(PROBLEM, np.asarray(c.num), np.asarray(c.den))) for c in cands]


def _overshoot(k):
    zeta = 1.0 / (2.0 * math.sqrt(k))
    return 100 * math.exp(-math.pi * zeta / math.sqrt(1 - zeta**2)) if zeta < 1 else 0.0


def test_feasible_first_then_nearest_infeasible():
    gains = [0.2, 0.5, 1.0, 3.0, 6.0]
    ranked = rank_designs(_pairs([_cand("P", [k], [1.0]) for k in gains]), PROBLEM)
    feas = [d.verdict.feasible for d in ranked]
    assert feas == sorted(feas, reverse=True)
    # the textbook overshoot formula (common practice) says which gains meet 10 %
    ok = {k for k in gains if _overshoot(k) <= 10.0}
    assert {d.candidate.num[0] for d in ranked if d.verdict.feasible} == ok
    # infeasible ones are ordered by how far they miss: smaller overshoot first
    bad = [d.candidate.num[0] for d in ranked if not d.verdict.feasible]
    assert bad == sorted(bad, key=_overshoot)
    assert [d.rank for d in ranked] == list(range(1, len(ranked) + 1))


def test_identical_controllers_collapse_to_the_simpler_structure():
    p = _cand("P", [0.8], [1.0])
    lead = _cand("lead", [0.8, 0.8 * 3.0], [1.0, 3.0])  # zero on the pole: C = 0.8
    near = _cand("P", [0.8 * (1 + 1e-4)], [1.0])
    ranked = rank_designs(_pairs([lead, near, p]), PROBLEM)
    assert len(ranked) == 1
    assert ranked[0].candidate.structure == "P"


def test_keep_limits_the_list():
    cands = [_cand("P", [k], [1.0]) for k in (0.2, 0.3, 0.45, 0.6, 0.8)]
    assert len(rank_designs(_pairs(cands), PROBLEM, keep=2)) == 2


@settings(max_examples=25, deadline=None, derandomize=True)
@given(st.permutations(list(range(6))))
def test_order_does_not_depend_on_input_order(perm):
    cands = [_cand("P", [k], [1.0]) for k in (0.15, 0.3, 0.5, 0.9, 2.0, 5.0)]
    pairs = _pairs(cands)
    a = [d.candidate for d in rank_designs(pairs, PROBLEM)]
    b = [d.candidate for d in rank_designs([pairs[i] for i in perm], PROBLEM)]
    assert a == b


@settings(max_examples=25, deadline=None, derandomize=True)
@given(st.lists(st.floats(0.05, 8.0), min_size=2, max_size=6, unique=True), st.floats(0.05, 8.0))
def test_adding_a_candidate_keeps_the_order_of_the_others(gains, extra):
    # the score uses problem-only references, so it cannot depend on the other candidates
    base = _pairs([_cand("P", [k], [1.0]) for k in gains])
    more = base + _pairs([_cand("P", [extra], [1.0])])
    a = [d.candidate for d in rank_designs(base, PROBLEM, keep=100)]
    b = [d.candidate for d in rank_designs(more, PROBLEM, keep=100) if d.candidate in a]
    assert b == [c for c in a if c in b]


def _pi_problem(objective, extra=""):
    return problem_from_text(f"""
[plant]
numerator = [1.0]
denominator = [1.0, 1.0]
[requirements]
max_steady_state_error = 0.0
{extra}
[search]
objective = "{objective}"
""")


def _pi(kp, ki):
    return Candidate(structure="PI", origin="search", params=(0.0, 0.0), num=(kp, ki),
                     den=(1.0, 0.0))


def test_disturbance_objective_orders_by_load_iae_one_over_ki():
    # PI kp + ki/s on 1/(s+1): the load response 1/(s^2 + (1+kp) s + ki) is overdamped for
    # these gains, so IAE = IE = 1/ki (common practice): the largest ki ranks first
    p = _pi_problem("disturbance")
    cands = [_pi(1.0, ki) for ki in (0.05, 0.2, 0.1)]
    ranked = rank_designs([(c, verify(p, c.num, c.den)) for c in cands], p)
    assert [d.candidate.num[1] for d in ranked] == [0.2, 0.1, 0.05]
    for d in ranked:
        assert d.verdict.metrics["load_iae"] == pytest.approx(1.0 / d.candidate.num[1], rel=1e-3)
    # a loop without integral action has an unbounded load IAE: it ranks after them
    pc = Candidate(structure="P", origin="search", params=(0.0,), num=(5.0,), den=(1.0,))
    p2 = dataclasses.replace(p, requirements=Requirements())
    both = rank_designs([(c, verify(p2, c.num, c.den)) for c in [pc, *cands]], p2)
    assert both[-1].candidate.structure == "P" and both[-1].score == math.inf


def _freqresp_ms(num, den):
    w = np.geomspace(1e-3, 1e3, 200001)
    _, L = signal.freqresp(signal.TransferFunction(np.polymul(num, [1.0]),
                                                   np.polymul(den, [1.0, 1.0])), w)
    return float(np.max(1.0 / np.abs(1.0 + L)))


def test_robustness_objective_orders_by_peak_sensitivity():
    p = _pi_problem("robustness")
    cands = [_pi(kp, ki) for kp, ki in ((4.0, 8.0), (0.5, 0.2), (1.0, 3.0))]
    ranked = rank_designs([(c, verify(p, c.num, c.den)) for c in cands], p)
    ms = [_freqresp_ms(d.candidate.num, d.candidate.den) for d in ranked]
    assert ms == sorted(ms)                       # scipy.signal.freqresp's peaks, ascending
    assert [d.score for d in ranked] == sorted(d.score for d in ranked)


def test_objective_value_does_not_depend_on_the_other_candidates():
    from synth.problem.objectives import objective_value

    p = _pi_problem("balanced")
    v = verify(p, [1.0, 0.3], [1.0, 0.0])
    ranked = rank_designs([(_pi(1.0, 0.3), v), (_pi(2.0, 0.1), verify(p, [2.0, 0.1], [1.0, 0.0]))],
                          p)
    mine = [d for d in ranked if d.candidate.num == (1.0, 0.3)][0]
    assert mine.score == objective_value(p, v.metrics)
