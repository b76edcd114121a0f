"""The problem: plant, requirements, region and search settings, read from one file.

Data flows from here to every later stage; nothing here imports a later stage.
"""

from synth.problem.plant import Plant
from synth.problem.region import Region
from synth.problem.requirements import (
    Problem,
    Requirements,
    SearchSettings,
    load_problem,
    parse_problem,
    problem_from_text,
)

__all__ = ["Plant", "Problem", "Region", "Requirements", "SearchSettings", "load_problem",
           "parse_problem", "problem_from_text"]
