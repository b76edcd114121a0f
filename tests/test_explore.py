"""The interactive page explore.html, opened in a real browser (headless Chromium).

External references, named beside each check:
* the page as a person sees it: Debian's Chromium driven by playwright (PyPI),
  the slider moved with the keyboard;
* numpy.roots of the unreduced characteristic polynomial at the slider's gain
  (closed-loop poles);
* scipy.signal.freqresp of K L(jw) on a dense grid (phase and gain margins,
  crossover) and scipy.signal.step of the closed loop (overshoot, settling time);
* ``synth trace --design`` (the CLI, another process): the operating gain and the
  traced branches the poles must lie on;
* the verifier at that gain (``synth.verify.verify``), recomputed here;
* html.parser (standard library) for the page's structure.

The plant and designs are invented for this test: a belt-driven carriage
2000 / (s (s + 10) (s + 200)) with lead compensators.
"""

from __future__ import annotations

import json
import math
import os
import re
import subprocess
import sys
import tempfile
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
from handmade import hand_design
from scipy import signal

from synth.design import prepare_report
from synth.outputs.implementation import add_implementation_forms
from synth.outputs.report.document import CAUTIONS
from synth.outputs.report.explore import render_explore
from synth.problem.requirements import problem_from_text
from synth.verify.verdict import verify

ROOT = Path(__file__).resolve().parents[1]

REQ = """
[plant]
label = "belt-driven carriage (invented for this test)"
numerator = [2000.0]
denominator = [1.0, 210.0, 2000.0, 0.0]

[requirements]
max_overshoot_percent = 20.0
max_settling_time = 0.5
min_phase_margin_deg = 40.0
gain_range = [0.0, 2000.0]
"""

#: (gain K, monic numerator, monic denominator) of the two designs
DESIGNS = ((300.0, [1.0, 8.0], [1.0, 80.0]), (200.0, [1.0, 12.0], [1.0, 120.0]))

#: slider positions checked (0.2 x 1.1435^i: about 0.26x, 1x and 2.9x the verified gain)
POSITIONS = (2, 12, 20)

CHROMIUM = "/usr/bin/chromium"
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
         "--disable-component-update", "--disable-sync", "--no-first-run"]


def _doc(problem):
    designs = []
    for rank, (k, zn, pd) in enumerate(DESIGNS, start=1):
        num, den = np.multiply(k, zn), np.asarray(pd, float)
        v = verify(problem, num, den)
        metrics = {key: v.metrics.get(key) for key in (
            "overshoot_percent", "settling_time", "rise_time", "steady_state_error",
            "min_damping_ratio", "phase_margin_deg", "gain_margin_db", "peak_sensitivity",
            "peak_control_effort", "stable_plant_gain_range")}
        designs.append(hand_design(rank, "lead", num, den, problem.plant.num, problem.plant.den,
                                   v.feasible, list(v.violations), metrics))
    return add_implementation_forms({"schema": "synth.design/1",
                                     "plant": problem.plant.to_json(), "designs": designs})


def _write_page(report_input, path: Path) -> Path:
    """The page as ``write_report`` writes it (its PDF is tested in test_report.py)."""
    path.write_text(render_explore(report_input), encoding="utf-8")
    return path


def _data(html_text: str) -> dict:
    m = re.search(r'<script type="application/json" id="synth-data">(.*?)</script>', html_text,
                  re.S)
    return json.loads(m.group(1))


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    folder = tmp_path_factory.mktemp("explore")
    req = folder / "carriage.toml"
    req.write_text(REQ)
    problem = problem_from_text(REQ, str(req))
    doc = _doc(problem)
    (folder / "run.json").write_text(json.dumps(doc))
    page = _write_page(prepare_report(problem, doc, top=2), folder / "explore.html")
    text = page.read_text(encoding="utf-8")
    return {"folder": folder, "problem": problem, "doc": doc, "page": page, "html": text,
            "data": _data(text)}


@pytest.fixture(scope="module")
def browser():
    sync = pytest.importorskip(
        "playwright.sync_api", reason="playwright is not installed: pip install -e '.[test]'")
    if not os.path.exists(CHROMIUM):
        pytest.skip(f"no browser at {CHROMIUM}: install Debian's chromium package "
                    "(apt-get install -y chromium); this test never downloads one")
    with sync.sync_playwright() as p, tempfile.TemporaryDirectory(prefix="synth-ud-") as ud:
        ctx = p.chromium.launch_persistent_context(ud, executable_path=CHROMIUM, headless=True,
                                                   args=FLAGS, viewport={"width": 1300,
                                                                         "height": 900})
        try:
            yield ctx
        finally:
            ctx.close()


def _open(ctx, path: Path):
    page = ctx.new_page()
    errors: list[str] = []
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.on("request", lambda r: errors.append(f"request {r.url}")
            if not r.url.startswith(("file:", "data:", "about:")) else None)
    page.goto(path.as_uri())
    page.wait_for_selector("body[data-ready='1']", timeout=20000)
    return page, errors


def _slide_to(page, index: int) -> None:
    """Move the slider as a person does with the keyboard: Home, then right arrow presses."""
    page.focus("#gain")
    page.keyboard.press("Home")
    for _ in range(index):
        page.keyboard.press("ArrowRight")


_SHOWN = """() => ({
  gain: document.getElementById("gain-value").textContent,
  slider: +document.getElementById("gain").value,
  verdict: document.getElementById("verdict").textContent,
  verified: document.getElementById("verified").textContent,
  poles: [...document.querySelectorAll("#poles li")].map((li) => li.textContent),
  numbers: Object.fromEntries([...document.querySelectorAll("#numbers tr")].map(
    (tr) => [tr.className.replace(/^n-/, ""), tr.cells[1].textContent])),
  reqs: Object.fromEntries([...document.querySelectorAll("#requirements tr")].map(
    (tr) => [tr.className.split(" r-")[1], tr.cells[3].textContent])),
  loadShown: !document.getElementById("fig-load").classList.contains("hidden"),
  loadPaths: document.querySelectorAll("#plot-load .dyn path").length,
  frontierShown: !document.getElementById("fig-frontier").classList.contains("hidden"),
  frontierNames: [...document.querySelectorAll("#frontier-names li")].map((li) => li.textContent),
  modelOptions: [...document.querySelectorAll("#model option")].map((o) => o.textContent),
})"""


def _parse_pole_line(text: str) -> list[complex]:
    """``-44.85 ± 66.21j (damping ...)`` -> both conjugates; ``-58.51`` -> one real pole."""
    m = re.match(r"\s*(-?[0-9.e+-]+) ± ([0-9.e+-]+)j", text)
    if m:
        re_, im = float(m.group(1)), float(m.group(2))
        return [complex(re_, im), complex(re_, -im)]
    return [complex(float(text.split()[0]), 0.0)]


def _assert_poles(lines: list[str], ref: np.ndarray) -> None:
    """The poles shown (4 significant digits) are the reference poles, one for one."""
    got = [z for line in lines for z in _parse_pole_line(line)]
    assert len(got) == ref.size
    for z in got:
        assert np.min(np.abs(ref - z)) <= 1e-3 * abs(z)


def _close(shown: float, ref: float, rel: float) -> bool:
    return abs(shown - ref) <= rel * abs(ref)


def _scipy_margins(num_l, den_l):
    """Crossover, phase margin (deg) and gain margin (dB) of L on a dense grid (scipy.signal)."""
    w = np.logspace(-2, 5, 100001)
    _, L = signal.freqresp((num_l, den_l), w=w)
    mag = np.abs(L)
    i = int(np.nonzero(np.diff(np.sign(mag - 1.0)))[0][0])
    # log-linear interpolation of the crossing
    t = (0.0 - np.log(mag[i])) / (np.log(mag[i + 1]) - np.log(mag[i]))
    wc = float(np.exp(np.log(w[i]) + t * (np.log(w[i + 1]) - np.log(w[i]))))
    _, Lc = signal.freqresp((num_l, den_l), w=[wc])
    pm = 180.0 + math.degrees(np.angle(Lc[0]))
    phase = np.unwrap(np.angle(L))
    j = int(np.nonzero(np.diff(np.sign(phase + np.pi)))[0][0])
    _, Lp = signal.freqresp((num_l, den_l), w=[w[j], w[j + 1]])
    gm = -20.0 * math.log10(float(np.mean(np.abs(Lp))))
    return wc, pm, gm


def _scipy_step(num_t, den_t, t_end):
    """Overshoot (%) and 2 % settling time of the closed loop (scipy.signal.step, dense)."""
    t = np.linspace(0.0, t_end, 100001)
    _, y = signal.step((num_t, den_t), T=t)
    final = num_t[-1] / den_t[-1]
    overshoot = max(0.0, (float(np.max(y)) - final) / final * 100.0)
    outside = np.nonzero(np.abs(y - final) > 0.02 * abs(final))[0]
    settle = float(t[outside[-1] + 1]) if outside.size else 0.0
    return overshoot, settle


def _segment_distance(p: complex, a: np.ndarray, b: np.ndarray) -> float:
    """Distance from p to the segments a[i]-b[i]."""
    d = b - a
    with np.errstate(invalid="ignore", divide="ignore"):
        t = np.clip(((p - a) * np.conj(d)).real / np.abs(d) ** 2, 0.0, 1.0)
    t = np.where(np.isfinite(t), t, 0.0)
    return float(np.min(np.abs(a + t * d - p)))


@pytest.fixture(scope="module")
def traced(built):
    """``synth trace FILE --design run.json:1 --json`` in another process."""
    out = built["folder"] / "trace.json"
    res = subprocess.run([sys.executable, "-m", "synth.cli", "trace",
                          str(built["folder"] / "carriage.toml"), "--design",
                          f"{built['folder'] / 'run.json'}:1", "--json", str(out)],
                         capture_output=True, text=True, cwd=ROOT, timeout=300,
                         env={**os.environ, "PYTHONPATH": str(ROOT)})
    assert res.returncode == 0, res.stderr
    return json.loads(out.read_text())


def test_page_is_self_contained_small_and_says_the_gain_and_cautions(built):
    class Page(HTMLParser):
        def __init__(self):
            super().__init__()
            self.refs, self.ids, self.order = [], [], []

        def handle_starttag(self, tag, attrs):
            a = dict(attrs)
            self.refs += [v for k, v in attrs if k in ("src", "href") and v]
            if "id" in a:
                self.order.append(a["id"])
            if tag == "link":
                self.refs.append("link")

    page = Page()
    page.feed(built["html"])
    assert page.refs == []  # no file, no CDN, no stylesheet link: works offline
    assert "http://" not in built["html"].replace("http://www.w3.org/2000/svg", "")
    assert "https://" not in built["html"]
    # the cautions come before the explorer, and the page names the verified gain
    assert page.order.index("cautions") < page.order.index("explorer")
    text = " ".join(built["html"].split())
    for c in CAUTIONS:
        assert c in text
    d0 = built["data"]["designs"][0]
    assert "verified at gain K = 300" in d0["verified"]
    assert d0["points"][d0["design_index"]]["factor"] == 1.0
    assert built["page"].stat().st_size < 400_000  # small (two designs, 25 gains each)


def test_slider_numbers_at_three_gains(built, browser, traced):
    page, errors = _open(browser, built["page"])
    data = built["data"]["designs"][0]
    problem = built["problem"]
    k0, zn, pd = DESIGNS[0]
    # synth trace --design: the same operating gain
    assert traced["operating_gain"] == pytest.approx(k0, rel=1e-12)
    gains = np.asarray(traced["branches"]["gains"])
    branches = np.asarray(traced["branches"]["roots"])  # (G, n, 2)
    roots = branches[..., 0] + 1j * branches[..., 1]
    shown0 = page.evaluate(_SHOWN)
    assert shown0["slider"] == data["design_index"]
    assert "K = 300" in shown0["verified"] and shown0["gain"] == "K = 300"
    for index in POSITIONS:
        _slide_to(page, index)
        shown = page.evaluate(_SHOWN)
        point = data["points"][index]
        k = point["gain"]
        assert shown["slider"] == index
        # 1. what is shown is the embedded data at that position
        assert shown["gain"] == point["label"]
        assert shown["poles"] == point["poles_text"]
        assert shown["numbers"] == {n["key"]: n["text"] for n in point["numbers"]}
        assert shown["reqs"] == {r["key"]: r["status"] for r in point["requirements"]}
        assert shown["verdict"] == point["verdict"]
        assert k == pytest.approx(k0 * 0.2 * 25 ** (index / 24), rel=1e-9)
        # 2. the closed-loop poles: numpy.roots of den_C den_G + K num_C num_G
        char = np.polyadd(np.polymul(pd, problem.plant.den), k * np.polymul(zn, problem.plant.num))
        ref = np.roots(char)
        _assert_poles(shown["poles"], ref)
        # 3. they lie on the branches that synth trace --design traced
        scale = float(np.max(np.abs(ref)))
        for z in ref:
            dist = min(_segment_distance(z, roots[:-1, j], roots[1:, j])
                       for j in range(roots.shape[1]))
            assert dist <= 5e-3 * scale, (index, z, dist)
        i = int(np.searchsorted(gains, k))
        assert gains[i - 1] <= k <= gains[i]
        # 4. the verifier at that gain, recomputed here
        v = verify(problem, np.multiply(k, zn), pd)
        for key in ("phase_margin_deg", "gain_margin_db", "crossover_frequency",
                    "overshoot_percent", "settling_time", "peak_sensitivity"):
            if v.metrics[key] is None:
                assert shown["numbers"][key] in ("unbounded", "-")
            elif v.metrics[key] == 0:
                assert float(shown["numbers"][key]) == 0
            else:
                assert _close(float(shown["numbers"][key]), v.metrics[key], 6e-4), key
        for key, status in shown["reqs"].items():
            if key != "stability":
                assert (status == "violated") == (key in v.shortfalls), key
        assert (shown["verdict"].startswith("meets")) == v.feasible
        # 5. margins and step against scipy.signal
        num_l = k * np.polymul(zn, problem.plant.num)
        den_l = np.polymul(pd, problem.plant.den)
        wc, pm, gm = _scipy_margins(num_l, den_l)
        assert _close(float(shown["numbers"]["crossover_frequency"]), wc, 1e-3)
        assert _close(float(shown["numbers"]["phase_margin_deg"]), pm, 1e-3)
        assert _close(float(shown["numbers"]["gain_margin_db"]), gm, 1e-3)
        overshoot, settle = _scipy_step(num_l, np.polyadd(den_l, num_l), 6.0)
        assert float(shown["numbers"]["overshoot_percent"]) == pytest.approx(overshoot,
                                                                             rel=2e-3, abs=0.02)
        assert _close(float(shown["numbers"]["settling_time"]), settle, 3e-3)
    assert errors == []
    page.close()


def test_switching_designs(built, browser):
    page, errors = _open(browser, built["page"])
    page.select_option("#design", "1")
    shown = page.evaluate(_SHOWN)
    d1 = built["data"]["designs"][1]
    assert shown["gain"] == "K = 200" and "Design 2" in shown["verified"]
    assert shown["slider"] == d1["design_index"]
    # the second design's poles at its own gain: numpy.roots
    k, zn, pd = DESIGNS[1]
    problem = built["problem"]
    _assert_poles(shown["poles"], np.roots(np.polyadd(np.polymul(pd, problem.plant.den),
                                                      k * np.polymul(zn, problem.plant.num))))
    assert errors == []
    page.close()


def test_models_load_and_frontier_appear_when_present(tmp_path, browser, monkeypatch):
    # the optional blocks: a second plant model, a load response and a frontier. The second
    # model and the load response are put in through the sweep's seams; the load response
    # itself comes from scipy.signal.step of G / (1 + C G) (load at the plant input, r = 0)
    import dataclasses

    import synth.verify.sweep as sweep
    from synth.problem.plant import Plant
    from synth.verify.simulation import StepResponse

    problem = problem_from_text(REQ, "carriage.toml")
    heavy = Plant.from_coefficients([1200.0], [1.0, 210.0, 2000.0, 0.0], label="heavy load")
    monkeypatch.setattr(sweep, "plant_models",
                        lambda p: [("nominal", p.plant), ("heavy load", heavy)])
    real_curves = sweep.curves

    def with_load(problem_, num, den, t_end=None, plant=None):
        c = real_curves(problem_, num, den, t_end=t_end, plant=plant)
        g = problem_.plant if plant is None else plant
        num_t = np.polymul(g.num, den)
        den_t = np.polyadd(np.polymul(g.den, den), np.polymul(g.num, num))
        t = np.linspace(0.0, t_end or 1.0, 801)
        _, y = signal.step((num_t, den_t), T=t)
        return dataclasses.replace(c, load=StepResponse(t=t, y=y, u=np.zeros_like(t),
                                                        final_value=0.0, exact_delay=True))

    monkeypatch.setattr(sweep, "curves", with_load)
    frontier = {"schema": "synth.frontier/1", "objective": "disturbance",
                "measure": "peak_sensitivity",
                "structures": {"PI": [{"level": 1.4, "value": 2.7}, {"level": 1.6, "value": 2.1},
                                      {"level": 1.8, "value": None}],
                               "PID": [{"level": 1.4, "value": 1.9},
                                       {"level": 1.6, "value": 1.5}]},
                "relaxations": []}
    doc = _doc(problem)
    doc["designs"] = doc["designs"][:1]
    written = _write_page(prepare_report(problem, doc, top=1, frontier=frontier),
                          tmp_path / "explore.html")
    data = _data(written.read_text(encoding="utf-8"))
    assert data["models"] == ["nominal", "heavy load"]
    page, errors = _open(browser, written)
    shown = page.evaluate(_SHOWN)
    assert shown["loadShown"] and shown["loadPaths"] >= 1
    assert shown["frontierShown"] and shown["frontierNames"] == ["PI", "PID"]
    assert "heavy load" in shown["modelOptions"]
    page.select_option("#model", "1")  # the heavy-load model alone
    shown = page.evaluate(_SHOWN)
    k, zn, pd = DESIGNS[0]
    _assert_poles(shown["poles"],
                  np.roots(np.polyadd(np.polymul(pd, heavy.den), k * np.polymul(zn, heavy.num))))
    assert errors == []
    page.close()


def test_a_run_without_designs_still_gets_a_page(tmp_path, browser):
    problem = problem_from_text(REQ, "carriage.toml")
    written = _write_page(prepare_report(problem, {"schema": "synth.design/1",
                                                   "plant": problem.plant.to_json(),
                                                   "designs": []}), tmp_path / "explore.html")
    page, errors = _open(browser, written)
    assert page.is_visible("#nothing") and not page.is_visible("#explorer")
    assert page.is_visible("#cautions")
    assert errors == []
    page.close()

