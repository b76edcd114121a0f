"""Framing of the report's pictures, measured from the figures' axis limits on every bundled case.

External references, named beside each check:
* numpy.roots of the unreduced characteristic polynomial (the closed-loop poles)
  and of the loop numerator (the closed-loop zeros of unity feedback);
* common practice of the trade (Ogata, Modern Control Engineering, ch. 5; Nise,
  Control Systems Engineering, sec. 4.7; from memory): a stable pole five or
  more times farther from the imaginary axis than the slowest one, or one a
  zero nearly cancels, barely shapes the response; the others are dominant;
* scipy.signal.freqresp of the loop's rational part times exp(-j w T) (the
  crossovers, the sensitivity peak and the closed-loop bandwidth a Bode plot
  must show) and numpy.roots for the plant's resonances;
* matplotlib's Axes.get_xlim / get_ylim: what the picture actually frames.

The designs come from synth's own pipeline at a small search effort (what a
user gets, faster); the checks do not use synth's framing code.
"""

from __future__ import annotations

import dataclasses
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import signal

from synth.design import run_design
from synth.locus import trace_design_loop
from synth.outputs.document import read_design
from synth.outputs.report.design_figures import draw_bode, figure_data
from synth.outputs.report.locus_plot import draw_locus
from synth.problem.requirements import load_problem
from synth.verify.curves import curves

CASES = sorted((Path(__file__).resolve().parents[1] / "cases").glob("*.toml"))

#: The least share of the axes the dominant poles must span (see _share).
MIN_SHARE = 0.15


def _figure(width=7.4, height=4.6):
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(width, height))
    FigureCanvasAgg(fig)
    return fig


def _dominant(poles: np.ndarray, zeros: np.ndarray) -> np.ndarray:
    """Common practice: unstable poles, and stable non-dipole poles within 5x the slowest rate."""
    unstable = poles.real >= 0
    if zeros.size:
        dipole = np.array([np.min(np.abs(zeros - p)) <= 0.1 * abs(p) for p in poles])
    else:
        dipole = np.zeros(poles.size, bool)
    stable = poles[~unstable & ~dipole]
    if stable.size == 0:
        stable = poles[~unstable]
    keep = stable[-stable.real <= 5.0 * np.min(-stable.real)] if stable.size else stable
    return np.concatenate([poles[unstable], keep])


def _share(dominant: np.ndarray, xlim, ylim) -> float:
    """The larger of: the real parts' span (with the imaginary axis) over the width, and the
    imaginary parts' span over the height."""
    re = np.append(dominant.real, 0.0)
    return max(np.ptp(re) / abs(xlim[1] - xlim[0]), np.ptp(dominant.imag) / abs(ylim[1] - ylim[0]))


@pytest.fixture(scope="module", params=CASES, ids=[c.stem for c in CASES])
def case(request):
    problem = load_problem(request.param)
    quick = dataclasses.replace(problem, search=dataclasses.replace(
        problem.search, effort=0.05, keep=1))
    run = run_design(quick)
    assert run.designs, request.param.name
    doc = read_design(run.to_json())
    return problem, doc.designs[0]


def _loop(problem, num_c, den_c):
    plant = problem.plant
    char = np.polyadd(np.polymul(den_c, plant.den), np.polymul(num_c, plant.num))
    return np.roots(char), np.roots(np.polymul(num_c, plant.num))


def _locus_axes(problem, num_c, den_c):
    plant = problem.plant
    trace, k = trace_design_loop(problem, plant.num, plant.den, num_c, den_c)
    return draw_locus(_figure(), trace, region=problem.region, operating_gain=k)


def test_locus_frames_the_dominant_poles(case):
    problem, design = case
    c = design.compensator
    poles, zeros = _loop(problem, c.num, c.den)
    dom = _dominant(poles, zeros)
    axes = _locus_axes(problem, c.num, c.den)
    (x0, x1), (y0, y1) = axes.main.get_xlim(), axes.main.get_ylim()
    # every dominant pole well inside the view, spanning a reasonable share of it
    assert np.all((dom.real > x0) & (dom.real < x1) & (dom.imag > y0) & (dom.imag < y1))
    assert _share(dom, (x0, x1), (y0, y1)) >= MIN_SHARE
    # what is left out is far: more than twice the dominant poles' reach
    reach = float(np.max(np.abs(dom)))
    outside = poles[(poles.real < x0) | (poles.real > x1) | (poles.imag < y0) | (poles.imag > y1)]
    assert np.all(np.abs(outside) > 2.0 * reach)
    if outside.size:  # and then the overview holds them
        (ox0, ox1), (oy0, oy1) = axes.overview.get_xlim(), axes.overview.get_ylim()
        assert np.all((outside.real >= ox0) & (outside.real <= ox1)
                      & (outside.imag >= oy0) & (outside.imag <= oy1))


def test_a_far_pole_never_shrinks_the_main_view(case):
    # the same design with an extra real pole 40 times farther out than the dominant poles
    # (unit static gain), like a lead pole at -2000 rad/s beside poles near -40 +- 50j
    problem, design = case
    c = design.compensator
    poles, zeros = _loop(problem, c.num, c.den)
    far = 40.0 * float(np.max(np.abs(_dominant(poles, zeros))))
    num, den = c.num * far, np.polymul(c.den, [1.0, far])
    poles, zeros = _loop(problem, num, den)
    dom = _dominant(poles, zeros)
    axes = _locus_axes(problem, num, den)
    xlim, ylim = axes.main.get_xlim(), axes.main.get_ylim()
    assert _share(dom, xlim, ylim) >= MIN_SHARE
    assert xlim[0] > -far / 4  # the far pole is not in the main view ...
    assert axes.overview is not None and axes.overview.get_xlim()[0] < -far  # ... but overview


def _scipy_marks(problem, num_c, den_c) -> tuple[list[float], list[float]]:
    """Frequencies a Bode plot of the loop must show, by scipy.signal.freqresp and numpy.roots.

    Returns the gain crossovers, the phase crossover of the gain margin, the sensitivity
    peak, the closed-loop bandwidth (marks) and the plant's lightly damped resonances.
    """
    plant = problem.plant
    num = np.polymul(num_c, plant.rational_num)
    den = np.polymul(den_c, plant.rational_den)
    r = np.roots(plant.rational_den) if len(plant.rational_den) > 1 else np.zeros(0)
    r = r[r.imag > 0]
    res = [float(abs(p)) for p in r if -p.real / abs(p) < 0.5]
    scale = np.abs(np.concatenate([np.roots(num_c) if len(num_c) > 1 else [],
                                   np.roots(den) if len(den) > 1 else [], r]))
    scale = scale[scale > 0]
    lo, hi = float(scale.min()) / 1e4, float(scale.max()) * 1e4
    if plant.dead_time:
        hi = min(hi, 1e3 / plant.dead_time)
    w = np.geomspace(lo, hi, 200001)
    _, L = signal.freqresp((num, den), w=w)
    L = L * np.exp(-1j * w * plant.dead_time)
    mag = np.abs(L)
    marks = [float(w[i]) for i in np.nonzero(np.diff(np.sign(mag - 1.0)))[0]]
    # the phase crossover where the gain margin is read: the largest |L| below 1 there (a dead
    # time makes the phase cross -180 deg again and again, ever lower)
    phase = np.unwrap(np.angle(L))
    cross = [i for i in np.nonzero(np.diff(np.floor((phase + np.pi) / (2 * np.pi))))[0]
             if mag[i] < 1.0]
    if cross:
        marks.append(float(w[max(cross, key=lambda i: mag[i])]))
    S = np.abs(1.0 / (1.0 + L))
    marks.append(float(w[int(np.argmax(S))]))
    T = np.abs(L / (1.0 + L))
    below = np.nonzero(T < T[0] / math.sqrt(2.0))[0]
    if below.size:
        marks.append(float(w[below[0]]))
    return marks, res


def test_bode_window_follows_crossover_and_resonances(case):
    problem, design = case
    c = design.compensator
    poles, _ = _loop(problem, c.num, c.den)
    if np.any(poles.real >= 0):
        pytest.skip("unstable design: no margins to frame")
    fig = _figure(7.4, 3.4)
    draw_bode(fig, figure_data(curves(problem, c.num, c.den), design, problem))
    lo, hi = fig.axes[0].get_xlim()
    marks, res = _scipy_marks(problem, c.num, c.den)
    shown = marks + res
    # every mark within the window (a hair of slack for grid and interpolation) ...
    assert lo <= min(shown) * 1.01 and hi >= max(shown) * 0.99, (lo, hi, shown)
    # ... and the window not much wider: at most two decades beyond the marks on each side
    assert math.log10(hi / lo) <= math.log10(max(shown) / min(shown)) + 4.0 + 0.01


@pytest.mark.parametrize("scale", [1e-4, 1e5])
def test_framing_follows_the_loop_scale(scale):
    # frequency scaling s -> s / a moves every pole, zero and special point by the factor a
    # (common practice): the views move with them, with no absolute size anywhere
    from synth.outputs.report.framing import locus_view
    from synth.problem.region import Region

    poles = np.array([0.0, -2.0, -40 + 49j, -40 - 49j, -1428.0])
    zeros = np.array([-55 + 48j, -55 - 48j])
    closed = np.array([-58.5, -44.85 + 66.2j, -44.85 - 66.2j, -1359.0])
    base = locus_view(poles, zeros, closed, crossings=[700.0], breakaways=[-695.0],
                      region=Region(sigma=19.6, zeta=0.59))
    moved = locus_view(poles * scale, zeros * scale, closed * scale, crossings=[700.0 * scale],
                       breakaways=[-695.0 * scale], region=Region(sigma=19.6 * scale, zeta=0.59))
    assert np.allclose(np.asarray(moved.main), np.asarray(base.main) * scale, rtol=1e-12, atol=0)
    assert np.allclose(np.asarray(moved.overview), np.asarray(base.overview) * scale,
                       rtol=1e-12, atol=0)
    assert np.allclose(np.sort_complex(moved.far_closed), np.sort_complex(base.far_closed) * scale,
                       rtol=1e-12, atol=0)
