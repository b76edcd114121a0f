"""Parametric plants, ranges and variants: the file format, explain and design over models.

External references: the plant polynomials are multiplied out here with
``numpy.polymul`` from the formula in the file; gain intervals and designs are
checked on every model with ``numpy.roots`` and ``scipy.signal.step`` /
``scipy.signal.freqresp``; error messages against the contract (one line:
file, key, what is wrong).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from handmade import THREE_LOADS, THREE_LOADS_POLYS
from scipy import signal

from synth.errors import InputError
from synth.problem.requirements import problem_from_text

BASE = """
[plant]
expression = "k/((T*s + 1)*(0.5*s + 1))"
dead_time = 1.0
[plant.parameters]
k = 2.0
T = 8.0
[plant.ranges]
k = [1.6, 2.6]
T = [6.0, 12.0]
dead_time = [0.8, 1.5]
[[plant.variants]]
label = "low flow"
numerator = [1.2]
denominator = [20.0, 1.0]
dead_time = 2.0
[[plant.variants]]
label = "from the expression"
expression = "k/(3*s + 1)"
"""


def test_the_contract_example_reads_as_written():
    p = problem_from_text(BASE, "f.toml")
    m = p.models
    assert dict(m.parameters) == {"k": 2.0, "T": 8.0}
    assert {r.name: (r.lo, r.hi) for r in m.ranges} == {
        "k": (1.6, 2.6), "T": (6.0, 12.0), "dead_time": (0.8, 1.5)}
    # the nominal plant is the expression at the nominal values, multiplied out (numpy.polymul)
    assert np.allclose(p.plant.rational_den, np.polymul([8.0, 1.0], [0.5, 1.0]))
    assert np.allclose(p.plant.rational_num, [2.0])
    assert p.plant.dead_time == 1.0
    # a variant may use the parameters at their nominal values
    low, expr = m.variants
    assert low.label == "low flow" and low.plant.dead_time == 2.0
    assert np.allclose(expr.plant.rational_num, [2.0]) and np.allclose(
        expr.plant.rational_den, [3.0, 1.0])
    # a point of the ranges: names left out keep their nominal values
    corner = m.plant_at({"k": 2.6, "dead_time": 1.5})
    assert np.allclose(corner.rational_num, [2.6]) and corner.dead_time == 1.5
    assert np.allclose(corner.rational_den, np.polymul([8.0, 1.0], [0.5, 1.0]))


def test_a_file_without_models_has_none():
    p = problem_from_text('[plant]\nexpression = "1/(s+1)"\n')
    assert p.models is None and p.model_set.is_single


@pytest.mark.parametrize("change,key,what", [
    (("T = [6.0, 12.0]", "T = [9.0, 12.0]"), "plant.ranges.T", "does not contain the nominal"),
    (("T = [6.0, 12.0]", "T = [12.0, 6.0]"), "plant.ranges.T", "empty range"),
    (("T = [6.0, 12.0]", "T = [6.0]"), "plant.ranges.T", "two numbers"),
    (("T = [6.0, 12.0]", "x = [6.0, 12.0]"), "plant.ranges.x", "is not a parameter"),
    (("T = 8.0", "T = 8.0\nq = 1.0"), "plant.parameters.q", "not used"),
    (("T = 8.0", "T = 8.0\ns = 1.0"), "plant.parameters.s", "Laplace variable"),
    (("k = 2.0\n", "k = 2.0\n\"2x\" = 1.0\n"), "plant.parameters.2x", "not a name"),
    (("k = 2.0\n", ""), "plant.expression", "unknown name 'k'"),
    (("numerator = [1.2]", "numerator = [-1.2]"), "plant.variants[1]", "same input and output"),
    (("denominator = [20.0, 1.0]", "denominator = [20.0, 1.0, 0.0]"), "plant.variants[1]",
     "1 integrator"),
    (('label = "from the expression"', 'label = "low flow"'), "plant.variants[2].label",
     "already the name"),
    (('label = "from the expression"', 'label = "nominal"'), "plant.variants[2].label",
     "already the name"),
    (('label = "from the expression"\n', ''), "plant.variants[2].label", "needs a label"),
    (('label = "from the expression"', 'lable = "x"'), "plant.variants[2].lable",
     "unknown key"),
    (('expression = "k/(3*s + 1)"', 'expression = "z/(3*s + 1)"'),
     "plant.variants[2].expression", "unknown name 'z'"),
    (('expression = "k/(3*s + 1)"', 'numerator = [1]\nexpression = "k/(3*s + 1)"'),
     "plant.variants[2]", "exactly one plant form"),
    (("k = [1.6, 2.6]", "k = [-1.6, 2.6]"), "plant.ranges", "negative static gain"),
    (("T = [6.0, 12.0]", "T = [-1.0, 12.0]"), "plant.ranges", "order or high-frequency sign"),
    (("dead_time = [0.8, 1.5]", "dead_time = [-0.8, 1.5]"), "plant.ranges.dead_time",
     "cannot be negative"),
    (("dead_time = [0.8, 1.5]", "dead_time = [0.0, 1.5]"), "plant.ranges.dead_time",
     "must start above 0"),
])
def test_bad_model_tables_give_one_line(change, key, what):
    text = BASE.replace(*change)
    assert text != BASE
    with pytest.raises(InputError) as info:
        problem_from_text(text, "cases.toml")
    message = str(info.value)
    assert len(message.splitlines()) == 1
    assert message.startswith(f"cases.toml: {key}: ") and what in message, message


def test_limits_on_parameters_and_variants():
    names = "\n".join(f"p{i} = 1.0" for i in range(9))
    expr = "*".join(f"p{i}" for i in range(9))
    with pytest.raises(InputError, match="plant.parameters: has 9 parameters; synth accepts at "
                                         "most 8"):
        problem_from_text(f'[plant]\nexpression = "{expr}/(s+1)"\n[plant.parameters]\n{names}\n')
    variants = "".join(f'[[plant.variants]]\nlabel = "v{i}"\nnumerator = [1]\n'
                       'denominator = [1, 1]\n' for i in range(13))
    with pytest.raises(InputError, match="has 13 variants; synth accepts at most 12"):
        problem_from_text('[plant]\nnumerator = [1]\ndenominator = [1, 1]\n' + variants)


def test_parameters_need_the_expression_form():
    with pytest.raises(InputError, match="plant.parameters: parameters are names used in "
                                         "plant.expression"):
        problem_from_text("[plant]\nnumerator = [1]\ndenominator = [1, 1]\n"
                          "[plant.parameters]\nk = 1.0\n")


def test_a_dead_time_range_works_with_any_plant_form():
    p = problem_from_text("[plant]\nnumerator = [1]\ndenominator = [2, 1]\ndead_time = 0.5\n"
                          "[plant.ranges]\ndead_time = [0.2, 0.9]\n")
    plant = p.models.plant_at({"dead_time": 0.9})
    assert plant.dead_time == 0.9 and plant.numerator == (1.0,)


# ----------------------------------------------------------------------------------------------
# explain over the models
# ----------------------------------------------------------------------------------------------

_THREE = """
[plant]
numerator = [1.0]
denominator = [1.0, 3.0, 3.0, 1.0]
[[plant.variants]]
label = "stiff"
numerator = [2.0]
denominator = [1.0, 3.0, 3.0, 1.0]
[[plant.variants]]
label = "sluggish"
numerator = [1.0]
denominator = [1.0, 2.0, 2.0, 1.0]
"""


def _interior(lo, hi):
    lo = -50.0 if lo is None else lo
    hi = 50.0 if hi is None else hi
    return np.linspace(lo, hi, 23)[1:-1]


def test_explain_intersection_against_numpy_roots_on_each_model():
    from synth.explain import explain_problem

    models = {"nominal": ([1.0], [1, 3, 3, 1]), "stiff": ([2.0], [1, 3, 3, 1]),
              "sluggish": ([1.0], [1, 2, 2, 1])}
    ex = explain_problem(problem_from_text(_THREE))
    doc = ex.to_json()
    account = doc["proportional"]["models"]
    ivs = account["stabilizing_gain_intervals"]
    assert ivs
    for lo, hi in ivs:
        for k in _interior(lo, hi):
            for n, d in models.values():
                assert np.all(np.roots(np.polyadd(d, k * np.asarray(n))).real < 0)
    # each finite end: just outside it, the model named as limiting is unstable
    for limit in account["limits"]:
        if limit["intervals"] != "stabilizing":
            continue
        k = limit["gain"]
        outside = k * (1.01 if limit["end"] == "high" else 0.99) if k > 0 else \
            k * (0.99 if limit["end"] == "high" else 1.01)
        n, d = models[limit["model"]]
        assert not np.all(np.roots(np.polyadd(d, outside * np.asarray(n))).real < 0)
    # (s+1)^3 + K: -1 < K < 8; 2K for the stiff model: -1/2 < K < 4 (Routh, common
    # practice); s^3 + 2 s^2 + 2 s + 1 + K: -1 < K < 3.  The intersection is -1/2 < K < 3.
    assert ivs == [pytest.approx([-0.5, 3.0], rel=1e-9)]
    names = {(lim["end"], lim["model"]) for lim in account["limits"]}
    assert ("low", "stiff") in names and ("high", "sluggish") in names
    assert any("set by the model sluggish" in r for r in doc["reasons"])


def test_explain_names_a_variant_whose_zero_limits_every_model():
    from synth.explain import explain_problem

    text = ('[plant]\nnumerator = [1.0]\ndenominator = [1.0, 2.0, 1.0]\n'
            '[[plant.variants]]\nlabel = "reversed flow"\nnumerator = [-0.5, 1.0]\n'
            'denominator = [1.0, 2.0, 1.0]\n')
    ex = explain_problem(problem_from_text(text))
    facts = ex.to_json()["proportional"]["models"]["facts"]
    # a RHP zero at z = 2 limits the bandwidth to about z/2 = 1 rad/s (Skogestad and
    # Postlethwaite, Multivariable Feedback Control, 2005, sec. 5.6; from memory)
    assert any("reversed flow" in f and "about 1 rad/s" in f for f in facts), facts


# ----------------------------------------------------------------------------------------------
# design over the models
# ----------------------------------------------------------------------------------------------

_SERVO = THREE_LOADS + """
[requirements]
max_overshoot_percent = 10.0
max_settling_time = 4.0
min_phase_margin_deg = 45.0
[search]
structures = ["PD", "lead"]
effort = 0.3
keep = 3
seed = 2
"""


def _scipy_check(nc, dc, n, d, req):
    """Overshoot and settling (scipy.signal.step), phase margin (scipy.signal.freqresp)."""
    num_l, den_l = np.polymul(nc, n), np.polymul(dc, d)
    cl = np.polyadd(den_l, num_l)
    assert np.all(np.roots(cl).real < 0)
    t = np.linspace(0, 20, 20001)
    _, y = signal.step(signal.TransferFunction(num_l, cl), T=t)
    yf = np.polyval(num_l, 0) / np.polyval(cl, 0)
    os_ = max(0.0, (y.max() - yf) / abs(yf) * 100)
    out = np.flatnonzero(np.abs(y - yf) > 0.02 * abs(yf))
    ts = t[out[-1] + 1] if out.size else 0.0
    w = np.geomspace(1e-3, 1e4, 100001)
    _, L = signal.freqresp(signal.TransferFunction(num_l, den_l), w)
    cross = np.flatnonzero(np.diff(np.sign(np.abs(L) - 1.0)))
    pm = min(180.0 - abs(np.degrees(np.angle(L[i]))) for i in cross)
    assert os_ <= req["max_overshoot_percent"] + 0.2
    assert ts <= req["max_settling_time"] * 1.01 + 0.002
    assert pm >= req["min_phase_margin_deg"] - 0.1
    return os_, ts, pm


def test_a_robust_design_meets_every_requirement_on_every_model(tmp_path):
    from synth.design import run_design

    problem = problem_from_text(_SERVO)
    run = run_design(problem)
    assert run.any_feasible
    doc = run.to_json()
    models = THREE_LOADS_POLYS
    req = doc["requirements"]
    for d in doc["designs"]:
        if not d["feasible"]:
            continue
        nc, dc = d["compensator"]["numerator"], d["compensator"]["denominator"]
        values = {name: _scipy_check(nc, dc, n, den, req) for name, (n, den) in models.items()}
        # the reported metrics are the worst over the three models, with the model named
        worst_os = max(values, key=lambda m: values[m][0])
        assert d["metrics"]["overshoot_percent"] == pytest.approx(values[worst_os][0], abs=0.2)
        assert d["worst_case"]["overshoot_percent"]["model"] == worst_os
        worst_pm = min(values, key=lambda m: values[m][2])
        assert d["worst_case"]["phase_margin_deg"]["model"] == worst_pm
        assert d["robustness"]["exact_evaluations"] == 3
    assert doc["models"]["variants"][0]["label"] == "heavy"
    # the document reader rebuilds each model's plant
    from synth.outputs.document import read_design

    back = read_design(json.loads(json.dumps(doc)))
    heavy = back.model_plant("heavy")
    assert np.allclose(heavy.rational_den, [1, 1, 0]) and np.allclose(heavy.rational_num, [0.5])


def test_same_file_and_seed_give_the_same_json():
    from synth.design import run_design

    text = BASE + ("[requirements]\nmax_overshoot_percent = 20\n"
                   "[search]\nstructures = [\"PI\"]\neffort = 0.2\nkeep = 2\nseed = 3\n")

    from synth.batch import without_timing

    def strip(doc):
        return json.dumps(without_timing(doc), sort_keys=True)

    a = strip(run_design(problem_from_text(text)).to_json())
    b = strip(run_design(problem_from_text(text)).to_json())
    assert a == b
    assert '"worst_case"' in a and '"robustness"' in a
