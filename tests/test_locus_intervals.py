"""Exact gain intervals (synth.locus.core) against closed-loop eigenvalues.

External references used here:

* numpy.linalg.eigvals of the companion matrix of D + K N at dense gains (the
  reference verdict: stable when every eigenvalue has Re < 0; in the region
  when every eigenvalue has Re <= -sigma and damping -Re s/|s| >= zeta);
* worked examples of K. Ogata, *Modern Control Engineering* (root-locus and
  Routh chapters), from memory: K/(s(s+1)(s+2)) is stable for 0 < K < 6,
  K/(s(s+3)(s^2+2s+2)) for 0 < K < 8.16 (= 408/50);
* fact of the trade (common practice): K/(s+a) with a > 0 is stable exactly for
  K > -a.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from synth.locus.core import region_gain_intervals, stable_gain_intervals
from synth.problem.region import Region

SETTINGS = settings(max_examples=40, deadline=None, derandomize=True)


def eig_roots(num, den, gains):
    """Closed-loop roots per gain from numpy.linalg.eigvals (degree-drop rows: None)."""
    num = np.asarray(num, float)
    den = np.asarray(den, float)
    npad = np.concatenate([np.zeros(den.size - num.size), num])
    out = []
    for k in gains:
        p = den + k * npad
        if abs(p[0]) <= 1e-9 * (abs(den[0]) + abs(k * npad[0])):
            out.append(None)
            continue
        n = p.size - 1
        comp = np.zeros((n, n))
        comp[0] = -p[1:] / p[0]
        comp[np.arange(1, n), np.arange(n - 1)] = 1.0
        out.append(np.linalg.eigvals(comp))
    return out


def inside_intervals(intervals, k):
    return any((lo is None or lo < k) and (hi is None or k < hi) for lo, hi in intervals)


def near_end(intervals, k, rtol=1e-6):
    ends = [x for iv in intervals for x in iv if x is not None]
    return any(abs(k - e) <= rtol * max(1.0, abs(e)) for e in ends)


def sample_gains(intervals, scale):
    mags = np.geomspace(1e-4, 1e4, 300) * scale
    ks = np.concatenate([-mags[::-1], [0.0], mags])
    ends = np.asarray([x for iv in intervals for x in iv if x is not None], dtype=float)
    # probe just inside and just outside every end as well
    probes = np.concatenate([ends * (1 + 1e-4) + 1e-7, ends * (1 - 1e-4) - 1e-7])
    return np.sort(np.concatenate([ks, probes]))


def check_intervals(num, den, intervals, verdict, scale=1.0, margin=1e-7):
    for k, r in zip(ks := sample_gains(intervals, scale), eig_roots(num, den, ks), strict=True):
        if r is None or near_end(intervals, k):
            continue
        ok, slack = verdict(r)
        if abs(slack) <= margin * (1 + np.max(np.abs(r))):
            continue  # an eigenvalue on the boundary: no verdict to compare
        assert inside_intervals(intervals, k) == ok, (k, intervals, r)


def stable_verdict(r):
    worst = float(np.max(r.real))
    return worst < 0, worst


def region_verdict(region):
    def v(r):
        decay = -r.real - region.sigma
        damp = -r.real - region.zeta * np.abs(r)
        slack = float(min(np.min(decay), np.min(damp)))
        return slack > 0, slack
    return v


def test_textbook_stability_ranges():
    # Ogata, Modern Control Engineering (from memory)
    iv = stable_gain_intervals([1.0], np.poly([0, -1, -2]))
    assert len(iv) == 1 and iv[0][0] == pytest.approx(0.0, abs=1e-12) and iv[0][1] == pytest.approx(6.0)
    iv = stable_gain_intervals([1.0], np.poly([0, -3, -1 + 1j, -1 - 1j]))
    assert len(iv) == 1 and iv[0][1] == pytest.approx(8.16)
    # common practice: K/(s + 2) stable for K > -2
    iv = stable_gain_intervals([1.0], [1.0, 2.0])
    assert len(iv) == 1 and iv[0][0] == pytest.approx(-2.0) and iv[0][1] is None


@st.composite
def plants(draw):
    grid = st.integers(-32, 8).map(lambda k: k / 4)
    imag = st.integers(1, 20).map(lambda k: k / 4)
    poles = [draw(grid) + 0j for _ in range(draw(st.integers(0, 3)))]
    for _ in range(draw(st.integers(0, 2))):
        c = complex(draw(grid), draw(imag))
        poles += [c, c.conjugate()]
    assume(len(poles) >= 1)
    m = draw(st.integers(0, len(poles)))
    zeros = [draw(grid) + 0j for _ in range(m)]
    pts = np.asarray(poles + zeros)
    gaps = np.abs(pts[:, None] - pts[None, :]) + np.eye(pts.size) * 10
    assume(np.min(gaps) >= 0.2)
    num = np.real(np.poly(zeros)) if zeros else np.ones(1)
    den = np.real(np.poly(poles))
    sign = draw(st.sampled_from([1.0, -1.0]))
    return sign * num, den


@SETTINGS
@given(plants())
def test_stable_intervals_against_eigenvalues(plant):
    num, den = plant
    iv = stable_gain_intervals(num, den)
    check_intervals(num, den, iv, stable_verdict)


@SETTINGS
@given(plants(), st.sampled_from([0.0, 0.3, 1.0]), st.sampled_from([0.0, 0.4, 0.7]))
def test_region_intervals_against_eigenvalues(plant, sigma, zeta):
    num, den = plant
    region = Region(sigma=sigma, zeta=zeta)
    iv = region_gain_intervals(num, den, region)
    check_intervals(num, den, iv, region_verdict(region))
