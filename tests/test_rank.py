"""Ranking rules: feasible first, nearest infeasible next, ties to the simpler, no duplicates."""

import math

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from synth.problem.requirements import problem_from_text
from synth.rank import Refs, rank_designs, reference_scales, score_arrays
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


def test_score_terms_move_the_documented_way():
    refs = Refs(settling_time=2.0, control_effort=1.0)
    base = dict(ms=1.5, lo=0.2, hi=5.0, ts=2.0, effort=1.0, n_params=2, fv=1.0)

    def sc(**kw):
        args = {**base, **kw}
        return float(score_arrays(args["ms"], args["lo"], args["hi"], args["ts"], args["effort"],
                                  args["n_params"], refs, final_value=args["fv"]))

    s0 = sc()
    assert sc(ms=2.5) > s0 and sc(ts=4.0) > s0 and sc(effort=100.0) > s0
    assert sc(n_params=4) > s0 and sc(hi=50.0, lo=0.02) < s0
    # tracking: an output that barely moves (or moves the wrong way) costs; above 1 it is free
    assert sc(fv=0.5) > s0 and sc(fv=2.0) == s0 and sc(fv=-1.0) == sc(fv=0.0) > sc(fv=0.5)
    assert sc(effort=1e3) > sc(effort=1e2)  # still penalised far out (logarithmic)
    assert 0.0 <= s0 < 1.0
    assert sc(ms=float("nan")) > s0  # a missing value counts as the worst


def test_reference_scales_come_from_the_requirements():
    p = problem_from_text("""
[plant]
numerator = [1.0]
denominator = [1.0, 1.0]
[requirements]
max_settling_time = 4.0
max_control_effort = 12.0
""")
    r = reference_scales(p)
    assert r.settling_time == 4.0 and r.control_effort == 12.0
