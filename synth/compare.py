"""Public import path kept for users: see :mod:`synth.outputs.compare`."""

from synth.outputs.compare import compare_runs, load_design_json

__all__ = ["compare_runs", "load_design_json"]
