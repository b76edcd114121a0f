"""``synth compare``: matching designs across runs, moves, binding requirements, step overlay.

The design documents are built here by hand from compensators whose closed
loops are standard second-order systems, so every metric in them comes from
the textbook relations for T(s) = wn^2 / (s^2 + 2 zeta wn s + wn^2):
overshoot = exp(-pi zeta / sqrt(1 - zeta^2)) and peak time
pi / (wn sqrt(1 - zeta^2)) (common practice; e.g. Ogata, Modern Control
Engineering, transient-response specifications, from memory).
"""

from __future__ import annotations

import copy
import json
import math
import xml.etree.ElementTree as ET

import numpy as np
import pytest
from scipy import signal

from synth.errors import InputError
from synth.outputs.compare import compare_runs, load_design_json, same_design
from synth.outputs.document import read_design
from synth.outputs.report.compare_plot import overlay_curves, plot_step_overlay


def overshoot_percent(zeta: float) -> float:
    """Textbook percent overshoot of a standard second-order loop (common practice)."""
    return 100.0 * math.exp(-math.pi * zeta / math.sqrt(1.0 - zeta * zeta))


def _pairs(roots) -> list[list[float]]:
    return [[float(np.real(r)), float(np.imag(r))] for r in roots]


def design(rank, structure, num, den, plant_num, plant_den, limit):
    """A design entry of a synth.design/1 document for a loop whose T is standard 2nd order.

    Works for the loops below, where Nc Ng = b and Dc Dg + Nc Ng = s^2 + a s + b
    after the compensator zero cancels a stable plant or compensator pole exactly.
    """
    num, den = np.asarray(num, float), np.asarray(den, float)
    clden = np.polyadd(np.polymul(den, plant_den), np.polymul(num, plant_num))
    poles = np.roots(clden)
    # damping of the dominant (complex) pair
    pair = poles[np.abs(poles.imag) > 0]
    zeta = float(-pair[0].real / abs(pair[0]))
    os_ = overshoot_percent(zeta)
    return {
        "rank": rank,
        "structure": structure,
        "origin": "placement",
        "feasible": os_ <= limit,
        "compensator": {"numerator": list(num), "denominator": list(den),
                        "zeros": _pairs(np.roots(num)) if num.size > 1 else [],
                        "poles": _pairs(np.roots(den)) if den.size > 1 else [],
                        "gain": float(num[0] / den[0])},
        "closed_loop_poles": _pairs(poles),
        "metrics": {"overshoot_percent": os_, "min_damping_ratio": zeta,
                    "settling_time": 4.0 / float(-pair[0].real), "gain_margin_db": None},
        "violations": [] if os_ <= limit else [f"overshoot {os_:.3g} % > {limit} %"],
    }


def document(plant_gain, entries, limit=11.0, with_requirements=True):
    """A synth.design/1 document for the plant plant_gain / (s (s + 2))."""
    pn, pd = np.array([plant_gain]), np.array([1.0, 2.0, 0.0])
    designs = [design(rank, s, n, d, pn, pd, limit) for rank, s, n, d in entries]
    doc = {"schema": "synth.design/1",
           "plant": {"numerator": list(pn), "denominator": list(pd)},
           "designs": designs}
    if with_requirements:
        doc["requirements"] = {"max_overshoot_percent": limit}
    return doc


LEAD = ("lead", [2.0, 4.0], [1.0, 4.0])            # 2 (s + 2) / (s + 4), cancels the plant pole
P_HALF = ("P", [0.5], [1.0])
P_ONE = ("P", [1.0], [1.0])
P_TWO = ("P", [2.0], [1.0])


def run_a():
    """Plant 4 / (s (s + 2)): lead zeta 0.707, P 0.5 zeta 0.707, P 1 zeta 0.5, P 2 zeta 0.354."""
    return document(4.0, [(1, *LEAD), (2, *P_HALF), (3, *P_ONE), (4, *P_TWO)])


def run_b():
    """Plant gain up 50 %: 6 / (s (s + 2)); the P 0.5 design retuned by -1 %, a new P 1/3."""
    return document(6.0, [(1, *LEAD), (2, "P", [0.495], [1.0]), (3, "P", [1.0 / 3.0], [1.0]),
                          (4, *P_ONE)])


# ----------------------------------------------------------------------------------------------
# loading
# ----------------------------------------------------------------------------------------------


def test_load_design_json_reads_a_valid_document(tmp_path):
    p = tmp_path / "a.json"
    p.write_text(json.dumps(run_a()))
    assert load_design_json(p)["designs"][0]["structure"] == "lead"


@pytest.mark.parametrize("text, needle", [
    ("{not json", "not valid JSON"),
    ("[1, 2]", "JSON object"),
    ('{"schema": "synth.trace/1", "designs": []}', "schema"),
    ('{"schema": "synth.design/1", "designs": {}}', "designs"),
    ('{"schema": "synth.design/1", "designs": [{"rank": 1, "structure": "P"}]}', "compensator"),
])
def test_load_design_json_names_the_file_on_bad_input(tmp_path, text, needle):
    p = tmp_path / "bad.json"
    p.write_text(text)
    with pytest.raises(InputError) as err:
        load_design_json(p)
    msg = str(err.value)
    assert str(p) in msg and needle in msg and "\n" not in msg


def test_load_design_json_missing_file(tmp_path):
    with pytest.raises(InputError, match="no such file"):
        load_design_json(tmp_path / "absent.json")


def test_compare_runs_rejects_a_bad_document_naming_the_run():
    with pytest.raises(InputError, match="second.json"):
        compare_runs([("first.json", run_a()), ("second.json", {"schema": "x", "designs": []})])


# ----------------------------------------------------------------------------------------------
# matching rule
# ----------------------------------------------------------------------------------------------


def _records(*compensators):
    """Design records of one document: (structure, zeros, poles, gain) each."""
    designs = [{"rank": i + 1, "structure": st,
                "compensator": {"zeros": _pairs(z), "poles": _pairs(p), "gain": k}}
               for i, (st, z, p, k) in enumerate(compensators)]
    return read_design({"schema": "synth.design/1", "designs": designs}).designs


def _reference_gap(a, b):
    """Largest relative response difference, by scipy.signal.freqs on a dense grid."""
    mags = [abs(r) for c in (a, b) for r in (*c.compensator.zeros, *c.compensator.poles)
            if abs(r) > 0] or [1.0]
    w = np.geomspace(min(mags) / 10.0, max(mags) * 10.0, 20001)
    _, ha = signal.freqs(a.compensator.numerator, a.compensator.denominator, worN=w)
    _, hb = signal.freqs(b.compensator.numerator, b.compensator.denominator, worN=w)
    return float(np.max(np.abs(ha - hb) / np.maximum(np.abs(ha), np.abs(hb))))


def test_same_design_is_a_five_percent_agreement_of_frequency_responses():
    # the rule against scipy.signal.freqs: same structure and responses within 5 % of the larger
    z = np.array([-1 + 2j, -1 - 2j])
    p = np.array([0.0, -10.0])
    base, reordered, gain_2pc, gain_8pc, shifted, other, flipped = _records(
        ("PID", z, p, 3.0),
        ("PID", z[::-1], p[::-1], 3.0),          # same roots, listed in another order
        ("PID", z, p, 3.0 * 1.02),               # 2 % more gain: responses 2 % apart
        ("PID", z, p, 3.0 * 1.08),               # 8 % more gain
        ("PID", z * 1.04, p * 1.04, 3.0),        # roots 4 % out: more than 5 % near the zeros
        ("lead-lag", z, p, 3.0),
        ("PID", z, p, -3.0))
    assert same_design(base, reordered) == 0.0
    for other_design, expected_same in ((gain_2pc, True), (gain_8pc, False), (shifted, False)):
        ref = _reference_gap(base, other_design)
        got = same_design(base, other_design)
        assert (got is not None) == expected_same == (ref < 0.05)
        if got is not None:
            assert got == pytest.approx(ref, rel=1e-3)
    assert same_design(base, other) is None           # never across structures
    assert same_design(base, flipped) is None         # opposite sign: responses 200 % apart


# ----------------------------------------------------------------------------------------------
# identical runs
# ----------------------------------------------------------------------------------------------


def test_two_identical_documents_give_identical_rankings_and_no_moves():
    a = run_a()
    c = compare_runs([("a.json", a), ("b.json", copy.deepcopy(a))])
    assert c.identical_rankings
    assert c.moves == ()
    doc = c.to_json()
    assert doc["schema"] == "synth.compare/1"
    assert doc["rankings"][0] == doc["rankings"][1] and len(doc["rankings"][0]) == 4
    for d in doc["designs"]:
        assert d["runs"][0]["rank"] == d["runs"][1]["rank"]
    for ch in doc["metric_changes"]:
        assert all(v["change"] in (0.0, None) for v in ch["changes"].values())
    (b,) = doc["binding"]
    assert b["statuses"][0] == b["statuses"][1] and b["became_binding"] == []
    json.dumps(doc, allow_nan=False)
    assert any("identical" in line for line in c.table_lines())


def test_two_design_runs_of_the_same_case_file_rank_identically():
    # the contract: same file + same seed = same ranking; compare must see no move
    import dataclasses
    from pathlib import Path

    from synth.design import run_design
    from synth.problem.requirements import load_problem

    path = Path(__file__).resolve().parents[1] / "cases" / "needs-unstable-compensator.toml"
    problem = load_problem(path)
    # the search does fixed work; a generous budget keeps the wall-clock cap a mere safety
    # stop on a loaded machine, so nothing here depends on timing
    problem = dataclasses.replace(problem, search=dataclasses.replace(problem.search,
                                                                      time_budget=600.0))
    first = run_design(problem).to_json()
    second = run_design(problem).to_json()
    assert not first["search"]["time_capped"] and not second["search"]["time_capped"]
    c = compare_runs([("first", first), ("second", second)])
    assert c.identical_rankings and c.moves == ()


# ----------------------------------------------------------------------------------------------
# changed plant
# ----------------------------------------------------------------------------------------------


def test_changed_plant_reports_the_moves_and_the_binding_overshoot():
    c = compare_runs([("a.json", run_a()), ("b.json", run_b())])
    assert not c.identical_rankings
    assert len(c.designs) == 5  # lead, P 0.5 (= P 0.495), P 1, P 2, P 1/3

    def find(structure, gain):
        return next(d for d in c.designs
                    if d.structure == structure and abs(d.gain - gain) < 1e-9)

    lead, half, one, two, third = (find("lead", 2.0), find("P", 0.5), find("P", 1.0),
                                   find("P", 2.0), find("P", 1.0 / 3.0))
    # P 0.495 is within 5 % of P 0.5: one design in both runs
    assert half.entries[0].rank == 2 and half.entries[1].rank == 2
    moves = {m.design: m for m in c.moves}
    assert set(moves) == {one.id, two.id, third.id}
    assert moves[one.id].kind == "down" and (moves[one.id].from_rank, moves[one.id].to_rank) == (3, 4)
    assert moves[two.id].kind == "dropped" and moves[two.id].from_rank == 4
    assert moves[third.id].kind == "new" and moves[third.id].to_rank == 3
    # closest lost counterpart of the new P 1/3: the dropped P 2, |1/3 - 2| / 2 = 5/6 apart
    assert moves[third.id].nearest == two.id
    assert moves[third.id].nearest_difference == pytest.approx(5.0 / 6.0)

    # lead 2 (s + 2)/(s + 4): T = 8/(s^2 + 4 s + 8) in A, 12/(s^2 + 4 s + 12) in B
    change = next(m for m in c.metric_changes if m.design == lead.id)
    zeta_a = 4.0 / (2.0 * math.sqrt(8.0))     # s^2 + 4 s + 8
    zeta_b = 4.0 / (2.0 * math.sqrt(12.0))    # s^2 + 4 s + 12
    before, after, delta = change.changes["overshoot_percent"]
    assert before == pytest.approx(overshoot_percent(zeta_a), rel=1e-9)   # 4.32 %
    assert after == pytest.approx(overshoot_percent(zeta_b), rel=1e-9)    # 10.8 %
    assert delta == pytest.approx(after - before)

    # the 11 % overshoot limit: slack in A (4.3 %), binding in B (10.8 % is within 5 % of 11)
    (b,) = c.binding
    assert b.requirement == "max_overshoot_percent"
    assert b.statuses == ("slack", "binding")
    assert b.became_binding == (1,)
    text = "\n".join(c.table_lines())
    assert "dropped" in text and "new in B" in text and "became binding in B" in text


def test_binding_statuses_for_a_violated_limit_and_missing_requirements():
    # limit 4 %: A's lead at 4.32 % violates it (no design feasible, so rank 1 is the reference)
    a = document(4.0, [(1, *LEAD), (2, *P_HALF)], limit=4.0)
    b = document(4.0, [(1, *LEAD), (2, *P_HALF)], limit=4.0, with_requirements=False)
    c = compare_runs([("a", a), ("b", b)])
    (bind,) = c.binding
    assert bind.statuses == ("violated", "unknown")
    assert c.runs[0].reference_feasible is False
    c2 = compare_runs([("b", b), ("b2", copy.deepcopy(b))])
    assert c2.binding == ()


def test_infinite_gain_margin_is_slack_and_unbounded_settling_violates():
    a = document(4.0, [(1, *LEAD)], limit=20.0)
    a["requirements"].update({"min_gain_margin_db": 6.0, "max_settling_time": 3.0})
    b = copy.deepcopy(a)
    b["designs"][0]["metrics"]["settling_time"] = None   # never settles
    c = compare_runs([("a", a), ("b", b)])
    st = {x.requirement: x.statuses for x in c.binding}
    assert st["min_gain_margin_db"] == ("slack", "slack")
    # lead: s^2 + 4 s + 8, decay 2 -> 4 / 2 = 2 s against 3 s: slack; null: violated
    assert st["max_settling_time"] == ("slack", "violated")


# ----------------------------------------------------------------------------------------------
# step responses
# ----------------------------------------------------------------------------------------------


def test_overlay_step_matches_scipy_and_the_textbook_overshoot():
    zeta, wn = 0.3, 2.0
    plant_num, plant_den = [wn * wn], [1.0, 2.0 * zeta * wn, 0.0]
    doc = {"schema": "synth.design/1",
           "plant": {"numerator": plant_num, "denominator": plant_den},
           "designs": [{"rank": 1, "structure": "P", "feasible": True,
                        "compensator": {"numerator": [1.0], "denominator": [1.0],
                                        "zeros": [], "poles": [], "gain": 1.0},
                        "metrics": {"settling_time": 4.0 / (zeta * wn)}}]}
    (curve,) = overlay_curves([("x", doc)])
    assert curve.stable and curve.exact_delay
    # the closed loop is wn^2 / (s^2 + 2 zeta wn s + wn^2): scipy.signal.step at the same times
    _, y_ref = signal.step(signal.lti([wn * wn], [1.0, 2.0 * zeta * wn, wn * wn]), T=curve.t)
    assert np.allclose(curve.y, y_ref, rtol=0, atol=1e-7)
    peak = float(np.max(curve.y))
    assert (peak - 1.0) * 100.0 == pytest.approx(overshoot_percent(zeta), rel=2e-3)   # 37.2 %
    i = int(np.argmax(curve.y))
    t_peak = float(curve.t[i])
    assert t_peak == pytest.approx(math.pi / (wn * math.sqrt(1 - zeta ** 2)),
                                   abs=2 * (curve.t[i + 1] - curve.t[i]))


def test_overlay_uses_the_exact_dead_time():
    # G = e^{-2 s} / (s + 1), C = 1: the exact delay holds the output at 0 until t = 2 (a Pade
    # form would move it before then); until t = 4 the plant input is still the unit error of
    # the first 2 s, so y = 1 - e^{-(t - 2)} (worked by hand: the loop only sees the plant's
    # reply after one dead time)
    from synth.problem.plant import Plant

    plant = Plant.from_coefficients([1.0], [1.0, 1.0], dead_time=2.0)
    doc = {"schema": "synth.design/1", "plant": plant.to_json(),
           "designs": [{"rank": 1, "structure": "P", "compensator": {
               "numerator": [1.0], "denominator": [1.0]}, "metrics": {"settling_time": 30.0}}]}
    (curve,) = overlay_curves([("x", doc)])
    assert curve.stable and curve.exact_delay
    before = curve.t < 2.0
    assert np.all(curve.y[before] == 0.0)
    window = (curve.t > 2.0) & (curve.t < 4.0)
    ref = 1.0 - np.exp(-(curve.t[window] - 2.0))
    assert np.allclose(curve.y[window], ref, rtol=0, atol=1e-6)


def test_overlay_keeps_a_cancelled_unstable_pole_out_of_the_picture():
    # C = (s - 1)/(s + 3) cancels the plant pole at +1; the loop 1/(s + 3) looks stable but the
    # unreduced polynomial (s + 3)(s - 1) + (s - 1) = (s - 1)(s + 4) is not (numpy.roots)
    char = np.polyadd(np.polymul([1.0, 3.0], [1.0, -1.0]), np.polymul([1.0, -1.0], [1.0]))
    assert np.allclose(sorted(np.roots(char).real), [-4.0, 1.0])
    doc = {"schema": "synth.design/1", "plant": {"numerator": [1.0], "denominator": [1.0, -1.0]},
           "designs": [{"rank": 1, "structure": "lead", "feasible": False,
                        "compensator": {"numerator": [1.0, -1.0], "denominator": [1.0, 3.0]}}]}
    (curve,) = overlay_curves([("x", doc)])
    assert not curve.stable and curve.y.size == 0


def test_plot_step_overlay_writes_png_and_svg(tmp_path):
    runs = [("a.json", run_a()), ("b.json", run_b())]
    png = plot_step_overlay(runs, tmp_path / "overlay.png")
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    svg = plot_step_overlay(runs, tmp_path / "overlay.svg")
    assert ET.parse(svg).getroot().tag.endswith("svg")
    with pytest.raises(InputError, match="png or .svg"):
        plot_step_overlay(runs, tmp_path / "overlay.jpg")
    assert not list(tmp_path.glob("*.part"))
