"""explain and trace with [sampling]: the z-plane, the unit circle and the region mapped by exp(sT).

External references:
* K/(s(s+1)) behind a hold at T = 1 s is stable for 0 < K < 2.3925 (K. Ogata, Discrete-Time
  Control Systems, 2nd ed., 1995, from memory); exactly (1 - 1/e)/(1 - 2/e) (mpmath), and the
  poles then sit on the unit circle at cos(w T) = (1.3679 - 0.3679 K)/2 (numpy.roots);
* numpy.roots of den(z) + K num(z) with the plant by scipy.signal.cont2discrete (zoh) and a
  whole-period delay as z^-1, at gains inside and outside every reported interval;
* the closed-loop eigenvalues of tests/independent.py's sampled loop (scipy's zero-order hold
  over a period split by a fractional delay) for a plant with a fractional delay;
* z = exp(s T) maps the decay line Re s = -sigma to the circle |z| = exp(-sigma T) and the
  damping ray to the spiral with -Re(ln z)/|ln z| = zeta (common practice; Franklin, Powell
  and Workman, Digital Control of Dynamic Systems, ch. 4, from memory).
"""

from __future__ import annotations

import json
import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy.signal import cont2discrete

from synth.locus.zplane import ZRegion, proportional_view, trace_zplane
from synth.problem.region import Region
from synth.problem.requirements import load_problem, problem_from_text
from tests.independent import sampled_closed_loop

OGATA = ("[plant]\nnumerator = [1.0]\ndenominator = [1.0, 1.0, 0.0]\n"
         "[requirements]\nmax_overshoot_percent = 20.0\nmax_settling_time = 12.0\n"
         "[sampling]\nperiod = 1.0\n")
CASE = Path(__file__).resolve().parents[1] / "cases" / "servo-current-loop-sampled.toml"


def _probes(ivs, scale=1.0):
    """Gains inside each interval and just outside each finite end."""
    inside, outside = [], []
    for lo, hi in ivs:
        if lo is not None and hi is not None:
            inside += [lo + (hi - lo) * f for f in (0.05, 0.5, 0.95)]
        elif lo is not None:
            inside.append(lo + scale)
        elif hi is not None:
            inside.append(hi - scale)
        for end, step in ((lo, -1), (hi, 1)):
            if end is not None:
                outside.append(end + step * 1e-4 * max(abs(end), scale))
    return inside, outside


def _ogata_z(period=1.0, delay_samples=0):
    num, den, _ = cont2discrete(([1.0], [1.0, 1.0, 0.0]), period, method="zoh")
    return np.trim_zeros(np.ravel(num), "f"), np.concatenate([den, np.zeros(delay_samples)])


def _in_region(z, region: Region, period: float) -> bool:
    z = np.asarray(z, dtype=complex)
    if np.any(np.abs(z) >= 1):
        return False
    s = np.log(z[z != 0]) / period
    zeta = -s.real / np.abs(s)
    return bool(np.all(-s.real > region.sigma) and np.all(zeta > region.zeta))


def test_stable_gains_of_a_sampled_integrating_loop():
    import mpmath

    problem = problem_from_text(OGATA, "ogata.toml")
    view = proportional_view(problem)
    exact = float((1 - 1 / mpmath.e) / (1 - 2 / mpmath.e))
    assert exact == pytest.approx(2.3925, abs=5e-4)                   # Ogata, from memory
    ((lo, hi),) = view.stabilizing_gain_intervals
    assert lo == 0.0 and hi == pytest.approx(exact, rel=1e-9)
    ((w, k),) = view.crossings
    assert k == pytest.approx(exact, rel=1e-9)
    num, den = _ogata_z()
    roots = np.roots(np.polyadd(den, exact * num))
    assert np.abs(roots) == pytest.approx([1.0, 1.0], rel=1e-9)
    assert w == pytest.approx(abs(np.angle(roots[0])), rel=1e-9)
    # the JSON carries the ZOH plant in z (scipy.signal.cont2discrete)
    doc = view.to_json()
    assert doc["plant"]["numerator"] == pytest.approx(list(num / den[0]), rel=1e-12)
    assert doc["plant"]["denominator"] == pytest.approx(list(den / den[0]), rel=1e-12)


@pytest.mark.parametrize("delay_samples", [0, 1])
def test_gain_intervals_agree_with_numpy_roots(delay_samples):
    problem = problem_from_text(OGATA.replace("period = 1.0", f"period = 0.5\ncompute_delay = "
                                              f"{0.5 * delay_samples}"), "o.toml")
    view = proportional_view(problem)
    num, den = _ogata_z(0.5, delay_samples)
    for ivs, member in ((view.stabilizing_gain_intervals, lambda z: np.all(np.abs(z) < 1)),
                        (view.requirement_gain_intervals,
                         lambda z: _in_region(z, problem.region, 0.5))):
        assert ivs
        inside, outside = _probes(ivs)
        for k in inside:
            assert member(np.roots(np.polyadd(den, k * num))), (k, ivs)
        for k in outside:
            assert not member(np.roots(np.polyadd(den, k * num))), (k, ivs)


def test_stable_gains_with_a_fractional_delay_agree_with_independent_eigenvalues():
    problem = load_problem(CASE)
    sp = problem.sampling
    view = proportional_view(problem)
    inside, outside = _probes(view.stabilizing_gain_intervals)
    for k, stable in [(k, True) for k in inside] + [(k, False) for k in outside]:
        M = sampled_closed_loop(problem.plant, sp.period, sp.compute_delay, [k], [1.0])
        assert (np.max(np.abs(np.linalg.eigvals(M))) < 1.0) == stable, k


def test_the_region_maps_to_the_decay_circle_and_the_damping_spiral():
    region = ZRegion(0.1, sigma=2.0, zeta=0.5)
    assert region.radius == pytest.approx(math.exp(-0.2))
    out = region.outline()
    s = np.log(out) / 0.1
    on_circle = np.isclose(np.abs(out), region.radius, rtol=1e-12)
    zeta = -s.real / np.abs(s)
    on_spiral = np.isclose(zeta, 0.5, rtol=1e-9)
    assert np.all(on_circle | on_spiral) and on_circle.any() and on_spiral.any()
    assert region.spiral_end == pytest.approx(math.exp(-math.pi * 0.5 / math.sqrt(0.75)))
    # membership matches the s-plane region of ln(z)/T
    rng = np.random.default_rng(3)
    z = rng.uniform(-1, 1, 400) + 1j * rng.uniform(-1, 1, 400)
    for zi in z:
        s = np.log(zi) / 0.1
        expect = abs(zi) < 1 and -s.real > 2.0 and -s.real / abs(s) > 0.5
        assert region.contains([zi]) == expect


def test_the_z_locus_branches_are_the_roots_of_den_plus_k_num():
    problem = problem_from_text(OGATA.replace("period = 1.0", "period = 0.5\ncompute_delay = 0.5"),
                                "o.toml")
    locus = trace_zplane(problem)
    num, den = _ogata_z(0.5, 1)
    for i in range(0, locus.gains.size, 37):
        k = locus.gains[i]
        ref = np.sort_complex(np.roots(np.polyadd(den, k * num)))
        assert np.sort_complex(locus.roots[i]) == pytest.approx(ref, rel=1e-7, abs=1e-9)
    doc = locus.to_json()
    assert len(doc["branches"]["roots"]) == locus.gains.size


def _synth(*args):
    return subprocess.run([sys.executable, "-m", "synth.cli", *map(str, args)],
                          capture_output=True, text=True, timeout=300)


def test_explain_and_trace_show_the_z_plane(tmp_path):
    ex, tr, pic = tmp_path / "e.json", tmp_path / "t.json", tmp_path / "z.png"
    res = _synth("explain", CASE, "--json", ex)
    assert res.returncode == 0, res.stderr
    assert "Sampled every 0.0001 s, computation delay 0.0001 s (z-plane" in res.stdout
    doc = json.loads(ex.read_text())
    assert doc["proportional"]["stabilizing_gain_intervals"]          # the s-plane stays
    zp = doc["z_plane"]
    assert zp["period"] == 0.0001 and zp["region"]["radius"] == pytest.approx(
        math.exp(-doc["region"]["decay_rate"] * 0.0001))
    assert any(r.startswith("Sampled every 0.0001 s") for r in doc["reasons"])
    res = _synth("trace", CASE, "--json", tr, "--plot", pic)
    assert res.returncode == 0, res.stderr
    assert "root locus in z" in res.stdout and pic.stat().st_size > 10_000
    doc = json.loads(tr.read_text())
    assert doc["schema"] == "synth.trace/1" and doc["imaginary_axis_crossings"] is not None
    assert doc["z_plane"]["stable_gain_intervals"] == zp["stabilizing_gain_intervals"]
