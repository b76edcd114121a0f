"""Every bad input ends with exit code 2, one line on stderr, no traceback, no output files."""

from __future__ import annotations

import subprocess
import sys

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


def run_synth(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "synth.cli", *args], capture_output=True,
                          text=True, cwd=cwd, timeout=120)


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
