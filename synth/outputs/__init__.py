"""Outputs: everything that formats results (JSON, text, forms, comparisons, reports, files).

Outputs only format what the verdicts carry; they never reach back into the search.

* :mod:`~synth.outputs.document` - the one reader of ``synth.design/1`` (typed records);
* :mod:`~synth.outputs.run` - a design run as JSON and as the terminal table;
* :mod:`~synth.outputs.text`, :mod:`~synth.outputs.progress` - terminal text (plain when
  piped, rich on a terminal) and the progress bar;
* :mod:`~synth.outputs.cautions` - the safety cautions every hand-over carries;
* :mod:`~synth.outputs.forms`, :mod:`~synth.outputs.implementation` - implementation forms;
* :mod:`~synth.outputs.compare`, :mod:`~synth.outputs.report` - comparisons and reports;
* :mod:`~synth.outputs.jsonout` - strict JSON values.
"""
