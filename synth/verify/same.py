"""The one "same design" rule: two compensators are the same when their frequency responses agree.

Two compensators ``C_a`` and ``C_b`` are the same design, for every practical
purpose, when at every frequency of a band

    |C_a(jw) - C_b(jw)| <= rtol * max(|C_a(jw)|, |C_b(jw)|)

(a frequency where either is infinite counts as a full mismatch).  The
tolerance depends on whether the two share a structure: ranking drops a
design within 10 % of a better one of the same structure (so the list shows
alternatives, not variations) and within 0.5 % of one of another structure;
compare matches designs across runs within 5 % and only within a structure.

The rule compares what the loop sees, the frequency response, so it is
scale-free (a relative measure at every frequency) and indifferent to how a
compensator is written: a near pole-zero cancellation, a gain spread over
factors or a different root order change nothing.

References
----------
.. [1] K. J. Astrom and R. M. Murray, *Feedback Systems*, Princeton
   University Press, 2008, ch. 12 (comparing controllers by their frequency
   responses over the band that matters to the loop).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = ["COMPARE_RULE", "RANK_RULE", "SameDesignRule", "comparison_band",
           "compensator_responses", "response_gap"]


def compensator_responses(compensators, w) -> np.ndarray:
    """``C(jw)`` of each compensator on the grid ``w``.

    Parameters
    ----------
    compensators : iterable of (num, den)
        Coefficients in descending powers of s.
    w : ndarray
        Frequencies (rad/s).

    Returns
    -------
    ndarray of complex, shape (len(compensators), len(w))
    """
    comps = list(compensators)
    s = 1j * np.asarray(w, dtype=float)
    out = np.empty((len(comps), s.size), dtype=complex)
    for i, (num, den) in enumerate(comps):
        with np.errstate(all="ignore"):
            out[i] = np.polyval(num, s) / np.polyval(den, s)
    return out


def response_gap(responses: np.ndarray, response: np.ndarray) -> np.ndarray:
    """Largest relative difference between each row of ``responses`` and ``response``.

    ``max_w |a - b| / max(|a|, |b|)``, a non-finite point counting as 1.
    """
    other = np.atleast_2d(responses)
    ri = np.asarray(response)[None, :]
    with np.errstate(all="ignore"):
        rel = np.abs(other - ri) / np.maximum(np.abs(other), np.abs(ri))
    return np.max(np.where(np.isfinite(rel), rel, 1.0), axis=1)


def comparison_band(compensators, per_decade: int = 20) -> np.ndarray:
    """A band for comparing compensators outside a problem: their corners, one decade beyond.

    From a tenth of the lowest nonzero zero or pole magnitude to ten times the
    highest; a single frequency of 1 rad/s when none has a corner (gains).
    """
    mags = []
    for num, den in compensators:
        for p in (np.trim_zeros(np.asarray(num, float), "f"),
                  np.trim_zeros(np.asarray(den, float), "f")):
            if p.size > 1:
                r = np.abs(np.roots(p))
                mags.extend(r[r > 0].tolist())
    if not mags:
        return np.array([1.0])
    lo, hi = min(mags) / 10.0, max(mags) * 10.0
    n = max(2, int(math.ceil(per_decade * math.log10(hi / lo))) + 1)
    return np.geomspace(lo, hi, n)


@dataclass(frozen=True)
class SameDesignRule:
    """The tolerances of the rule (see the module docstring).

    Attributes
    ----------
    rtol : float
        Between two designs of the same structure.
    other_rtol : float
        Between designs of different structures (0: never the same).
    """

    rtol: float
    other_rtol: float

    def tolerance(self, structure_a: str, structure_b: str) -> float:
        return self.rtol if structure_a == structure_b else self.other_rtol

    def same(self, gap: float, structure_a: str, structure_b: str) -> bool:
        """Whether a response gap (:func:`response_gap`) makes the two the same design."""
        return gap < self.tolerance(structure_a, structure_b)


#: Ranking: near duplicates of a better design are dropped.
RANK_RULE = SameDesignRule(rtol=0.1, other_rtol=5e-3)
#: Compare: the same design across runs.
COMPARE_RULE = SameDesignRule(rtol=0.05, other_rtol=0.0)
