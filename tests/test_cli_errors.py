"""Every bad input ends with exit code 2, one line on stderr, no traceback, no output files.

External references: the contract's exit codes and one-line errors; IEEE 754
binary64 (5e-324 is its smallest subnormal, 1e308 is near its largest
value); Python's limit on integer-to-string conversion (4300 digits);
POSIX file types (FIFO, character device).
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

GOOD = "[plant]\nnumerator = [1.0]\ndenominator = [1.0, 3.0, 2.0, 0.0]\n"

CORPUS = {
    "not-toml": "this is = = not toml\n",
    "binary": "\x00\x01\x02",
    "no-plant": "[requirements]\nmax_settling_time = 2.0\n",
    "two-forms": GOOD + "expression = '1/s'\n",
    "bad-type": GOOD + "[requirements]\nmax_overshoot_percent = 'ten'\n",
    "out-of-range": GOOD + "[requirements]\nmin_damping_ratio = 1.5\n",
    "empty-range": GOOD + "[requirements]\ngain_range = [5.0, 5.0]\n",
    "unsafe-expression": "[plant]\nexpression = \"__import__('os').system('true')\"\n",
    "malformed-expression": "[plant]\nexpression = '1/(s+1'\n",
    "typo": GOOD + "[requirements]\nmax_setling_time = 2.0\n",
    "improper": "[plant]\nnumerator = [1.0, 0.0, 0.0]\ndenominator = [1.0, 1.0]\n",
    "nonfinite": "[plant]\nnumerator = [1.0]\ndenominator = [1.0, inf]\n",
}


ROOT = Path(__file__).resolve().parents[1]

# hostile files from the trustworthiness issue; each message must state the limit it hit
HOSTILE = {
    "400-digit-gain": ("[plant]\npoles = [-1, -2]\ngain = " + "9" * 400 + "\n", "1e+100"),
    "400-digit-limit": (GOOD + "[requirements]\nmax_control_effort = " + "9" * 400 + "\n",
                        "1e+100"),
    "5000-digit-integer": (GOOD + "[search]\nseed = " + "7" * 5000 + "\n", "4300 digits"),
    "subnormal-settling-time": (GOOD + "[requirements]\nmax_settling_time = 5e-324\n", "1e-100"),
    "underflowed-literal": (GOOD + "[requirements]\nmax_rise_time = 1e-400\n", "1e-100"),
    "coefficient-1e308": ("[plant]\nnumerator = [1e308]\ndenominator = [1.0, 1e308, 2.0]\n",
                          "1e+100"),
    "dead-time-1e300": (GOOD + "dead_time = 1e300\n", "1e+100"),
    "dead-time-far-from-plant": ("[plant]\nexpression = '1/(s+1)'\ndead_time = 1e12\n", "1e+10"),
    "nested-10000-deep": ("[plant]\nnumerator = [1.0]\ndenominator = " + "[" * 10_000
                          + "]" * 10_000 + "\n", "at most 8 levels"),
    "nested-12-deep": ("[plant]\nnumerator = [1.0]\ndenominator = [1.0, 2.0]\n"
                       "[search]\nstructures = " + "[" * 12 + "]" * 12 + "\n", "at most 8 levels"),
    "denominator-100000-entries": ("[plant]\nnumerator = [1]\ndenominator = [1"
                                   + ", 1" * 100_000 + "]\n", "at most 31"),
    "poles-100000": ("[plant]\npoles = [" + ", ".join(["-1.5"] * 100_000) + "]\n", "at most 30"),
    "order-31-expression": ("[plant]\nexpression = '1/(s+1)^31'\n", "at most 30"),
    "exponent-100000": ("[plant]\nexpression = '1/s^100000'\n", "at most 30"),
    "time-scales-1e12-apart": ("[plant]\npoles = [-1e-6, -1e6]\n", "1e+10"),
    "newline-in-key": (GOOD + '"bad\\nkey" = 1\n', "bad\\nkey"),
    "escape-in-label": ("[plant]\nlabel = \"\\u001b[2J\"\nexpression = '1/s'\n", "control"),
    "over-1-MiB": ("# " + "x" * (1 << 20) + "\n" + GOOD, "1 MiB"),
}


@pytest.mark.parametrize("name", sorted(HOSTILE))
def test_hostile_file_states_the_limit(tmp_path, name):
    text, limit = HOSTILE[name]
    path = tmp_path / f"{name}.toml"
    path.write_text(text)
    out_json = tmp_path / "out.json"
    res = run_synth("explain", str(path), "--json", str(out_json))
    assert res.returncode == 2, (res.stdout[-300:], res.stderr[-500:])
    lines = res.stderr.splitlines()
    assert len(lines) == 1, res.stderr[-500:]
    assert str(path) in lines[0] and limit in lines[0], lines[0]
    assert lines[0].isprintable()
    assert not out_json.exists()


def test_fifo_is_refused_without_blocking(tmp_path):
    fifo = tmp_path / "pipe.toml"
    os.mkfifo(fifo)
    res = run_synth("explain", str(fifo))  # the timeout in run_synth guards against a hang
    assert res.returncode == 2
    assert res.stderr.count("\n") == 1 and "FIFO" in res.stderr


def test_character_device_is_refused():
    res = run_synth("trace", os.devnull)
    assert res.returncode == 2
    assert res.stderr.count("\n") == 1 and "device" in res.stderr


@pytest.mark.parametrize("target", ["/proc/synth-out.json", "{dir}/sub", os.devnull,
                                    "{good}/x.json"])
def test_unwritable_json_is_refused_before_any_work(tmp_path, target):
    good = tmp_path / "good.toml"
    good.write_text(GOOD)
    (tmp_path / "sub").mkdir()
    res = run_synth("design", str(good), "--json", target.format(dir=tmp_path, good=good))
    assert res.returncode == 2, res.stderr
    assert res.stderr.count("\n") == 1
    assert res.stdout == ""  # nothing was designed: the check ran before the search
    assert sorted(p.name for p in tmp_path.iterdir()) == ["good.toml", "sub"]


def test_report_into_a_file_is_refused_before_any_work(tmp_path):
    good = tmp_path / "good.toml"
    good.write_text(GOOD)
    taken = tmp_path / "taken"
    taken.write_text("x")
    res = run_synth("design", str(good), "--report", str(taken))
    assert res.returncode == 2 and res.stdout == ""
    assert res.stderr.count("\n") == 1


def run_synth(*args, cwd=None):
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    return subprocess.run([sys.executable, "-m", "synth.cli", *args], capture_output=True,
                          text=True, cwd=cwd or ROOT, timeout=120, env=env)


@pytest.mark.parametrize("name", sorted(CORPUS))
@pytest.mark.parametrize("command", ["explain", "trace", "design"])
def test_broken_file_one_line_exit_2(tmp_path, name, command):
    path = tmp_path / f"{name}.toml"
    path.write_bytes(CORPUS[name].encode("utf-8", "surrogatepass"))
    out_json = tmp_path / "out.json"
    res = run_synth(command, str(path), "--json", str(out_json))
    assert res.returncode == 2, (res.stdout, res.stderr)
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1, res.stderr
    assert "Traceback" not in res.stderr
    assert str(path) in lines[0]
    assert not out_json.exists()  # nothing partial written


@pytest.mark.parametrize(
    "args",
    [
        ["trace", "{dir}/missing.toml"],
        ["explain", "{dir}"],
        ["trace", "{good}", "--plot", "{dir}/picture.gif"],
        ["trace", "{good}", "--json", "{dir}/no/such/folder/out.json"],
        ["design", "{good}", "--sample-time", "-1"],
        ["compare", "{dir}/a.json"],
        ["compare", "{good}", "{good}"],
        ["nonsense"],
        ["trace"],
        ["trace", "{good}", "--no-such-option"],
    ],
)
def test_bad_options_and_paths(tmp_path, args):
    good = tmp_path / "good.toml"
    good.write_text(GOOD)
    argv = [a.format(dir=tmp_path, good=good) for a in args]
    res = run_synth(*argv)
    assert res.returncode == 2, (res.stdout, res.stderr)
    assert len(res.stderr.strip().splitlines()) == 1, res.stderr
    assert "Traceback" not in res.stderr
    assert not (tmp_path / "picture.gif").exists()


def test_help_does_not_import_heavy_libraries():
    code = ("import sys\nfrom synth import cli\n"
            "try:\n    cli.main(['--help'])\nexcept SystemExit:\n    pass\n"
            "print(sorted(m for m in ('cvxpy', 'matplotlib') if m in sys.modules))")
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60)
    assert res.stdout.strip().splitlines()[-1] == "[]"
