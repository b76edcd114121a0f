"""SIGINT and SIGTERM during `synth design --report DIR --json F` leave nothing half-done.

External references: the shell convention that a process ended by signal N
exits with 128 + N (130 for SIGINT, 143 for SIGTERM; POSIX ``exit`` status of
signal-terminated commands, common practice), and strict JSON as read by
``json.loads``.

Two kinds of interrupt: at named stages, through the ``SYNTH_INTERRUPT_AT``
hook (the process signals itself there, so no timing is involved), and from
outside after a short delay, which lands in the search. The delays are not
assertions; the subprocess timeout only guards against a hang.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
# a quick search (one structure) keeps the staged tests short
QUICK = """[plant]
label = "test rig, illustrative"
expression = "3/((s+1)*(s+4))"
[requirements]
max_overshoot_percent = 10.0
max_settling_time = 3.0
[search]
structures = ["PI"]
keep = 2
"""
SLOW_CASE = ROOT / "cases" / "maglev-ball.toml"
EXIT = {"INT": 130, "TERM": 143}


def _command(tmp_path: Path, case: Path) -> list[str]:
    return [sys.executable, "-m", "synth.cli", "design", str(case),
            "--json", str(tmp_path / "out" / "run.json"), "--report", str(tmp_path / "out" / "rep")]


def _env(point: str | None = None) -> dict:
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    env.pop("SYNTH_INTERRUPT_AT", None)
    if point:
        env["SYNTH_INTERRUPT_AT"] = point
    return env


def _check_aftermath(tmp_path: Path, returncode: int, stderr: str, sig: str) -> None:
    assert returncode == EXIT[sig], stderr
    lines = stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("synth: interrupted; "), stderr
    out = tmp_path / "out"
    leftovers = [p for p in tmp_path.rglob("*") if p.name.startswith(".")]
    assert leftovers == []  # no hidden temporary files or folders
    rep = out / "rep"
    if rep.exists():  # a report folder is never left empty or half-filled
        assert sorted(p.name for p in rep.iterdir()) == ["explore.html", "report.html",
                                                         "report.pdf"]
    run = out / "run.json"
    if run.exists():
        assert json.loads(run.read_text())["schema"] == "synth.design/1"
    said_written = "nothing written" not in lines[0]
    assert said_written == (run.exists() or rep.exists()), lines[0]


@pytest.mark.parametrize(("point", "sig"), [("report", "TERM"), ("folder", "INT"),
                                            ("file", "INT"),
                                            ("commit", "TERM")])
def test_interrupt_at_a_writing_stage(tmp_path, point, sig):
    (tmp_path / "out").mkdir()
    case = tmp_path / "quick.toml"
    case.write_text(QUICK)
    res = subprocess.run(_command(tmp_path, case), capture_output=True, text=True, cwd=ROOT,
                         env=_env(f"{point}:{sig}"), timeout=600)
    _check_aftermath(tmp_path, res.returncode, res.stderr, sig)
    if point == "commit":  # a signal during the final renames waits for them
        assert sorted(p.name for p in (tmp_path / "out" / "rep").iterdir()) == [
            "explore.html", "report.html", "report.pdf"]
    if point in ("report", "folder"):  # the JSON came first and is complete
        assert (tmp_path / "out" / "run.json").exists()
        assert not (tmp_path / "out" / "rep").exists()


@pytest.mark.parametrize("sig", ["INT", "TERM"])
def test_interrupt_during_the_search(tmp_path, sig):
    (tmp_path / "out").mkdir()
    proc = subprocess.Popen(_command(tmp_path, SLOW_CASE), stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, cwd=ROOT, env=_env())
    time.sleep(2.5)  # past start-up, inside the search (not an assertion)
    proc.send_signal(getattr(signal, f"SIG{sig}"))
    _, stderr = proc.communicate(timeout=600)
    _check_aftermath(tmp_path, proc.returncode, stderr, sig)
