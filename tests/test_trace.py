"""The traced locus (synth.locus.trace, grid, branches) and its picture.

External references used here:

* numpy.roots (closed-loop roots at every traced gain and of the batched solver);
* scipy.optimize.linear_sum_assignment (as an independent matcher when
  comparing root sets);
* the contract's synth.trace/1 object (/work/shared/contract.md, "JSON
  written by trace --json") and json.dumps(allow_nan=False) for strict JSON;
* worked example of K. Ogata, *Modern Control Engineering* (from memory):
  K/(s(s+1)(s+2)) crosses the imaginary axis at K = 6, breakaway K = 0.3849;
* facts of the trade (common practice): the locus starts at the open-loop
  poles (K = 0), m branches end at the zeros and n - m go to infinity along the
  asymptotes; roots move continuously with K;
* the PNG signature (ISO/IEC 15948) and xml.etree for SVG files.
"""

from __future__ import annotations

import json
import xml.etree.ElementTree as ET

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import linear_sum_assignment

from synth.errors import InputError
from synth.locus.branches import track_branches
from synth.locus.grid import adaptive_grid, batch_roots
from synth.locus.trace import trace_locus
from synth.outputs.report.locus_plot import plot_locus
from synth.problem.region import Region

OGATA3 = ([1.0], np.poly([0, -1, -2]))
OGATA4 = ([1.0], np.poly([0, -3, -1 + 1j, -1 - 1j]))


def match_error(a, b):
    """Largest relative distance between two root sets under optimal matching."""
    c = np.abs(np.asarray(a)[:, None] - np.asarray(b)[None, :])
    i, j = linear_sum_assignment(c)
    return float(np.max(c[i, j] / np.maximum(1.0, np.abs(np.asarray(b)[j]))))


def test_json_matches_contract():
    t = trace_locus(*OGATA3)
    doc = t.to_json()
    text = json.dumps(doc, allow_nan=False)  # strict JSON: no NaN or inf
    doc = json.loads(text)
    assert doc["schema"] == "synth.trace/1"
    assert doc["asymptotes"]["centroid"] == pytest.approx(-1.0)
    assert doc["asymptotes"]["angles_deg"] == pytest.approx([60.0, 180.0, 300.0])
    (bp,) = doc["breakaway_points"]
    assert set(bp) >= {"s", "gain"} and len(bp["s"]) == 2
    assert bp["gain"] == pytest.approx(0.3849, abs=1e-4)  # Ogata (from memory)
    (cr,) = doc["imaginary_axis_crossings"]
    assert cr["frequency"] == pytest.approx(2**0.5) and cr["gain"] == pytest.approx(6.0)
    g = doc["branches"]["gains"]
    roots = doc["branches"]["roots"]
    assert len(roots) == len(g) and all(len(row) == 3 for row in roots)
    assert all(len(p) == 2 for row in roots for p in row)
    assert g[0] == 0.0 and all(b >= a for a, b in zip(g, g[1:], strict=False))


def test_roots_match_numpy_at_every_gain():
    for num, den in (OGATA3, OGATA4, ([1.0, 2.0], [1.0, 2.0, 3.0]),
                     (np.poly([-1, -2, -5]), np.poly([0, -0.5, -3, -1 + 1j, -1 - 1j, -8]))):
        t = trace_locus(num, den)
        worst = 0.0
        for k, row in zip(t.gains, t.roots, strict=True):
            worst = max(worst, match_error(row, np.roots(np.polyadd(den, k * np.asarray(num)))))
        assert worst < 1e-5  # multiple roots at breakaway gains limit this (numpy.roots too)


def test_special_gains_are_sampled_exactly_and_end_behaviour_shows():
    num, den = OGATA4
    t = trace_locus(num, den, region=Region(sigma=0.2, zeta=0.4))
    for k in [t.crossings[0].gain, t.breakaways[0].gain]:
        assert np.min(np.abs(t.gains - k)) == 0.0
    for lo, hi in t.region_intervals:
        for e in (lo, hi):
            if e is not None and e > 0:
                assert np.min(np.abs(t.gains - e)) == 0.0
    # the locus starts at the poles (numpy.roots of D) ...
    assert match_error(t.roots[0], np.roots(den)) < 1e-12
    assert np.allclose(t.roots[0], t.poles)
    # ... and the n - m = 4 branches end far out along the asymptotes
    last = t.roots[-1]
    c = t.asymptotes.centroid
    assert np.min(np.abs(last - c)) > 3 * t.scale
    ang = np.degrees(np.angle(last - c)) % 360
    for x in ang:
        assert np.min(np.abs((np.asarray(t.asymptotes.angles_deg) - x + 180) % 360 - 180)) < 3.0


def test_finite_branches_end_at_zeros():
    num, den = np.poly([-1, -4 + 2j, -4 - 2j]), np.poly([0, -2, -3, -6, -1 + 3j, -1 - 3j])
    t = trace_locus(num, den)
    zeros = np.roots(num)  # numpy.roots
    last = t.roots[-1]
    for z in zeros:
        assert np.min(np.abs(last - z)) < 0.05 * t.scale


def test_branches_are_continuous():
    # fact of the trade: roots move continuously with K, so along each branch a
    # step is small next to the frame except at gains where roots collide
    t = trace_locus(np.poly([-1, -2, -5]), np.poly([0, -0.5, -3, -1 + 1j, -1 - 1j, -4 + 2j, -4 - 2j, -8]))
    r = t.roots
    near = (np.abs(r[1:] - t.center) < 2 * t.scale) & (np.abs(r[:-1] - t.center) < 2 * t.scale)
    steps = np.abs(np.diff(r, axis=0))[near]
    assert np.max(steps) < 0.25 * t.scale


def test_branch_tracking_recovers_shuffled_paths():
    # known smooth paths, rows shuffled with a seeded generator: tracking must
    # put them back (up to the labelling given by the first row)
    rng = np.random.default_rng(7)
    k = np.linspace(0, 1, 200)
    paths = np.stack([np.exp(2j * np.pi * (k + j / 4)) * (1 + j) for j in range(4)], axis=1)
    shuffled = np.stack([row[rng.permutation(4)] for row in paths])
    first = np.argsort([np.argmin(np.abs(paths[0] - x)) for x in shuffled[0]])
    tracked = track_branches(shuffled, 0j, 2.0, first=first)
    assert np.allclose(tracked, paths)


def test_branch_through_infinity_equal_degrees():
    # (s+2)/(s+1) for K < 0: the root s = -(1+2K)/(1+K) runs off to infinity at K = -1
    num, den = [1.0, 2.0], [1.0, 1.0]
    t = trace_locus(num, den, negative=True)
    assert np.all(t.gains <= 0) and t.to_json()["gain_sign"] == "negative"
    assert np.all(np.isfinite(t.roots))
    exact = -(1 + 2 * t.gains) / (1 + t.gains)
    assert np.allclose(t.roots[:, 0], exact, rtol=1e-9)
    json.dumps(t.to_json(), allow_nan=False)


def test_batch_roots_match_numpy_roots():
    # numpy.roots per gain is the reference for the batched eigenvalues
    rng = np.random.default_rng(3)
    num, den = rng.normal(size=4), rng.normal(size=9)
    ks = np.concatenate([-np.geomspace(1e-3, 1e3, 20), np.geomspace(1e-3, 1e3, 20)])
    got = batch_roots(num, den, ks)
    for k, row in zip(ks, got, strict=True):
        assert match_error(row, np.roots(np.polyadd(den, k * num))) < 1e-9
    # equal degrees: at K = -d0/n0 the degree drops and one root is infinite
    row = batch_roots([2.0, 1.0], [1.0, 3.0], [-0.5])[0]
    assert np.isinf(row[0]) or np.isinf(row[-1])


def test_grid_refines_where_roots_move_fast():
    # fact of the trade (common practice): near a breakaway point the roots move
    # like sqrt(K - K_b), fastest there; far out they move slowly in relative terms
    num, den = OGATA3
    g = adaptive_grid(num, den)
    k = np.abs(g.gains)
    # samples per decade of gain: densest around the breakaway K = 0.385
    dens_break = np.sum((k > 0.2) & (k < 0.7))
    dens_far = np.sum((k > 50) & (k < 175))
    assert dens_break > 2 * dens_far


def test_summary_lines_mention_the_special_points():
    t = trace_locus(*OGATA3, region=Region(sigma=0.1, zeta=0.5))
    text = "\n".join(t.summary_lines())
    assert "K = 6" in text and "1.414" in text and "-0.4226" in text
    assert "60, 180, 300" in text
    assert all(isinstance(x, str) and "\n" not in x for x in t.summary_lines())


def test_bad_options():
    # the contract: bad input is an InputError (exit 2 at the CLI), never a traceback
    with pytest.raises(InputError):
        trace_locus([1.0], [1.0, 1.0], k_max=-1)
    with pytest.raises(InputError):
        trace_locus([1.0, 1.0, 1.0], [1.0, 1.0])


def test_plot_png_and_svg(tmp_path):
    t = trace_locus(*OGATA4, region=Region(sigma=0.2, zeta=0.4))
    png = plot_locus(t, tmp_path / "locus.png", operating_gain=2.0, title="test loop")
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    svg = plot_locus(t, tmp_path / "locus.svg")
    root = ET.parse(svg).getroot()
    assert root.tag.endswith("svg")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["locus.png", "locus.svg"]
    with pytest.raises(InputError):
        plot_locus(t, tmp_path / "locus.jpg")
    with pytest.raises(InputError):
        plot_locus(t, tmp_path / "missing" / "locus.png")


@st.composite
def loops(draw):
    """Random loops, proper, with repeated poles and integrators allowed."""
    grid = st.integers(-24, 4).map(lambda k: k / 4)
    poles = [draw(grid) for _ in range(draw(st.integers(1, 5)))]
    if draw(st.booleans()):
        c = complex(draw(grid), draw(st.integers(1, 12)) / 4)
        poles += [c, c.conjugate()]
    m = draw(st.integers(0, len(poles)))
    zeros = [draw(grid) for _ in range(m)]
    gain = draw(st.sampled_from([-2.0, 0.5, 1.0, 10.0]))
    num = gain * np.real(np.poly(zeros)) if zeros else np.array([gain])
    return num, np.real(np.poly(poles)), draw(st.booleans())


@settings(max_examples=25, deadline=None, derandomize=True)
@given(loops())
def test_random_loops_trace_cleanly(loop):
    num, den, negative = loop
    t = trace_locus(num, den, negative=negative, region=Region(sigma=0.2, zeta=0.3))
    json.dumps(t.to_json(), allow_nan=False)
    assert np.all(np.isfinite(t.roots))
    assert np.all(t.gains * (-1 if negative else 1) >= 0)
    # numpy.roots is the reference at a spread of the traced gains
    for i in np.linspace(0, t.gains.size - 1, 12).astype(int):
        ref = np.roots(np.polyadd(den, t.gains[i] * num))
        assert match_error(t.roots[i], ref) < 1e-4
    assert len(t.summary_lines()) >= 3
