"""The design document model (synth.outputs.document) and outputs that only format.

External references, named beside each check: numpy.poly and numpy.roots
(the two compensator forms), numpy.polyval with the exact exp(-jwT) (the plant
with its dead time), the contract's synth.design/1 fields, and
monkeypatching to prove that the report and the implementation forms do not
call the search, explain, the locus engine or a stand-in Problem.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from handmade import hand_design

from synth.errors import InputError
from synth.outputs.document import load_design, read_design
from synth.problem.plant import Plant


def _doc(**extra):
    plant = Plant.from_coefficients([2.0], [1.0, 3.0, 2.0])
    d = hand_design(1, "lead", [4.0, 8.0], [1.0, 10.0], plant.num, plant.den)
    d.update(extra)
    return {"schema": "synth.design/1", "plant": plant.to_json(), "designs": [d]}


@pytest.mark.parametrize("mutate, field", [
    (lambda d: d.update(schema="synth.trace/1"), "schema"),
    (lambda d: d.update(designs={}), "designs"),
    (lambda d: d["designs"][0].pop("rank"), "designs[0].rank"),
    (lambda d: d["designs"][0].update(structure=3), "designs[0].structure"),
    (lambda d: d["designs"][0].update(compensator=[]), "designs[0].compensator"),
    (lambda d: d["designs"][0]["compensator"].update(numerator=["x"], zeros=None),
     "designs[0].compensator"),
    (lambda d: d["designs"][0]["compensator"].update(denominator=[0.0, 0.0]),
     "designs[0].compensator.denominator"),
    (lambda d: d["designs"][0]["compensator"].update(zeros=[[1.0]]),
     "designs[0].compensator.zeros"),
    (lambda d: d["designs"][0].update(metrics=[1, 2]), "designs[0].metrics"),
    (lambda d: d["plant"].update(numerator=[float("nan")]), "plant.numerator"),
    (lambda d: d["plant"].update(dead_time=-1.0), "plant.dead_time"),
    (lambda d: d["designs"][0].update(anti_windup="back-calculation"),
     "designs[0].anti_windup"),
])
def test_bad_documents_are_one_line_errors_naming_the_file_and_field(mutate, field):
    doc = _doc()
    mutate(doc)
    with pytest.raises(InputError) as err:
        read_design(doc, "run.json")
    msg = str(err.value)
    assert msg.startswith("run.json: ") and "\n" not in msg
    assert err.value.key == field or (field in msg)


def test_load_design_names_the_file(tmp_path):
    p = tmp_path / "bad.json"
    p.write_text("{not json")
    with pytest.raises(InputError, match="bad.json: not valid JSON"):
        load_design(p)
    with pytest.raises(InputError, match="no such file"):
        load_design(tmp_path / "absent.json")
    p.write_text(json.dumps(_doc()))
    assert load_design(p).designs[0].structure == "lead"


def test_both_compensator_forms_give_the_same_record():
    # numerator/denominator alone: zeros and poles by numpy.roots; zeros/poles/gain alone:
    # coefficients by numpy.poly
    by_poly = read_design({"schema": "synth.design/1", "designs": [
        {"rank": 1, "structure": "lead", "compensator": {
            "numerator": [4.0, 8.0], "denominator": [1.0, 10.0]}}]}).designs[0].compensator
    by_roots = read_design({"schema": "synth.design/1", "designs": [
        {"rank": 1, "structure": "lead", "compensator": {
            "zeros": [[-2.0, 0.0]], "poles": [[-10.0, 0.0]], "gain": 4.0}}]}).designs[0].compensator
    assert by_poly.gain == by_roots.gain == 4.0
    assert np.allclose(by_roots.num, 4.0 * np.poly([-2.0])) and np.allclose(by_roots.den,
                                                                             np.poly([-10.0]))
    assert np.allclose(by_poly.zeros, np.roots([4.0, 8.0]))
    assert np.allclose(by_poly.poles, np.roots([1.0, 10.0]))


def test_designs_come_in_rank_order_and_ranks_are_looked_up():
    doc = _doc()
    second = json.loads(json.dumps(doc["designs"][0]))
    second["rank"] = 2
    doc["designs"].insert(0, second)
    d = read_design(doc, "r.json")
    assert [x.rank for x in d.designs] == [1, 2] and d.designs[0].index == 1
    with pytest.raises(InputError, match=r"r.json: designs: has no design of rank 7 \(ranks "
                                         r"present: 1, 2\)"):
        d.design(7)


def test_second_round_fields_are_read_and_unknown_fields_kept():
    doc = _doc(worst_case={"settling_time": {"value": 3.0, "model": "low flow"}},
               setpoint_weights={"b": 0.5, "c": 0.0},
               anti_windup={"scheme": "back-calculation", "parameters": {"tracking_time": 1.3}},
               discrete={"period": 0.001, "compute_delay": 0.0, "numerator": [1.0],
                         "denominator": [1.0, -0.5]},
               future_field=[1, 2, 3])
    doc["objective"] = "disturbance"
    d = read_design(doc)
    r = d.designs[0]
    assert d.objective == "disturbance"
    assert r.worst_case["settling_time"]["model"] == "low flow"
    assert r.setpoint_weights["b"] == 0.5 and r.anti_windup["parameters"]["tracking_time"] == 1.3
    assert r.discrete["denominator"] == (1.0, -0.5)
    assert d.to_json()["designs"][0]["future_field"] == [1, 2, 3]
    with pytest.raises(TypeError):
        r.metrics["overshoot_percent"] = 1.0  # records are read-only


def test_plant_record_keeps_the_exact_dead_time():
    # the document's plant with a dead time: its rational part times exp(-jwT), exactly
    plant = Plant.from_coefficients([0.5], [60.0, 1.0], dead_time=10.0, pade_order=3)
    rec = read_design({"schema": "synth.design/1", "plant": plant.to_json(),
                       "designs": []}).need_plant()
    w = np.geomspace(1e-3, 1.0, 50)
    ref = np.polyval([0.5], 1j * w) / np.polyval([60.0, 1.0], 1j * w) * np.exp(-10j * w)
    got = rec.plant().evaluate(1j * w, exact_delay=True)
    assert np.allclose(got, ref, rtol=1e-12, atol=0)
    assert rec.dead_time == 10.0 and rec.dead_time_order == 3
    with pytest.raises(InputError, match="needs a 'plant' object"):
        read_design({"schema": "synth.design/1", "designs": []}, "x.json").need_plant()


def test_the_report_only_formats(tmp_path, monkeypatch):
    # everything the report draws is gathered first; writing it calls neither explain, nor the
    # locus engine, nor the verifier
    import synth.explain
    import synth.locus.trace
    import synth.verify.curves
    import synth.verify.simulation
    from synth.design import prepare_report
    from synth.outputs.implementation import add_implementation_forms
    from synth.outputs.report.document import write_report
    from synth.problem.requirements import problem_from_text

    problem = problem_from_text("[plant]\nnumerator = [2.0]\ndenominator = [1.0, 3.0, 2.0]\n"
                                "[requirements]\nmax_overshoot_percent = 20.0\n", "p.toml")
    material = prepare_report(problem, add_implementation_forms(_doc()))

    def forbidden(*args, **kwargs):
        raise AssertionError("the report computed something")

    for module, name in ((synth.explain, "explain_problem"), (synth.locus.trace, "trace_locus"),
                         (synth.verify.curves, "curves"),
                         (synth.verify.simulation, "simulate_step")):
        monkeypatch.setattr(module, name, forbidden)
    written = write_report(material, tmp_path / "r")
    assert [p.name for p in written] == ["report.html", "report.pdf", "explore.html"]


def test_implementation_forms_need_no_problem(monkeypatch):
    # the forms read the document's own plant; no stand-in Problem is built
    import synth.problem.requirements as requirements
    from synth.outputs.implementation import add_implementation_forms

    class NoProblem:
        def __init__(self, *a, **k):
            raise AssertionError("a stand-in Problem was built")

    monkeypatch.setattr(requirements, "Problem", NoProblem)
    out = add_implementation_forms(_doc(), sample_time=0.01)
    assert out["designs"][0]["implementation"]["discrete"]["sampled_loop"]["stable"]
