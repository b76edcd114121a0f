"""Every strategy follows one protocol; a family and a strategy plug in from one file.

External references used here:

* numpy.roots for the closed-loop poles of proposed and designed loops, and
  numpy.polyval for comparing compensators by their frequency response;
* tests/independent.py (numpy.roots, scipy.signal.step, scipy.signal.freqresp)
  for re-verifying feasible designs without synth's verifier;
* textbook plants: K. Ogata, *Modern Control Engineering*, 4th ed., 2002,
  sec. 6-8, G(s) = 4 / (s (s + 2)) for lead compensation (from memory);
  K. J. Astrom and T. Hagglund, "Benchmark systems for PID control", IFAC
  Workshop on Digital Control, Terrassa, 2000, G(s) = 1 / (s + 1)^3 (from
  memory); and the double integrator 1 / s^2, which no proportional gain
  makes asymptotically stable (common practice).
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, replace
from typing import ClassVar

import numpy as np
import pytest
from independent import independent_check

from synth.design import run_design
from synth.errors import InputError, StrategyDeclined
from synth.families import FAMILIES, Family, family_for
from synth.problem.requirements import problem_from_text
from synth.strategies import (
    ORIGINS,
    Candidate,
    SearchContext,
    candidate_from_params,
    default_strategies,
    family_work,
)

STRATEGIES = default_strategies()


def _problem(plant: str, req: str, search: str = ""):
    return problem_from_text(f"[plant]\n{plant}\n[requirements]\n{req}\n[search]\n{search}\n")


# Ogata's lead example plant with a looser region than the textbook's
OGATA = _problem("numerator = [4.0]\ndenominator = [1.0, 2.0, 0.0]",
                 "max_overshoot_percent = 25.0\nmax_settling_time = 2.5",
                 'structures = ["lead", "PD"]\neffort = 0.3\nseed = 2')
# the PID benchmark plant
BENCHMARK = _problem('expression = "1/(s+1)^3"',
                     "max_overshoot_percent = 10.0\nmax_steady_state_error = 0.0\n"
                     "max_peak_sensitivity = 1.6\nmax_settling_time = 20.0",
                     'structures = ["PI", "PID"]\neffort = 0.3')
# the double integrator: P cannot, a lead can
DOUBLE_INTEGRATOR = _problem("numerator = [1.0]\ndenominator = [1.0, 0.0, 0.0]",
                             "max_overshoot_percent = 25.0\nmax_settling_time = 4.0",
                             'structures = ["P", "lead"]\neffort = 0.3')


def _context(strategy, family, seed=3, effort=0.3, **extra):
    return SearchContext(seed=seed, work=int(strategy.share * family_work(family, effort)),
                         **extra)


def _stable(num_c, den_c, problem) -> bool:
    char = np.polyadd(np.polymul(den_c, problem.plant.den), np.polymul(num_c, problem.plant.num))
    return bool(np.all(np.roots(np.trim_zeros(char, "f")).real < 0))  # numpy.roots


# ----------------------------------------------------------------------------
# the registry and the protocol
# ----------------------------------------------------------------------------


def test_registry_covers_every_contract_origin():
    # every origin the contract names has a strategy, and no strategy uses another name
    assert {s.origin for s in STRATEGIES} == set(ORIGINS)
    names = [s.name for s in STRATEGIES]
    assert len(set(names)) == len(names)
    assert [s.order for s in STRATEGIES] == sorted(s.order for s in STRATEGIES)
    # the shares split one family's work
    assert all(0.0 < s.share <= 1.0 for s in STRATEGIES)
    assert sum(s.share for s in STRATEGIES) <= 1.0 + 1e-12


@pytest.mark.parametrize("strategy", STRATEGIES, ids=lambda s: s.name)
@pytest.mark.parametrize("structure", list(FAMILIES))
def test_every_strategy_conforms(strategy, structure):
    fam = family_for(structure, OGATA)
    ctx = _context(strategy, fam)
    try:
        cands = list(strategy.propose(OGATA, fam, ctx))
    except StrategyDeclined:
        cands = None
    if cands is not None:
        for c in cands:
            assert isinstance(c, Candidate)
            assert c.structure == fam.name and c.origin == strategy.origin
            num, den = np.asarray(c.num), np.asarray(c.den)
            assert np.all(np.isfinite(num)) and np.all(np.isfinite(den))
            assert den[0] == 1.0 and num.size <= den.size  # monic, proper
            json.dumps(dict(c.provenance), allow_nan=False)  # JSON-ready provenance
            if c.params:
                # the parameters name the same compensator (numpy.polyval on the jw axis)
                n2, d2 = fam.poly(np.asarray(c.params))
                s = 1j * fam.space.w_char * np.geomspace(0.01, 100.0, 7)
                np.testing.assert_allclose(np.polyval(n2, s) / np.polyval(d2, s),
                                           np.polyval(num, s) / np.polyval(den, s), rtol=1e-6)
    # the same context gives the same proposals (seeded, counted in work, no clock)
    try:
        again = list(strategy.propose(OGATA, fam, ctx))
    except StrategyDeclined:
        again = None
    assert (again is None) == (cands is None)
    if cands is not None:
        assert [(c.num, c.den) for c in again] == [(c.num, c.den) for c in cands]
    # no work, no proposals
    assert list(strategy.propose(OGATA, fam, replace(ctx, work=0))) == []


@pytest.mark.parametrize("strategy", STRATEGIES, ids=lambda s: s.name)
@pytest.mark.parametrize("which", [0, 1])
def test_every_strategy_stabilises_the_textbook_lead_plant(strategy, which):
    # 4/(s(s+2)) is stabilised by any lead or PD with a positive gain (and by PI and PID
    # with small enough integral action): each strategy proposes at least one such loop
    # (numpy.roots) for the structures it designs
    structure = (["PI", "PID"] if strategy.name == "circle" else ["lead", "PD"])[which]
    fam = family_for(structure, OGATA)
    cands = strategy.propose(OGATA, fam, _context(strategy, fam))
    assert any(_stable(c.num, c.den, OGATA) for c in cands)


# ----------------------------------------------------------------------------
# a throwaway family and a throwaway strategy, from this file alone
# ----------------------------------------------------------------------------


@dataclass(frozen=True)
class RollOffFamily(Family):
    """``C(s) = K / (s + p)``: a gain with a first-order roll-off (throwaway, for this test)."""

    name: ClassVar[str] = "roll-off"
    position: ClassVar[int] = 95
    param_names: ClassVar[tuple[str, ...]] = ("gain", "log10_pole")

    def _bounds(self):
        return [self._gain_bound(), self._logw_bound()]

    def _polys(self, X):
        K = self.space.gain(X[:, 0])
        p = 10.0 ** X[:, 1]
        return K[:, None], np.stack([np.ones_like(p), p], axis=1)

    def natural(self, x):
        return {"gain": float(self.space.gain(x[0])), "pole": 10.0 ** float(x[1])}

    def from_polys(self, num, den):
        n, d = np.trim_zeros(np.asarray(num, float), "f"), np.trim_zeros(np.asarray(den, float), "f")
        if n.size != 1 or d.size != 2 or d[1] / d[0] <= 0:
            return None
        return np.array([self._u(n[0] / d[0]), math.log10(d[1] / d[0])])

    def near_gain(self, k):
        return np.array([self._u(k * self.space.w_max), math.log10(self.space.w_max)])


@dataclass(frozen=True)
class GridProbe:
    """Proposes the family's compensators on a seeded sample of its box (throwaway)."""

    name: str = "grid-probe"
    origin: str = "search"
    share: float = 0.05
    order: int = 5
    calls: tuple = ()

    def propose(self, problem, family, context):
        lo, hi = family.bounds()
        n = min(20, int(context.work))
        X = lo + (hi - lo) * np.random.default_rng(context.seed).random((n, lo.size))
        return [candidate_from_params(family, x, self.origin, {"method": "grid probe"})
                for x in X]


@dataclass(frozen=True)
class Decliner:
    name: str = "decliner"
    origin: str = "convex"
    share: float = 0.05
    order: int = 1

    def propose(self, problem, family, context):
        raise StrategyDeclined(f"nothing for {family.name}")


def test_a_throwaway_family_and_strategy_plug_in_from_one_file():
    # the lead plant with a roll-off compensator: K/(s+p) around 4/(s(s+2)) gives the cubic
    # s^3 + (2+p) s^2 + 2p s + 4K, stable iff 0 < 4K < 2p(2+p) (Routh; common practice)
    problem = _problem("numerator = [4.0]\ndenominator = [1.0, 2.0, 0.0]",
                       "max_settling_time = 12.0", "effort = 0.2\nkeep = 20")
    run = run_design(problem, strategies=[*STRATEGIES, GridProbe(), Decliner()],
                     families=[FAMILIES["P"], RollOffFamily])
    doc = json.loads(json.dumps(run.to_json(), allow_nan=False))
    assert doc["search"]["structures"] == ["P", "roll-off"]
    assert doc["search"]["strategies"] == ["decliner", "grid-probe", "placement", "convex",
                                           "circle", "search"]
    assert doc["search"]["declined"] == ["decliner on P: nothing for P",
                                         "decliner on roll-off: nothing for roll-off"]
    rolled = [d for d in doc["designs"] if d["structure"] == "roll-off"]
    assert rolled and any(d["feasible"] for d in rolled)
    for d in rolled:
        k = d["compensator"]["gain"]
        (p,) = -np.roots(d["compensator"]["denominator"]).real
        stable = 0.0 < 4 * k < 2 * p * (2 + p)
        assert stable == _stable(d["compensator"]["numerator"], d["compensator"]["denominator"],
                                 problem)
        if d["feasible"]:
            assert stable
            independent_check(problem, d)


@dataclass(frozen=True)
class Broken:
    error: type = ZeroDivisionError
    name: str = "broken"
    origin: str = "search"
    share: float = 0.05
    order: int = 1

    def propose(self, problem, family, context):
        raise self.error("a strategy bug or an input error is never filed as a decline")


@pytest.mark.parametrize("error", [ZeroDivisionError, InputError])
def test_errors_other_than_a_decline_propagate(error):
    problem = _problem("numerator = [1.0]\ndenominator = [1.0, 1.0]", "", "effort = 0.1")
    with pytest.raises(error):
        run_design(problem, strategies=[Broken(error)])


def test_a_candidate_of_another_family_is_a_bug():
    @dataclass(frozen=True)
    class Liar(GridProbe):
        def propose(self, problem, family, context):
            other = family_for("P", problem)
            return [candidate_from_params(other, other.near_gain(1.0), self.origin)]

    problem = _problem("numerator = [1.0]\ndenominator = [1.0, 1.0]", "", "effort = 0.1")
    with pytest.raises(TypeError):
        run_design(problem, strategies=[Liar()], families=["PI"])


def test_a_structure_that_cannot_stabilise_costs_almost_nothing():
    # 1/s^2 with P: s^2 + K is never asymptotically stable (common practice), and explain
    # knows it; the P family gets a sliver of the work but still lists nearest designs
    run = run_design(DOUBLE_INTEGRATOR)
    stats = run.stats
    assert "P" in stats["futile"] and "lead" not in stats["futile"]
    assert stats["work"]["P"] * 20 < stats["work"]["lead"]
    p_designs = [d for d in run.designs if d.candidate.structure == "P"]
    assert all(not d.verdict.feasible for d in p_designs)
    feasible = [d for d in run.to_json()["designs"] if d["feasible"]]
    assert feasible and all(d["structure"] == "lead" for d in feasible)
    for d in feasible:
        independent_check(DOUBLE_INTEGRATOR, d)


# ----------------------------------------------------------------------------
# the strategies on textbook plants
# ----------------------------------------------------------------------------


@pytest.mark.parametrize("problem", [OGATA, BENCHMARK], ids=["ogata-lead", "pid-benchmark"])
def test_each_strategy_alone_and_all_together(problem):
    # every feasible design of every strategy passes the independent check; the run with
    # every strategy has a feasible design at least as good as placement alone and as the
    # global search alone (its candidate set contains theirs: seeds derive from the
    # strategy's name, placement runs first, and the global search polishes earlier
    # candidates beside its own population, never inside it; the convex strategy starts
    # from earlier candidates, so alone it may try other fixed parts)
    best = {}
    for strategy in STRATEGIES:
        run = run_design(problem, strategies=[strategy])
        doc = run.to_json()
        for d in doc["designs"]:
            assert d["origin"] == strategy.origin
            if d["feasible"]:
                independent_check(problem, d)
        scores = [d.score for d in run.designs if d.verdict.feasible]
        best[strategy.name] = min(scores) if scores else None
    full = run_design(problem)
    doc = full.to_json()
    feasible = [d for d in doc["designs"] if d["feasible"]]
    assert feasible, "the textbook plant has a feasible design"
    for d in feasible:
        independent_check(problem, d)
    top = min(d.score for d in full.designs if d.verdict.feasible)
    for name, score in best.items():
        if score is not None and name in ("placement", "search"):
            # (to 1e-6: the ranking keeps one of two designs its "same design" rule merges)
            assert top <= score * (1 + 1e-6), (name, score, top)


def test_latin_hypercube_hits_every_stratum_once_like_scipys():
    # the defining property of a Latin hypercube (McKay, Beckman and Conover 1979), as
    # scipy.stats.qmc.LatinHypercube samples it: every dimension's n strata hit exactly once
    from scipy.stats import qmc

    from synth.strategies.evolve import _latin_hypercube

    lo, hi = np.array([-2.0, 0.0, 1.0]), np.array([2.0, 5.0, 1.5])
    n = 17
    ours = _latin_hypercube(np.random.default_rng(4), n, lo, hi)
    ref = lo + qmc.LatinHypercube(d=3, rng=np.random.default_rng(4)).random(n) * (hi - lo)
    for sample in (ours, ref):
        unit = (sample - lo) / (hi - lo)
        assert np.all((unit >= 0) & (unit < 1))
        for j in range(3):
            assert sorted(np.floor(unit[:, j] * n).astype(int)) == list(range(n))
