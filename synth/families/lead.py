"""The lead family: C(s) = K (s + z) / (s + p) with the zero below the pole."""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

from synth.families.base import (
    _PairFamily,
)


@dataclass(frozen=True)
class LeadFamily(_PairFamily):
    """Phase lead: ``C(s) = K (s + z) / (s + p)`` with ``0 < z < p``."""

    name: ClassVar[str] = "lead"
    lead: ClassVar[bool] = True
