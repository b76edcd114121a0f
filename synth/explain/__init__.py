"""``synth explain``: what proportional gain alone can and cannot do for a plant, and why.

The account is built from exact facts of the root-locus engine and the plant's
structure (see :mod:`synth.explain.account`); nothing is canned text.

Public names: :func:`explain_problem`, :class:`Explanation`,
:func:`parity_interlacing`, :func:`peak_sensitivity_bounds`,
:func:`structural_facts`.
"""

from synth.explain.account import SCHEMA, BestAccount, Explanation, explain_problem
from synth.explain.advice import Suggestion
from synth.explain.gain import Reason
from synth.explain.structure import (
    ParityCheck,
    StructuralFacts,
    parity_interlacing,
    peak_sensitivity_bounds,
    structural_facts,
)

__all__ = [
    "SCHEMA", "BestAccount", "Explanation", "ParityCheck", "Reason", "StructuralFacts",
    "Suggestion", "explain_problem", "parity_interlacing", "peak_sensitivity_bounds",
    "structural_facts",
]
