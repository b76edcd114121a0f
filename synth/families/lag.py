"""The lag family: C(s) = K (s + z) / (s + p) with the pole below the zero."""

from __future__ import annotations

from dataclasses import dataclass
from typing import ClassVar

from synth.families.base import (
    _PairFamily,
)


@dataclass(frozen=True)
class LagFamily(_PairFamily):
    """Phase lag: ``C(s) = K (s + z) / (s + p)`` with ``0 < p < z``."""

    name: ClassVar[str] = "lag"
    lead: ClassVar[bool] = False
