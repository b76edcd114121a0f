"""synth: a controller synthesis assistant for single-loop feedback design."""

__version__ = "0.1.0"
