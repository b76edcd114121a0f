"""Public import path kept for users: see :mod:`synth.outputs.report.document`.

``write_report(problem, doc, outdir)`` keeps its documented signature here:
it gathers the report's input (:func:`synth.design.prepare_report`) and
hands it to :func:`synth.outputs.report.document.write_report`.
"""

from synth.outputs.report.document import ReportInput
from synth.outputs.report.document import write_report as write_report_input


def write_report(problem, doc, outdir, explanation=None):
    """Write ``report.html`` and ``report.pdf`` for a design document into ``outdir``."""
    from synth.design import prepare_report

    return write_report_input(prepare_report(problem, doc, explanation), outdir)


__all__ = ["ReportInput", "write_report", "write_report_input"]
