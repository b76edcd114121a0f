"""Terminal output: plain text when piped, rich on a terminal, a light ``synth --help``.

External references: ECMA-48 (the CSI introducer ESC [ that every terminal
control sequence starts with), the standard library's ``io`` streams, and the
``sys.modules`` of a fresh interpreter.
"""

from __future__ import annotations

import io
import subprocess
import sys

from synth.outputs.progress import terminal_progress
from synth.outputs.text import Row, TextReport, TextTable, plain_lines, show

ESC = "\x1b["  # ECMA-48 control sequence introducer


class _Tty(io.StringIO):
    def isatty(self):
        return True


REPORT = TextReport(
    before=("Designs for 2 / (s+1)", ""),
    table=TextTable(("rank", "structure", "ok?", "OS%<=10"),
                    (Row(("1", "PI", "yes", "4.3 ok"), ("C(s) = 2 (s+1) / s",),
                         ("", "", "good", "good")),
                     Row(("2", "P", "NO", "16 FAIL"), ("C(s) = 3", "fails: overshoot"),
                         ("", "", "bad", "bad")))),
    after=("", "Caution: linear model."))


def test_plain_lines_are_fixed_width_text():
    lines = plain_lines(REPORT)
    assert lines[2] == "rank  structure  ok?  OS%<=10"
    assert lines[3] == "----  ---------  ---  -------"
    assert lines[4] == "   1  PI         yes  4.3 ok "
    assert lines[5] == "      C(s) = 2 (s+1) / s"
    assert all(ESC not in line for line in lines)


def test_piped_output_is_the_plain_text_byte_for_byte():
    out = io.StringIO()  # not a terminal
    show(REPORT, out)
    assert out.getvalue() == "\n".join(plain_lines(REPORT)) + "\n"


def test_terminal_output_is_drawn_with_the_same_content():
    out = _Tty()
    show(REPORT, out)
    text = out.getvalue()
    assert ESC in text  # colours and styles on a terminal
    for cell in ("PI", "4.3 ok", "16 FAIL", "C(s) = 2 (s+1) / s", "fails: overshoot",
                 "Caution: linear model."):
        assert cell in text


def test_progress_is_silent_when_piped_and_drawn_on_a_terminal():
    with terminal_progress("searching", io.StringIO()) as progress:
        assert progress is None
    out = _Tty()
    with terminal_progress("searching", out) as progress:
        progress(1, 4, "PI (search)")
        progress(4, 4, "verified")
    assert ESC in out.getvalue() and "searching" in out.getvalue()


def test_help_loads_neither_rich_nor_the_heavy_libraries():
    code = ("import sys\nfrom synth.cli import main\n"
            "try:\n    main(['--help'])\nexcept SystemExit:\n    pass\n"
            "print(sorted({m.split('.')[0] for m in sys.modules} & "
            "{'rich', 'cvxpy', 'matplotlib', 'scipy'}))")
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         timeout=120)
    assert res.returncode == 0, res.stderr
    assert res.stdout.strip().splitlines()[-1] == "[]"


def test_piped_compare_has_no_control_codes(tmp_path):
    import json

    doc = {"schema": "synth.design/1", "plant": {"numerator": [1.0], "denominator": [1.0, 1.0]},
           "designs": [{"rank": 1, "structure": "P", "feasible": True,
                        "compensator": {"numerator": [2.0], "denominator": [1.0]}}]}
    a, b = tmp_path / "a.json", tmp_path / "b.json"
    a.write_text(json.dumps(doc))
    b.write_text(json.dumps(doc))
    res = subprocess.run([sys.executable, "-m", "synth.cli", "compare", str(a), str(b)],
                         capture_output=True, text=True, timeout=120)
    assert res.returncode == 0, res.stderr
    assert ESC not in res.stdout and ESC not in res.stderr
    assert "Rankings are identical" in res.stdout
