"""Public import path kept for users: the plant now lives in :mod:`synth.problem.plant`."""

from synth.numerics.poly import common_roots, format_complex, poly_from_roots, trim
from synth.problem.plant import Plant, describe_factored, factor_strings

__all__ = ["Plant", "common_roots", "describe_factored", "factor_strings", "format_complex",
           "poly_from_roots", "trim"]
