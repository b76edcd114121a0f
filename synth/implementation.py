"""Public import path kept for users: see :mod:`synth.outputs.implementation`."""

from synth.outputs.implementation import add_implementation_forms, implementation_lines

__all__ = ["add_implementation_forms", "implementation_lines"]
