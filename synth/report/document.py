"""Public import path kept for users: see :mod:`synth.outputs.report.document`."""

from synth.outputs.report.document import write_report

__all__ = ["write_report"]
