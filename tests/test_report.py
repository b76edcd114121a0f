"""The design report (synth.outputs.report.document.write_report): HTML and PDF.

External references, named beside each check:
html.parser (the standard library's HTML parser) for the page's structure;
pypdf (PdfReader) for the PDF's pages and text, where installed; pdftoppm or
pypdfium2 to render the PDF's first page, where installed; scipy.signal.freqresp
for the margins and sensitivity peak printed in the figures; numpy.roots for the
closed-loop poles; common practice of the trade: the proportional loop around a
double integrator, s^2 + K, is never asymptotically stable.
"""

from __future__ import annotations

import math
import re
import shutil
import subprocess
from html.parser import HTMLParser

import numpy as np
import pytest
from handmade import THREE_LOADS, THREE_LOADS_POLYS, hand_design
from scipy.signal import freqresp

from synth.design import prepare_report
from synth.errors import OptionError
from synth.outputs.implementation import add_implementation_forms
from synth.outputs.report import document
from synth.outputs.report.document import CAUTIONS, FIGURE_KINDS, SECTION_TITLES
from synth.problem.requirements import problem_from_text


def write_report(problem, doc, outdir):
    """Gather the report's input (curves, loci, explanation), then write it."""
    return document.write_report(prepare_report(problem, doc), outdir)

RIG = """
[plant]
label = "double integrator rig"
numerator = [1.0]
denominator = [1.0, 0.0, 0.0]

[requirements]
max_overshoot_percent = 30.0
max_settling_time = 5.0
max_control_effort = 20.0
max_peak_sensitivity = 2.0
min_phase_margin_deg = 30.0
"""


#: metrics of the hand-built report designs (the report prints, never judges, them)
_METRICS = {"overshoot_percent": 25.0, "settling_time": 4.0, "rise_time": 0.8,
            "steady_state_error": 0.0, "min_damping_ratio": 0.45,
            "phase_margin_deg": 44.5, "gain_margin_db": None,
            "peak_sensitivity": 1.34, "peak_control_effort": 10.0,
            "stable_plant_gain_range": [0.1, None]}


def _design(problem, rank, structure, num, den, feasible=True, violations=()):
    return hand_design(rank, structure, num, den, problem.plant.num, problem.plant.den,
                       feasible, violations, _METRICS)


# lead, PD (with filter) and PID compensators on a double integrator, plus a fourth design
LEAD = ([10.0, 10.0], [1.0, 10.0])
PD = ([2.0, 1.0], [0.05, 1.0])
PID = ([6.0, 5.0, 1.0], [0.02, 1.0, 0.0])


def _rig_doc(problem, sample_time=0.05):
    designs = [_design(problem, 1, "lead", *LEAD),
               _design(problem, 2, "PD", *PD),
               _design(problem, 3, "PID", *PID, False, ["overshoot 42 % above the 30 % limit"]),
               _design(problem, 4, "P", [1.0], [1.0], False, ["closed loop not stable"])]
    doc = {"schema": "synth.design/1", "plant": problem.plant.to_json(), "designs": designs}
    return add_implementation_forms(doc, sample_time=sample_time)


class _Page(HTMLParser):
    """Collects headings, figures, svg roots, section order and every attribute."""

    def __init__(self):
        super().__init__()
        self.stack: list[str] = []
        self.h2: list[str] = []
        self.h3: list[str] = []
        self.sections: list[str] = []
        self.figures: list[str] = []
        self.svg_roots = 0
        self.svg_depth = 0
        self.figure_svgs: list[int] = []
        self.tags: list[str] = []
        self.attrs: list[tuple[str, str, str]] = []
        self.text: list[str] = []
        self.caution_text: list[str] = []
        self._grab: str | None = None
        self._buf: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        a = dict(attrs)
        self.attrs.extend((tag, k, v or "") for k, v in attrs)
        if tag == "svg":
            if self.svg_depth == 0:
                self.svg_roots += 1
                if self.figure_svgs:
                    self.figure_svgs[-1] += 1
            self.svg_depth += 1
        if tag == "section":
            self.sections.append(a.get("id", ""))
        if tag == "figure":
            self.figures.append(a.get("data-figure", ""))
            self.figure_svgs.append(0)
        if tag in ("h2", "h3"):
            self._grab, self._buf = tag, []
        self.stack.append(tag)

    def handle_endtag(self, tag):
        if tag == "svg":
            self.svg_depth -= 1
        if tag == self._grab:
            (self.h2 if tag == "h2" else self.h3).append("".join(self._buf).strip())
            self._grab = None
        if self.stack and self.stack[-1] == tag:
            self.stack.pop()
        elif tag in self.stack:
            while self.stack and self.stack.pop() != tag:
                pass

    def handle_data(self, data):
        if self._grab:
            self._buf.append(data)
        self.text.append(data)
        if self.sections and self.sections[-1] == "cautions":
            self.caution_text.append(data)


@pytest.fixture(scope="module")
def rig_report(tmp_path_factory):
    problem = problem_from_text(RIG, "rig.toml")
    doc = _rig_doc(problem)
    out = tmp_path_factory.mktemp("report") / "new" / "folder"
    written = write_report(problem, doc, out)
    page = _Page()
    html_text = written[0].read_text(encoding="utf-8")
    page.feed(html_text)
    return problem, doc, written, page, html_text


def test_every_file_written_into_a_new_folder(rig_report):
    _, _, written, _, _ = rig_report
    assert [p.name for p in written] == ["report.html", "report.pdf", "explore.html"]
    assert all(p.is_file() and p.stat().st_size > 1000 for p in written)
    # nothing else is left in the folder (no temporary files)
    assert sorted(p.name for p in written[0].parent.iterdir()) == ["explore.html", "report.html",
                                                                   "report.pdf"]


def test_every_section_and_heading_is_present(rig_report):
    _, _, _, page, _ = rig_report
    for title in SECTION_TITLES.values():
        assert title in page.h2
    assert "Design 1: lead" in page.h2 and "Design 2: PD" in page.h2 and "Design 3: PID" in page.h2
    assert "Design 4: P" not in page.h2  # the top three designs get a section
    for sub in ("Root locus", "Step response and control effort", "Loop frequency response",
                "Sensitivity", "Implementation forms", "Discrete time"):
        assert page.h3.count(sub) == 3
    # the cautions come first, before the plant
    assert page.sections[0] == "cautions" and page.sections[1] == "plant"


def test_cautions_at_the_top(rig_report):
    _, _, _, page, html_text = rig_report
    text = " ".join(" ".join(page.caution_text).split())
    for c in CAUTIONS:
        assert c in text
    for phrase in ("linear model", "saturation", "delay", "nonlinearities", "reduced gains",
                   "hardware limits", "functional-safety standards", "licensed engineering"):
        assert phrase in text
    assert html_text.index("Read this first") < html_text.index("<h2>Plant</h2>")


def test_every_figure_is_an_inline_svg(rig_report):
    _, _, _, page, _ = rig_report
    assert page.figures == list(FIGURE_KINDS) * 3
    assert page.figure_svgs == [1] * len(page.figures)
    assert page.svg_roots == 4 * 3


def test_page_is_self_contained_and_prints(rig_report):
    _, _, _, page, html_text = rig_report
    assert "script" not in page.tags and "link" not in page.tags
    assert "img" not in page.tags and "iframe" not in page.tags
    for tag, key, value in page.attrs:
        if key in ("src", "href") or (key == "xlink:href" and not value.startswith("#")):
            # only in-page anchors: no file, no network
            assert value.startswith("#"), (tag, key, value)
    assert "url(http" not in html_text and "@import" not in html_text
    assert "@media print" in html_text
    # inline SVG ids must be unique in one page
    ids = re.findall(r'\sid="([^"]+)"', html_text)
    assert len(ids) == len(set(ids))


def test_proportional_verdict_for_a_double_integrator(rig_report):
    # common practice: s^2 + K has roots +-j sqrt(K) or real +-sqrt(-K): never stable
    _, _, _, page, _ = rig_report
    text = " ".join(page.text)
    assert "no proportional gain, positive or negative, stabilises this plant" in text


def test_ranking_table_lists_every_design(rig_report):
    _, doc, _, page, html_text = rig_report
    ranking = html_text[html_text.index('id="ranking"'):html_text.index('id="design-1"')]
    rows = re.findall(r"<tr><td class=\"num\">(\d+)</td><td>([^<]+)</td>", ranking)
    assert rows == [("1", "lead"), ("2", "PD"), ("3", "PID"), ("4", "P")]
    assert "overshoot 42 % above the 30 % limit" in ranking


def test_figures_carry_margins_and_peak_that_scipy_confirms(rig_report):
    # the phase margin and sensitivity peak printed in the lead design's figures, against
    # scipy.signal.freqresp of L = C G on a dense grid
    _, _, _, _, html_text = rig_report
    sec = html_text[html_text.index('id="design-1"'):html_text.index('id="design-2"')]
    pm = float(re.search(r"phase margin ([0-9.]+)° at", sec).group(1))
    ms = float(re.search(r"peak ([0-9.]+) \(", sec).group(1))
    w = np.logspace(-2, 2, 200001)
    _, L = freqresp((np.polymul(LEAD[0], [1.0]), np.polymul(LEAD[1], [1.0, 0.0, 0.0])), w=w)
    i = int(np.argmin(np.abs(np.abs(L) - 1.0)))
    pm_ref = 180.0 + math.degrees(np.angle(L[i]))
    ms_ref = float(np.max(np.abs(1.0 / (1.0 + L))))
    assert pm == pytest.approx(pm_ref, abs=0.06)  # printed to 3 significant digits
    assert ms == pytest.approx(ms_ref, abs=0.006)


def test_implementation_forms_in_the_report(rig_report):
    _, doc, _, _, html_text = rig_report
    sec = html_text[html_text.index('id="design-3"'):html_text.index('id="notes"')]
    par = doc["designs"][2]["implementation"]["parallel"]
    # parallel gains of (6 s^2 + 5 s + 1)/(0.02 s^2 + s): coefficient matching by hand,
    # Ki = 1, Kp = 5 - 0.02 Ki, Kd = 6 - 0.02 Kp (Astrom and Hagglund's parallel form)
    assert par["ki"] == pytest.approx(1.0)
    assert par["kp"] == pytest.approx(4.98)
    assert par["kd"] == pytest.approx(6.0 - 0.02 * 4.98)
    assert "Kp = 4.98" in sec and "Ki = 1 1/s" in sec
    assert "u[k] =" in sec and "sampled loop (plant by zero-order hold)" in sec


def test_pdf_has_the_same_content(rig_report):
    _, _, written, _, _ = rig_report
    pdf = written[1]
    assert pdf.read_bytes()[:5] == b"%PDF-"
    pypdf = pytest.importorskip("pypdf")
    reader = pypdf.PdfReader(str(pdf))
    assert len(reader.pages) >= 4
    first = " ".join(reader.pages[0].extract_text().split())
    assert "Read this first" in first
    assert "linear model" in first and "functional-safety standards" in first
    everything = " ".join(" ".join(p.extract_text() for p in reader.pages).split())
    for title in (*SECTION_TITLES.values(), "Design 1: lead", "Design 2: PD", "Design 3: PID"):
        assert title in everything
    for sub in ("Step response and control effort", "Loop frequency response", "Discrete time"):
        assert everything.count(sub) == 3


def test_pdf_locus_pages_are_vector_with_text_as_text(rig_report):
    # pypdf (PdfReader, ContentStream): the pages holding a root locus carry no image
    # XObject, draw with path operators, and their labels are text (extractable)
    _, _, written, _, _ = rig_report
    pypdf = pytest.importorskip("pypdf")
    from pypdf.generic import ContentStream

    reader = pypdf.PdfReader(str(written[1]))
    pages = [p for p in reader.pages if "root locus of the design's loop" in p.extract_text()]
    assert len(pages) == 3
    for page in pages:
        xobjects = page["/Resources"].get("/XObject") or {}
        subtypes = [xobjects[name].get_object().get("/Subtype") for name in xobjects]
        assert "/Image" not in subtypes
        ops = [op for _, op in ContentStream(page.get_contents(), reader).operations]
        assert ops.count(b"l") + ops.count(b"c") > 200  # line and curve segments
        assert "real part of s" in page.extract_text()


def _png_size(data: bytes) -> tuple[int, int]:
    assert data[:8] == b"\x89PNG\r\n\x1a\n"
    return int.from_bytes(data[16:20], "big"), int.from_bytes(data[20:24], "big")


def test_pdf_first_page_renders(rig_report, tmp_path):
    _, _, written, _, _ = rig_report
    if shutil.which("pdftoppm"):
        subprocess.run(["pdftoppm", "-f", "1", "-l", "1", "-r", "40", "-png", str(written[1]),
                        str(tmp_path / "page")], check=True, timeout=60)
        (png,) = tmp_path.glob("page*.png")
        w, h = _png_size(png.read_bytes())
        assert h / w == pytest.approx(297 / 210, rel=0.02)  # A4 portrait
        return
    pdfium = pytest.importorskip("pypdfium2", reason="neither pdftoppm nor pypdfium2 installed")
    doc = pdfium.PdfDocument(str(written[1]))
    image = doc[0].render(scale=0.5).to_numpy()
    assert image.shape[0] / image.shape[1] == pytest.approx(297 / 210, rel=0.02)
    assert image.min() < 100 < image.max()  # ink on paper


def test_failure_leaves_no_partial_report(tmp_path, monkeypatch):
    problem = problem_from_text(RIG, "rig.toml")
    doc = _rig_doc(problem, sample_time=None)
    doc["designs"] = doc["designs"][:1]

    def broken(*args, **kwargs):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(document, "render_pdf", broken)
    out = tmp_path / "rep"
    with pytest.raises(OptionError):
        write_report(problem, doc, out)
    assert not out.exists()  # the folder this call made is gone again
    existing = tmp_path / "old"
    existing.mkdir()
    (existing / "report.html").write_text("previous report")
    with pytest.raises(OptionError):
        write_report(problem, doc, existing)
    assert sorted(p.name for p in existing.iterdir()) == ["report.html"]
    assert (existing / "report.html").read_text() == "previous report"


def test_report_folder_that_is_a_file_is_an_option_error(tmp_path):
    problem = problem_from_text(RIG, "rig.toml")
    f = tmp_path / "taken"
    f.write_text("x")
    with pytest.raises(OptionError):
        write_report(problem, {"schema": "synth.design/1", "plant": problem.plant.to_json(),
                               "designs": []}, f)


def test_dead_time_plant_and_no_designs(tmp_path):
    # a run with no candidate still gives a report with the cautions and the verdict
    problem = problem_from_text("""
[plant]
numerator = [2.0]
denominator = [1.0, 1.0]
dead_time = 0.5
[requirements]
max_overshoot_percent = 10.0
""", "tank.toml")
    written = write_report(problem, {"schema": "synth.design/1",
                                     "plant": problem.plant.to_json(), "designs": []},
                           tmp_path / "r")
    page = _Page()
    page.feed(written[0].read_text(encoding="utf-8"))
    assert page.sections[0] == "cautions"
    assert page.svg_roots == 0
    text = " ".join(page.text)
    assert "Pade form of order 3" in text and "exact delay" in text
    assert "The search found no candidate design." in text


def _svg_peak(section: str) -> float:
    return float(re.search(r"peak ([0-9.]+) \(", section).group(1))


def test_reverse_acting_and_zero_gain_designs(tmp_path):
    # G = -1/(s+1) needs a negative gain: with C = -2 the characteristic polynomial is
    # (s + 1) + (-2)(-1) = s + 3 (numpy.roots); a zero-gain design has no locus but must not
    # break the report
    problem = problem_from_text("""
[plant]
numerator = [-1.0]
denominator = [1.0, 1.0]
""", "reverse.toml")
    designs = [_design(problem, 1, "P", [-2.0], [1.0]),
               _design(problem, 2, "P", [0.0], [1.0], False, ["gain 0 does nothing"])]
    assert designs[0]["closed_loop_poles"] == [[-3.0, 0.0]]
    doc = add_implementation_forms({"schema": "synth.design/1",
                                    "plant": problem.plant.to_json(), "designs": designs})
    written = write_report(problem, doc, tmp_path / "rev")
    page = _Page()
    html_text = written[0].read_text(encoding="utf-8")
    page.feed(html_text)
    assert page.figures == list(FIGURE_KINDS) * 2
    assert "operating at K = -2" in html_text
    assert "no root locus: the compensator gain is 0" in html_text
    # |S| of L = 2/(s+1) peaks at low frequency: 1/(1 + 2) (scipy.signal.freqresp)
    _, L = freqresp(([2.0], [1.0, 1.0]), w=np.logspace(-4, 4, 4001))
    sec = html_text[html_text.index('id="design-1"'):html_text.index('id="design-2"')]
    assert _svg_peak(sec) == pytest.approx(float(np.max(np.abs(1 / (1 + L)))), abs=0.001)


def test_report_for_a_bundled_case_from_the_real_pipeline(tmp_path):
    # the heated tank with a 10 s transport delay, through synth.design with a short budget
    import dataclasses
    from pathlib import Path

    from synth.design import run_design
    from synth.problem.requirements import load_problem

    case = Path(__file__).resolve().parents[1] / "cases" / "heated-tank-delay.toml"
    problem = load_problem(case)
    problem = dataclasses.replace(problem, search=dataclasses.replace(
        problem.search, time_budget=0.5, keep=1, structures=("PI",)))
    doc = add_implementation_forms(run_design(problem).to_json(), sample_time=1.0)
    designs = doc["designs"]
    assert designs
    written = write_report(problem, doc, tmp_path / "tank")
    page = _Page()
    html_text = written[0].read_text(encoding="utf-8")
    page.feed(html_text)
    assert page.figures == list(FIGURE_KINDS) and page.svg_roots == 4
    assert page.sections[0] == "cautions"
    # the report stays small: vector figures with simplified paths, never rasterised
    assert all(p.stat().st_size < 2_000_000 for p in written)
    for title in (*SECTION_TITLES.values(), "Design 1: PI"):
        assert title in page.h2
    text = " ".join(page.text)
    assert "exact dead time of 10 s" in text
    # the sensitivity peak in the figure, against scipy.signal.freqresp of the rational part
    # times exp(-j w 10) for the exact delay
    top = designs[0]["compensator"]
    plant = problem.plant
    w = np.logspace(-4, 0, 40001)
    _, L = freqresp((np.polymul(top["numerator"], plant.rational_num),
                     np.polymul(top["denominator"], plant.rational_den)), w=w)
    L = L * np.exp(-1j * w * plant.dead_time)
    sec = html_text[html_text.index('id="design-1"'):html_text.index('id="notes"')]
    ms = float(np.max(np.abs(1.0 / (1.0 + L))))
    # printed to 3 significant digits
    assert _svg_peak(sec) == pytest.approx(ms, abs=0.51 * 10 ** (math.floor(math.log10(ms)) - 2))


def test_report_overlays_the_models_and_marks_the_worst_case(tmp_path):
    # three loads of a servo; the report draws each model's step response (the verifier's
    # curves, checked here against scipy.signal.step on each model) and the worst-case table
    from scipy.signal import step

    from synth.design import run_design
    from synth.outputs.report.document import MODEL_FIGURE

    problem = problem_from_text(THREE_LOADS + """
[requirements]
max_overshoot_percent = 10.0
min_phase_margin_deg = 45.0
[search]
structures = ["lead"]
effort = 0.2
keep = 1
""", "loads.toml")
    doc = add_implementation_forms(run_design(problem).to_json())
    report = prepare_report(problem, doc, top=1)
    models = report.figures[0].models
    assert [m.name for m in models][:3] == ["nominal", "heavy", "light"]
    polys = THREE_LOADS_POLYS
    c = doc["designs"][0]["compensator"]
    for m in models[:3]:
        n, d = polys[m.name]
        num_l = np.polymul(c["numerator"], n)
        cl = np.polyadd(np.polymul(c["denominator"], d), num_l)
        t = m.curves.step.t
        _, y = step((num_l, cl), T=t)
        assert np.max(np.abs(y - m.curves.step.y)) < 2e-3
    worst = doc["designs"][0]["worst_case"]["overshoot_percent"]["model"]
    assert "overshoot_percent" in next(m for m in models if m.model == worst).worst_for
    written = document.write_report(report, tmp_path / "loads")
    page = _Page()
    html_text = written[0].read_text(encoding="utf-8")
    page.feed(html_text)
    assert page.figures == [*FIGURE_KINDS, MODEL_FIGURE]
    assert "Over the plant models" in html_text and "worst value" in html_text
    assert "Plant models (every requirement must hold for all)" in html_text
