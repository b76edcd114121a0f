"""Every bundled case through the commands a user runs: explain, design (and trace once).

The outputs are checked against the contract's JSON shapes and, independently
of synth's own verifier, with numpy: closed-loop poles recomputed with
numpy.roots from the unreduced characteristic polynomial, compensator
polynomials against numpy.poly of the reported zeros and poles, and the
proportional gain intervals against numpy.roots at interior gains; a case
with [sampling] also by tests/independent.py's sampled-loop check (scipy's
zero-order hold, numpy eigenvalues, a fine-step simulation).
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

CASES = sorted((Path(__file__).resolve().parents[1] / "cases").glob("*.toml"))


def synth(*args):
    return subprocess.run([sys.executable, "-m", "synth.cli", *map(str, args)],
                          capture_output=True, text=True, timeout=300)


def _interior_points(lo, hi):
    if lo is None and hi is None:
        return [-1.0, 0.0, 1.0]
    if lo is None:
        return [hi - max(1.0, abs(hi))]
    if hi is None:
        return [lo + max(1.0, abs(lo))]
    return [lo + (hi - lo) * f for f in (0.1, 0.5, 0.9)]


@pytest.mark.parametrize("case", CASES, ids=lambda p: p.stem)
def test_explain_on_every_case(case, tmp_path):
    out = tmp_path / "explain.json"
    res = synth("explain", case, "--json", out)
    assert res.returncode == 0, res.stderr
    assert res.stdout.strip()
    doc = json.loads(out.read_text())
    assert doc["schema"] == "synth.explain/1"
    assert isinstance(doc["strongly_stabilizable"], bool)
    assert all(isinstance(r, str) and r for r in doc["reasons"])
    num = np.asarray(doc["plant"]["numerator"])
    den = np.asarray(doc["plant"]["denominator"])
    ivs = doc["proportional"]["stabilizing_gain_intervals"]
    starts = [-np.inf if lo is None else lo for lo, _ in ivs]
    assert starts == sorted(starts)
    for lo, hi in ivs:
        for k in _interior_points(lo, hi):
            # numpy.roots of den + K num: every root in the open left half-plane
            assert np.all(np.roots(np.polyadd(den, k * num)).real < 0), (k, ivs)


@pytest.mark.parametrize("case", CASES, ids=lambda p: p.stem)
def test_design_on_every_case(case, tmp_path):
    out = tmp_path / "design.json"
    res = synth("design", case, "--json", out)
    assert res.returncode in (0, 3), res.stderr
    doc = json.loads(out.read_text())
    assert doc["schema"] == "synth.design/1"
    designs = doc["designs"]
    assert designs, "the report lists at least the nearest designs"
    assert [d["rank"] for d in designs] == list(range(1, len(designs) + 1))
    feas = [d["feasible"] for d in designs]
    assert feas == sorted(feas, reverse=True), "feasible designs come first"
    # every bundled case is meant to have a feasible design
    assert res.returncode == 0 and feas[0]
    gn = np.asarray(doc["plant"]["numerator"])
    gd = np.asarray(doc["plant"]["denominator"])
    for d in designs:
        c = d["compensator"]
        cn, cd, k = np.asarray(c["numerator"]), np.asarray(c["denominator"]), c["gain"]
        zeros = np.array([complex(*z) for z in c["zeros"]])
        poles = np.array([complex(*p) for p in c["poles"]])
        # numerator = K * prod(s - z), denominator = prod(s - p)  (numpy.poly)
        assert np.allclose(cn, k * np.real(np.poly(zeros)), rtol=1e-6, atol=1e-9)
        assert np.allclose(cd / cd[0], np.real(np.poly(poles)), rtol=1e-6, atol=1e-9)
        if not d["feasible"]:
            assert d["violations"], "an infeasible design says what it violates"
            continue
        assert d["violations"] == []
        char = np.polyadd(np.polymul(cd, gd), np.polymul(cn, gn))
        roots = np.roots(char)
        assert np.all(roots.real < 0), "feasible means internally stable (numpy.roots)"
        reported = np.array([complex(*p) for p in d["closed_loop_poles"]])
        assert reported.size == roots.size
        assert np.allclose(np.sort_complex(reported), np.sort_complex(roots), rtol=1e-5, atol=1e-6)
        if "sampling" in doc:
            # the verdict is the sampled loop's: re-verify it from the document's C(z) with
            # scipy's zero-order hold, numpy eigenvalues and a fine-step simulation
            from synth.problem.requirements import load_problem
            from tests.independent import independent_sampled_check

            independent_sampled_check(load_problem(case), d)


def test_trace_with_a_design_loop(tmp_path):
    case = next(c for c in CASES if c.stem == "maglev-ball")
    run = tmp_path / "run.json"
    assert synth("design", case, "--json", run).returncode == 0
    out, pic = tmp_path / "trace.json", tmp_path / "locus.svg"
    res = synth("trace", case, "--design", f"{run}:1", "--json", out, "--plot", pic)
    assert res.returncode == 0, res.stderr
    doc = json.loads(out.read_text())
    assert doc["schema"] == "synth.trace/1"
    design = json.loads(run.read_text())["designs"][0]
    k = doc["operating_gain"]
    assert k == pytest.approx(design["compensator"]["gain"])
    # the traced loop at the operating gain has the design's closed-loop poles (numpy.roots)
    num = np.asarray(doc["loop"]["numerator"])
    den = np.asarray(doc["loop"]["denominator"])
    roots = np.sort_complex(np.roots(np.polyadd(den, k * num)))
    reported = np.sort_complex(np.array([complex(*p) for p in design["closed_loop_poles"]]))
    assert np.allclose(roots, reported, rtol=1e-5, atol=1e-6)
    assert pic.read_text().lstrip().startswith(("<?xml", "<svg"))
