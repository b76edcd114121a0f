"""Public import path kept for users: see :mod:`synth.outputs.report.locus_plot`."""

from synth.outputs.report.locus_plot import plot_locus

__all__ = ["plot_locus"]
