"""Structure-aware fuzzing of requirements files: valid TOML with hostile values.

Every file, however hostile, must end as a result or as one clear input error
(exit 0, 2 or 3 from the CLI), with exactly one line on standard error, no
temporary files left and no partial output. The external references are the
contract's exit codes and the TOML 1.0 grammar (the files are written with
``tomli_w.dumps`` and checked to read back with ``tomllib.loads``); the
hostile values are the magnitudes of IEEE 754 binary64 (subnormals, the
largest finite value, infinities, NaN) and Python's integer-to-string limit.

Example counts are modest so the file runs in well under a minute; the
subprocess timeouts only guard against a hang, nothing is timed.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
import tempfile
import tomllib
from pathlib import Path

import tomli_w
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from synth.errors import SynthError
from synth.problem.requirements import STRUCTURES, load_problem

ROOT = Path(__file__).resolve().parents[1]

# binary64 landmarks (IEEE 754): subnormals, the smallest normal, the largest finite
_LANDMARKS = [0.0, -0.0, 5e-324, -5e-324, 1e-320, 2.2250738585072014e-308, 1e-101, 1e-100,
              1e100, 1.0000001e100, 1e300, 1.7976931348623157e308, -1.7976931348623157e308,
              float("inf"), float("-inf"), float("nan"), 1.0, -1.0, 0.5, 2.0, 10.0, -3.0]
FLOATS = st.one_of(st.sampled_from(_LANDMARKS), st.floats(),
                   st.floats(min_value=-100, max_value=100, allow_nan=False))
INTS = st.one_of(st.integers(-1000, 1000), st.integers(),
                 st.sampled_from([10**400, -(10**400), 2**63, 2**63 - 1, 2**64, 10**100 + 1]))
NUMBERS = st.one_of(FLOATS, INTS)
# text with control characters, line separators, bidi overrides and long runs
TEXT = st.one_of(st.text(max_size=30),
                 st.sampled_from(["", "a\nb", "\x1b[31mred", "\u202eevil", "x" * 5000,
                                  "tab\there", "\u2028", "-1+2j", "1e-400+1j", "nan", "1e400j"]))
WRONG = st.one_of(TEXT, st.booleans(), st.lists(st.integers(0, 3), max_size=3),
                  st.dictionaries(st.sampled_from(["a", "b"]), st.integers(0, 3), max_size=2))
# ordinary values come first: hypothesis draws each branch of one_of alike but shrinks to the
# first, so a failure shrinks towards an ordinary file with one hostile value in it
BENIGN = st.floats(0.05, 60)
VALUES = st.one_of(BENIGN, BENIGN, NUMBERS, WRONG)
NUMBER_LISTS = st.one_of(st.lists(BENIGN, min_size=1, max_size=4),
                         st.lists(BENIGN, min_size=2, max_size=5),
                         st.lists(NUMBERS, max_size=6),
                         st.lists(st.sampled_from([1.0, 2.0, 0.0]), min_size=30, max_size=40),
                         st.builds(lambda n: [1.0] * n, st.sampled_from([1000, 10_000])),
                         st.lists(st.one_of(NUMBERS, WRONG), max_size=4))

_TOKENS = ["s", "s", "(", ")", "+", "-", "*", "/", "^", "2", "3.5", "0", "1e-400", "1e400",
           "s^100000", "s^-3", "(((((", ")))))", ".", "**", "x", " ", "\n", "9" * 400]


@st.composite
def expressions(draw):
    if draw(st.booleans()):
        # a well-formed rational expression with hostile numbers in it
        k, a, b = (draw(st.one_of(st.integers(-5, 5), FLOATS)) for _ in range(3))
        n = draw(st.integers(0, 40))
        return f"{k!r}*(s+{a!r})/((s+{b!r})^{n}*(s+1))".replace("inf", "1e999")
    if draw(st.booleans()):
        return draw(st.sampled_from(["1/(s+1)", "4/(s^2*(s+8))", "(s-1)/((s+2)*(s+3))"]))
    return "".join(draw(st.lists(st.sampled_from(_TOKENS), min_size=1, max_size=25)))


# parameter names: ordinary, the Laplace variable, the dead time, not names at all, huge
_NAMES = ["k", "T", "tau", "s", "dead_time", "2x", "", "a b", "T" * 300]
_RANGES = st.one_of(st.lists(NUMBERS, min_size=2, max_size=2), NUMBER_LISTS)
_VARIANTS = st.fixed_dictionaries({}, optional={
    "label": TEXT, "numerator": NUMBER_LISTS, "denominator": NUMBER_LISTS,
    "expression": st.one_of(st.sampled_from(["k/(s+1)", "k/(T*s+1)", "1/s"]), TEXT),
    "dead_time": VALUES, "gain": VALUES})


@st.composite
def plants(draw):
    forms = draw(st.lists(st.sampled_from(["coefficients", "roots", "expression"]),
                          min_size=1, max_size=1 if draw(st.integers(0, 9)) < 8 else 2,
                          unique=True))
    t: dict = {}
    for form in forms:
        if form == "coefficients":
            t["numerator"] = draw(NUMBER_LISTS)
            t["denominator"] = draw(NUMBER_LISTS)
        elif form == "roots":
            roots = st.one_of(st.lists(st.floats(-20, 5), max_size=4), NUMBER_LISTS,
                              st.lists(TEXT, max_size=3))
            t["poles"] = draw(roots)
            if draw(st.booleans()):
                t["zeros"] = draw(roots)
            if draw(st.booleans()):
                t["gain"] = draw(VALUES)
        else:
            t["expression"] = draw(st.one_of(expressions(), WRONG))
    for key, values in (("label", TEXT), ("dead_time", VALUES), ("dead_time_order", VALUES)):
        if draw(st.integers(0, 3)) == 3:
            t[key] = draw(values)
    # uncertain and multiple plants: parameters, their ranges, variants
    if draw(st.integers(0, 3)) == 3:
        t["parameters"] = draw(st.one_of(st.dictionaries(st.sampled_from(_NAMES), VALUES,
                                                         max_size=3), WRONG))
        if isinstance(t.get("expression"), str) and draw(st.booleans()):
            t["expression"] = f"({t['expression']})*k/(T*s + 1)"
    if draw(st.integers(0, 3)) == 3:
        t["ranges"] = draw(st.one_of(st.dictionaries(st.sampled_from(_NAMES), _RANGES,
                                                     max_size=3), WRONG))
    if draw(st.integers(0, 4)) == 4:
        t["variants"] = draw(st.one_of(st.lists(_VARIANTS, max_size=3), WRONG))
    return t


_REQ_KEYS = ["max_overshoot_percent", "max_settling_time", "settling_band_percent",
             "min_damping_ratio", "max_rise_time", "max_steady_state_error", "plant_gain_range",
             "gain_range", "min_phase_margin_deg", "min_gain_margin_db", "max_peak_sensitivity",
             "max_control_effort", "max_peak_complementary_sensitivity", "max_noise_gain",
             "max_load_iae", "max_load_peak"]
_ODD_KEYS = ["max_setling_time", "bad\nkey", "\x1b[2J", "", "k" * 300, "plant", "é"]
RANGES = st.one_of(st.lists(NUMBERS, min_size=2, max_size=2), NUMBER_LISTS)


@st.composite
def documents(draw):
    doc: dict = {}
    if draw(st.integers(0, 19)) < 19:
        doc["plant"] = draw(plants())
    req = draw(st.dictionaries(st.sampled_from(_REQ_KEYS + _REQ_KEYS + _ODD_KEYS[:2]),
                               st.one_of(VALUES, RANGES), max_size=4))
    if req:
        doc["requirements"] = req
    if draw(st.booleans()):
        doc["search"] = draw(st.fixed_dictionaries({}, optional={
            "structures": st.one_of(st.lists(st.sampled_from([*STRUCTURES, "PIDD", ""]),
                                             max_size=4), WRONG),
            "general_order": VALUES, "max_frequency": VALUES, "seed": VALUES,
            "keep": VALUES, "time_budget": VALUES,
            "objective": st.one_of(st.sampled_from(["disturbance", "speed", "robustness",
                                                     "effort", "balanced", "fast", ""]), WRONG),
            "reference_shaping": st.one_of(st.booleans(), WRONG)}))
    if draw(st.integers(0, 5)) == 5:
        doc["sampling"] = draw(st.one_of(
            st.fixed_dictionaries({}, optional={"period": VALUES, "compute_delay": VALUES,
                                                "rate": VALUES}), WRONG))
    if draw(st.integers(0, 3)) == 3:
        doc["actuator"] = draw(st.one_of(st.fixed_dictionaries({}, optional={
            "limits": st.one_of(RANGES, st.lists(st.floats(-50, 50), min_size=2, max_size=2)),
            "operating_point": VALUES, "max_rate": VALUES, "reference_step": VALUES,
            "load_step": VALUES, _ODD_KEYS[0]: VALUES}), WRONG))
    if draw(st.integers(0, 7)) == 7:
        doc[draw(st.sampled_from(_ODD_KEYS))] = draw(VALUES)
    if draw(st.integers(0, 7)) == 7:
        doc["format"] = draw(st.one_of(st.just(1), VALUES))
    return doc


def _raw(text: str, kind: int) -> str:
    """Hostile text that tomli_w cannot produce: deep nesting, huge integers, giant arrays."""
    if kind == 0:
        return text + "[extra]\nv = " + "[" * 20_000 + "]" * 20_000 + "\n"
    if kind == 1:
        return text.replace("[plant]", "[plant]\ngain = " + "9" * 5000, 1)
    if kind == 2:
        return "[plant]\nnumerator = [1]\ndenominator = [1" + ", 1" * 100_000 + "]\n"
    return "[plant]\nnumerator = [1]\ndenominator = [1, 2]\n[requirements]\nmax_settling_time = 1e-400\n"


@st.composite
def files(draw):
    """The bytes of a requirements file: TOML from tomli_w, now and then made raw-hostile."""
    doc = draw(documents())
    try:
        text = tomli_w.dumps(doc)
    except ValueError:  # an integer beyond Python's int-to-str digit limit
        text = "[plant]\nexpression = '1/s'\n"
    if draw(st.integers(0, 11)) == 11:
        text = _raw(text, draw(st.integers(0, 3)))
    else:
        tomllib.loads(text)  # what we write is TOML (checks the generator, not synth)
    return text.encode("utf-8", "surrogatepass")


def _one_line(message: str) -> bool:
    return len(message.splitlines()) == 1 and message.isprintable()


def _leftovers(folder: Path, keep: set[str]) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name not in keep)


def _library_run(data: bytes, commands) -> None:
    from synth.explain import explain_problem
    from synth.locus import trace_problem

    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "case.toml"
        path.write_bytes(data)
        try:
            problem = load_problem(path)
        except SynthError as err:
            assert _one_line(str(err)), str(err)
            assert str(path) in str(err)
            return
        for command in commands:
            try:
                if command == "explain":
                    explain_problem(problem).to_json()
                elif command == "trace":
                    trace_problem(problem).to_json()
                else:
                    from synth.design import run_design

                    run_design(problem).to_json()
            except SynthError as err:  # a problem the engine cannot treat: one clear line
                assert _one_line(str(err)), str(err)
        assert _leftovers(Path(tmp), {"case.toml"}) == []


@given(files())
@settings(max_examples=100, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
def test_fuzzed_files_explain_and_trace_end_cleanly(data):
    _library_run(data, ("explain", "trace"))


@st.composite
def small_designs(draw):
    """A valid small plant with hostile requirement values, searched with one cheap structure."""
    doc = draw(documents())
    doc["plant"] = {"expression": draw(st.sampled_from(["1/(s*(s+2))", "2/((s+1)*(s+3))",
                                                        "1/(s^2-1)", "1e-6/((s+1e-3)*(s+2e-3))"]))}
    doc["search"] = {"structures": [draw(st.sampled_from(["P", "PI", "lead"]))], "keep": 2,
                     "time_budget": 20.0,
                     "objective": draw(st.sampled_from(["disturbance", "speed", "robustness",
                                                        "effort", "balanced"]))}
    return tomli_w.dumps(doc).encode("utf-8", "surrogatepass")


@given(small_designs())
@settings(max_examples=8, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow])
def test_fuzzed_requirements_design_ends_cleanly(data):
    _library_run(data, ("design",))


@given(files(), st.sampled_from(["explain", "trace"]))
@settings(max_examples=10, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
def test_fuzzed_files_through_the_cli(data, command):
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        path = folder / "case.toml"
        path.write_bytes(data)
        out = folder / "out.json"
        env = {**os.environ, "PYTHONPATH": str(ROOT)}
        # the timeout only guards against a hang; nothing is timed
        res = subprocess.run([sys.executable, "-m", "synth.cli", command, str(path),
                              "--json", str(out)], capture_output=True, text=True,
                             timeout=300, cwd=ROOT, env=env)
        assert res.returncode in (0, 2, 3), res.stderr
        if res.returncode != 0:
            assert len(res.stderr.splitlines()) == 1, res.stderr
            assert "Traceback" not in res.stderr
            assert not out.exists()
        else:
            json.loads(out.read_text())  # complete, strict JSON
        assert _leftovers(folder, {"case.toml", "out.json"}) == []
