"""Public import path kept for users: the schema now lives in :mod:`synth.problem`."""

from synth.problem.region import (
    Region,
    damping_from_overshoot,
    decay_rate_from_settling,
    overshoot_from_damping,
)
from synth.problem.requirements import (
    STRUCTURES,
    Problem,
    Requirements,
    SearchSettings,
    load_problem,
    parse_problem,
    problem_from_text,
)

__all__ = ["Problem", "Region", "Requirements", "STRUCTURES", "SearchSettings",
           "damping_from_overshoot", "decay_rate_from_settling", "load_problem",
           "overshoot_from_damping", "parse_problem", "problem_from_text"]
