"""synth export: the C code compiled by the system C compiler and the Structured Text run by an
interpreter written here, both on the exported vectors.

External references:
* the system C compiler (gcc or cc, C99, -pedantic -Wall -Wextra -Werror) builds the exported
  NAME.c with a harness written here; its outputs must match the vectors' output column to
  1e-9 of the largest output (the contract's NAME_state / NAME_init / NAME_step);
* the Structured Text is parsed by blark (an IEC 61131-3 grammar from the package index) and
  executed by the small interpreter below (IEC 61131-3: expressions by precedence, left to
  right; IF/ELSIF/ELSE);
* the vectors' reference step, load step and runs into the limits (issue 14), and the cautions
  every hand-over carries (the project's safety rule).
"""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest

from synth.cli import main
from synth.errors import InputError, OptionError
from synth.outputs.document import read_design
from synth.outputs.export import check_name, export_design
from synth.problem.plant import Plant
from synth.problem.sampling import Sampling
from synth.verify.controller import AntiWindup, Controller, ReferenceShaping
from synth.verify.sampled import sampled_design
from tests.handmade import hand_design

CC = shutil.which("gcc") or shutil.which("cc")

PLANT = ([1.0], [1.0, 3.0, 2.0])           # 1/((s + 1)(s + 2))
SLOW_PLANT = ([2.0], [10.0, 1.0])          # 2/(10 s + 1)
NUM3 = list(np.polymul([1.0, 1.0], np.polymul([1.0, 2.0], [1.0, 0.5])) * 6.0)
DEN3 = list(np.polymul([1.0, 0.0], np.polymul([1.0, 8.0], [1.0, 6.0, 25.0])))


def _document(structure, num, den, plant=PLANT, *, shaping=None, aw=None, limits=None,
              rate=None, period=0.05, tau=0.0, dead_time=0.0):
    """A synth.design/1 document with one design whose discrete form the run would write."""
    p = Plant.from_coefficients(plant[0], plant[1], dead_time=dead_time)
    entry = hand_design(1, structure, num, den, p.num, p.den)
    controller = Controller(tuple(float(x) for x in num), tuple(float(x) for x in den),
                            shaping, aw)
    sd = sampled_design(p, controller, Sampling(period, tau), limits=limits, max_rate=rate)
    entry["discrete"] = sd.to_json()
    if shaping is not None and shaping.numerator is not None:
        entry["reference_filter"] = {"numerator": list(shaping.numerator),
                                     "denominator": list(shaping.denominator)}
    elif shaping is not None:
        b, c = shaping.setpoint_weights
        entry["reference_filter"] = {"setpoint_weights": {"b": b, "c": c}}
    if aw is not None:
        entry["anti_windup"] = {"scheme": aw.scheme, "parameters": dict(aw.parameters)}
    doc = {"schema": "synth.design/1", "plant": p.to_json(), "designs": [entry]}
    if limits is not None or rate is not None:
        doc["actuator"] = {"limits": None if limits is None else list(limits),
                           "max_rate": rate, "reference_step": 1.0}
    return doc


CASES = {
    # PI with limits, rate limit and back-calculation (saturation and anti-windup)
    "pi_aw": _document("PI", [2.0, 3.0], [1.0, 0.0],
                       aw=AntiWindup("back-calculation", {"tracking_time": 0.7}),
                       limits=(-2.0, 4.0), rate=40.0, tau=0.02),
    # PID with set-point weights, limits and back-calculation
    "pid_weights": _document("PID", [0.02 * 2.5 + 0.6, 2.5 + 1.8 * 0.02, 1.8], [0.02, 1.0, 0.0],
                             shaping=ReferenceShaping(setpoint_weights=(0.4, 0.1)),
                             aw=AntiWindup("back-calculation", {"tracking_time": 0.5}),
                             limits=(-3.0, 3.0), period=0.01),
    # third-order compensator: a cascade of second-order sections, observer anti-windup
    "general_sos": _document("general", NUM3, DEN3,
                             aw=AntiWindup("observer", {"tracking_time": 0.2}),
                             limits=(-5.0, 5.0), period=0.01, dead_time=0.03),
    # lead compensator behind a second-order prefilter, no limits
    "lead_prefilter": _document("lead", [8.0, 8.0], [1.0, 10.0], plant=SLOW_PLANT,
                                shaping=ReferenceShaping(numerator=(1.0,),
                                                         denominator=(0.04, 0.3, 1.0)),
                                period=0.02),
}


def _direct_document():
    """A document whose discrete form carries only the contract's fields (given in z)."""
    p = Plant.from_coefficients(*PLANT)
    entry = hand_design(1, "general", [3.0, 3.0], [1.0, 0.0], p.num, p.den)
    entry["discrete"] = {"period": 0.1, "compute_delay": 0.1, "numerator": [3.15, -2.85],
                         "denominator": [1.0, -1.0]}
    entry["anti_windup"] = {"scheme": "back-calculation", "parameters": {"tracking_time": 0.5}}
    return {"schema": "synth.design/1", "plant": p.to_json(), "designs": [entry],
            "actuator": {"limits": [-3.0, 3.0]}}


CASES["direct_z"] = _direct_document()

_HARNESS = r"""
#include <stdio.h>
#include "NAME.h"

int main(void)
{
    NAME_state s;
    char line[512];
    double r, y, u;
    NAME_init(&s);
    if (!fgets(line, sizeof line, stdin)) return 1;  /* header */
    while (fgets(line, sizeof line, stdin)) {
        if (sscanf(line, "%lf,%lf,%lf", &r, &y, &u) != 3) return 2;
        printf("%.17g\n", NAME_step(&s, r, y));
    }
    return 0;
}
"""


@pytest.fixture(scope="module")
def exported(tmp_path_factory):
    """Every case exported to C and ST once (the C compiled once per case)."""
    out = {}
    for case, doc in CASES.items():
        folder = tmp_path_factory.mktemp(case)
        document = read_design(doc, f"{case}.json")
        c = export_design(document, 1, "c", case)
        st = export_design(document, 1, "st", case)
        for name, text in (*c.files, *st.files):
            (folder / name).write_text(text)
        out[case] = (folder, c, st)
    return out


def _vectors(folder: Path, case: str) -> np.ndarray:
    return np.loadtxt(folder / f"{case}_vectors.csv", delimiter=",", skiprows=1)


def _close(got, expected) -> float:
    return float(np.max(np.abs(np.asarray(got) - expected)) / np.max(np.abs(expected)))


@pytest.mark.skipif(CC is None, reason="no C compiler on this machine (.ci/run installs gcc)")
@pytest.mark.parametrize("case", list(CASES))
def test_exported_c_reproduces_the_vectors(exported, case):
    folder, _, _ = exported[case]
    (folder / "harness.c").write_text(_HARNESS.replace("NAME", case))
    exe = folder / "harness"
    subprocess.run([CC, "-std=c99", "-pedantic", "-Wall", "-Wextra", "-Werror", "-O2",
                    "-ffp-contract=off", "-o", str(exe), str(folder / "harness.c"),
                    str(folder / f"{case}.c")], check=True, capture_output=True, text=True)
    csv = (folder / f"{case}_vectors.csv").read_text()
    run = subprocess.run([str(exe)], input=csv, check=True, capture_output=True, text=True)
    got = np.array([float(x) for x in run.stdout.split()])
    data = _vectors(folder, case)
    assert got.shape == data[:, 2].shape
    assert _close(got, data[:, 2]) <= 1e-9


# ---------------------------------------------------------------------------------------------
# a small interpreter of the Structured Text subset synth emits, on blark's syntax tree
# ---------------------------------------------------------------------------------------------


def _st_value(node, env):
    kind = type(node).__name__
    if kind == "BinaryOperation":
        a, b = _st_value(node.left, env), _st_value(node.right, env)
        op = str(node.op)
        return {"+": lambda: a + b, "-": lambda: a - b, "*": lambda: a * b, "/": lambda: a / b,
                "<": lambda: a < b, ">": lambda: a > b, "<=": lambda: a <= b,
                ">=": lambda: a >= b, "=": lambda: a == b, "<>": lambda: a != b}[op]()
    if kind == "UnaryOperation":
        value = _st_value(node.expr, env)
        assert str(node.op) == "-", node
        return -value
    if kind == "ParenthesizedExpression":
        return _st_value(node.expr, env)
    if kind in ("Real", "Integer"):
        return float(str(node.value))
    if kind == "SimpleVariable":
        return env[str(node.name).lower()]
    if kind in ("BooleanLiteral", "Boolean"):
        return str(node.value).upper() == "TRUE"
    raise AssertionError(f"Structured Text construct outside the emitted subset: {kind}")


def _st_run(statements, env):
    for st in statements:
        kind = type(st).__name__
        if kind == "AssignmentStatement":
            (target,) = st.variables
            env[str(target.name).lower()] = _st_value(st.expression, env)
        elif kind == "IfStatement":
            if _st_value(st.if_expression, env):
                _st_run(st.statements.statements, env)
            else:
                for clause in st.else_ifs or ():
                    if _st_value(clause.if_expression, env):
                        _st_run(clause.statements.statements, env)
                        break
                else:
                    if st.else_clause is not None:
                        _st_run(st.else_clause.statements.statements, env)
        else:
            raise AssertionError(f"statement outside the emitted subset: {kind}")


def _st_block(text):
    from blark import parse_source_code

    parsed = parse_source_code(text)
    assert parsed.exception is None, parsed.exception
    (fb,) = parsed.transform().items
    assert type(fb).__name__ == "FunctionBlock"
    env, kinds = {}, {}
    for block in fb.declarations:
        for item in block.items:
            init = item.init.value
            value = 0.0 if init is None else _st_value(init, env)
            for var in item.variables:
                name = str(var.variable.name).lower()
                env[name] = value
                kinds[name] = type(block).__name__
    return fb, env, kinds


@pytest.mark.parametrize("case", list(CASES))
def test_exported_structured_text_reproduces_the_vectors(exported, case):
    pytest.importorskip("blark")
    folder, _, _ = exported[case]
    fb, env, kinds = _st_block((folder / f"{case}.st").read_text())
    assert str(fb.name) == case
    assert kinds["setpoint"] == kinds["measurement"] == "InputDeclarations"
    assert kinds["output"] == "OutputDeclarations"
    data = _vectors(folder, case)
    got = []
    for r, y, _ in data:
        env.update(setpoint=r, measurement=y, reset=False)
        _st_run(fb.body.statements, env)
        got.append(env["output"])
    assert _close(got, data[:, 2]) <= 1e-9


def test_structured_text_reset_returns_to_rest(exported):
    pytest.importorskip("blark")
    folder, _, _ = exported["pi_aw"]
    fb, env, _ = _st_block((folder / "pi_aw.st").read_text())
    data = _vectors(folder, "pi_aw")
    first = []
    for r, y, _ in data[:5]:
        env.update(setpoint=r, measurement=y, reset=False)
        _st_run(fb.body.statements, env)
        first.append(env["output"])
    for r, y, _ in data[5:40]:
        env.update(setpoint=r, measurement=y, reset=False)
        _st_run(fb.body.statements, env)
    again = []
    for i, (r, y, _) in enumerate(data[:5]):
        env.update(setpoint=r, measurement=y, reset=i == 0)
        _st_run(fb.body.statements, env)
        again.append(env["output"])
    assert again == first


# ---------------------------------------------------------------------------------------------
# what the vectors and the headers hold
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize("case", ["pi_aw", "pid_weights", "general_sos", "direct_z"])
def test_vectors_run_into_both_limits(exported, case):
    folder, result, _ = exported[case]
    lo, hi = result.model.limits
    out = _vectors(folder, case)[:, 2]
    assert np.sum(out == hi) >= 3 and np.sum(out == lo) >= 3
    labels = [s[0] for s in result.vectors.segments]
    assert labels[0] == "reference step" and "load step" in labels[1]
    assert any("limit" in label for label in labels)


def test_realisation_is_named_with_its_reason(exported):
    _, sos, _ = exported["general_sos"]
    header = dict(sos.files)["general_sos.h"]
    assert "cascade of 2 sections" in header and "ill-conditioned" in header
    assert len(sos.model.sections) == 2
    _, df2, _ = exported["pi_aw"]
    assert "direct form II transposed" in dict(df2.files)["pi_aw.h"]


@pytest.mark.parametrize("case", list(CASES))
def test_headers_carry_design_timing_units_and_cautions(exported, case):
    _, c, st = exported[case]
    for text in (dict(c.files)[f"{case}.h"], dict(st.files)[f"{case}.st"]):
        flat = " ".join(text.split())
        for needle in ("sample time T =", "linear model", "saturation", "reduced gains",
                       "functional-safety standards", "licensed", "Units:", "seconds",
                       "vectors.csv"):
            assert needle in flat, needle
    c_text = dict(c.files)[f"{case}.c"]
    assert "#include" in c_text and "malloc" not in c_text and "static" not in c_text


def test_c_declares_the_contract_signature(exported):
    _, c, _ = exported["pi_aw"]
    header = dict(c.files)["pi_aw.h"]
    assert "} pi_aw_state;" in header
    assert "void pi_aw_init(pi_aw_state *s);" in header
    assert "double pi_aw_step(pi_aw_state *s, double reference, double measurement);" in header


# ---------------------------------------------------------------------------------------------
# bad input
# ---------------------------------------------------------------------------------------------


@pytest.mark.parametrize("name", ["1abc", "a__b", "ab_", "_x", "int", "FUNCTION_BLOCK", "x" * 26,
                                  "a-b", "", "reference", "REAL"])
def test_bad_names_are_refused(name):
    with pytest.raises(OptionError):
        check_name(name, "c", taken=("reference", "measurement"))
        check_name(name, "st")


def test_a_design_without_a_discrete_form_says_how_to_get_one():
    p = Plant.from_coefficients(*PLANT)
    doc = {"schema": "synth.design/1", "plant": p.to_json(),
           "designs": [hand_design(1, "PI", [2.0, 3.0], [1.0, 0.0], p.num, p.den)]}
    with pytest.raises(InputError, match=r"\[sampling\] period") as info:
        export_design(read_design(doc, "run.json"), 1, "c")
    assert "designs[0].discrete" in str(info.value)


def test_an_edited_discrete_form_is_refused():
    doc = _document("PI", [2.0, 3.0], [1.0, 0.0])
    doc["designs"][0]["discrete"]["numerator"][0] *= 1.01
    with pytest.raises(InputError, match="not the compensator mapped"):
        export_design(read_design(doc, "run.json"), 1, "c")


def _cli(args):
    with pytest.raises(SystemExit) as info:
        main(args)
    return info.value.code


def test_cli_writes_the_three_files(tmp_path, capsys):
    path = tmp_path / "run.json"
    import json

    path.write_text(json.dumps(CASES["pi_aw"]))
    out = tmp_path / "fw"
    assert _cli(["export", f"{path}:1", "--language", "c", "--name", "loop1",
                 "--out", str(out)]) == 0
    assert sorted(p.name for p in out.iterdir()) == ["loop1.c", "loop1.h", "loop1_vectors.csv"]
    assert (out / "loop1_vectors.csv").read_text().splitlines()[0] == \
        "reference,measurement,output"
    assert _cli(["export", str(path), "--language", "st", "--out", str(out)]) == 0
    assert (out / "controller.st").exists()


@pytest.mark.parametrize("args,needle", [
    (["--language", "fortran"], "--language fortran"),
    (["--name", "9lives"], "--name '9lives'"),
    ([":7"], "rank 7"),
])
def test_cli_errors_are_one_line_exit_2(tmp_path, capsys, args, needle):
    import json

    path = tmp_path / "run.json"
    path.write_text(json.dumps(CASES["pi_aw"]))
    ref = str(path) + (args[0] if args[0].startswith(":") else "")
    rest = [] if args[0].startswith(":") else args
    code = _cli(["export", ref, *rest, "--out", str(tmp_path / "fw")])
    err = capsys.readouterr().err
    assert code == 2 and needle in err and len(err.strip().splitlines()) == 1
    assert not (tmp_path / "fw").exists()


@pytest.mark.parametrize("edit,key", [
    (lambda d: d["designs"][0].update(anti_windup={"scheme": 3}), "anti_windup.scheme"),
    (lambda d: d["designs"][0].update(anti_windup={"scheme": "back-calculation",
                                                   "parameters": {"tracking_time": "x"}}),
     "anti_windup.parameters.tracking_time"),
    (lambda d: d.update(actuator={"limits": [2.0, -2.0]}), "actuator.limits"),
    (lambda d: d.update(actuator={"max_rate": -1.0}), "actuator.max_rate"),
    (lambda d: d["designs"][0]["discrete"].update(compute_delay=1.0), "discrete.compute_delay"),
    (lambda d: d["designs"][0]["discrete"].update(method="euler"), "discrete.method"),
    (lambda d: d["designs"][0].update(reference_filter={"setpoint_weights": {"c": 0.0}}),
     "setpoint_weights.b"),
])
def test_malformed_documents_name_the_field(edit, key):
    doc = _document("PI", [2.0, 3.0], [1.0, 0.0])
    edit(doc)
    with pytest.raises(InputError) as info:
        export_design(read_design(doc, "run.json"), 1, "c")
    assert key in str(info.value) and "run.json" in str(info.value)


def test_weights_without_c_need_a_compensator_without_derivative_action():
    doc = CASES["pid_weights"]
    import copy

    doc = copy.deepcopy(doc)
    doc["designs"][0]["reference_filter"] = {"setpoint_weights": {"b": 0.4}}
    with pytest.raises(InputError, match="derivative weight c"):
        export_design(read_design(doc, "run.json"), 1, "c")


@pytest.mark.parametrize(("point", "sig", "code"), [("folder", "INT", 130), ("commit", "TERM", 143)])
def test_an_interrupted_export_leaves_nothing_half_written(tmp_path, point, sig, code):
    # a process ended by signal N exits 128 + N (POSIX shells, common practice)
    import json
    import os
    import sys

    root = Path(__file__).resolve().parents[1]
    path = tmp_path / "run.json"
    path.write_text(json.dumps(CASES["pi_aw"]))
    env = {**os.environ, "PYTHONPATH": str(root), "SYNTH_INTERRUPT_AT": f"{point}:{sig}"}
    res = subprocess.run([sys.executable, "-m", "synth.cli", "export", str(path), "--out",
                          str(tmp_path / "fw")], capture_output=True, text=True, cwd=root,
                         env=env, timeout=600)
    assert res.returncode == code, res.stderr
    assert [p for p in tmp_path.rglob("*") if p.name.startswith(".")] == []
    fw = tmp_path / "fw"
    if point == "commit":  # the renames finish before the signal is taken
        assert sorted(p.name for p in fw.iterdir()) == ["controller.c", "controller.h",
                                                        "controller_vectors.csv"]
        assert "written before it" in res.stderr
    else:
        assert not fw.exists() and "nothing written" in res.stderr
