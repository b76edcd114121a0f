"""What a picture frames: the dominant part of a root locus, the frequency window of a Bode plot.

A picture is framed by the part of the loop that shapes its response, never
by its farthest pole.  A lead pole at -2000 rad/s or the fast all-pass poles
of a Pade form would otherwise shrink the poles near -40 +- 50j, the
requirement region and the axis crossings to a few pixels.

* :func:`dominant_poles` picks the closed-loop poles that shape the response:
  every pole in the closed right half-plane, and the stable poles whose decay
  rate is at most :data:`DOMINANCE_RATIO` times the slowest one's, leaving out
  poles that a nearby loop zero nearly cancels (a dipole: small residue).
* :func:`locus_view` frames a root-locus picture around them: the main view
  holds the dominant poles, the imaginary axis, and the open-loop poles and
  zeros, axis crossings, breakaway points and the region's decay line that lie
  within :data:`NEAR_FACTOR` times the dominant poles' reach; everything
  farther is *far* and is shown by edge markers with its value and in a
  zoomed-out overview (:attr:`LocusView.overview`).
* :func:`frequency_window` frames a Bode plot around the crossovers and the
  resonances.

Everything is relative to the loop's own scale (no absolute tolerance), and
plain numpy: the drawing modules (:mod:`.locus_plot`, :mod:`.design_figures`)
and the interactive page (:mod:`.explore`) share it.

References
----------
.. [1] K. Ogata, *Modern Control Engineering*, 5th ed., Prentice Hall, 2010,
   ch. 5, higher-order systems and dominant closed-loop poles (poles five or
   more times farther from the imaginary axis than the dominant ones, with no
   zeros nearby, barely affect the transient response), from memory.
.. [2] N. S. Nise, *Control Systems Engineering*, 6th ed., Wiley, 2011,
   sec. 4.7 (the same factor-of-five rule for a third pole), from memory.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

__all__ = [
    "DOMINANCE_RATIO",
    "DIPOLE_RTOL",
    "NEAR_FACTOR",
    "LocusView",
    "dominant_poles",
    "dominant_share",
    "frequency_window",
    "locus_view",
    "region_polygon",
    "resonances",
    "time_window",
]

#: A stable pole decaying this many times faster than the slowest one barely shapes the
#: response (the trade's factor-of-five rule, Ogata and Nise).
DOMINANCE_RATIO = 5.0

#: A loop zero closer to a pole than this fraction of the pole's magnitude makes a dipole.
DIPOLE_RTOL = 0.1

#: Open-loop poles and zeros, crossings and breakaways within this many times the
#: dominant poles' reach stay in the main view; farther ones are far.
NEAR_FACTOR = 3.0

#: Padding around the framed points, as a fraction of the frame's size.
_PAD = 0.12

#: Width / height of the main locus view (the drawing makes its axes this shape).
VIEW_ASPECT = 1.3

#: Decades shown beyond the outermost marked frequencies of a Bode plot.
BODE_DECADES = 1.5

#: Damping ratio under which a pole or zero pair counts as a resonance worth framing.
RESONANCE_DAMPING = 0.5


def _finite(values) -> np.ndarray:
    z = np.asarray(values, dtype=complex).ravel()
    return z[np.isfinite(z)]


def dominant_poles(poles, zeros=()) -> np.ndarray:
    """The closed-loop poles that shape the response.

    Parameters
    ----------
    poles : array_like of complex
        Closed-loop poles.
    zeros : array_like of complex
        Closed-loop zeros (for unity feedback, the loop's zeros): a pole with
        a zero within :data:`DIPOLE_RTOL` of its magnitude is a dipole and
        does not set the time scale.

    Returns
    -------
    ndarray of complex
        Every pole with a non-negative real part, and the stable non-dipole
        poles whose decay rate ``-Re p`` is at most :data:`DOMINANCE_RATIO`
        times the slowest such rate.  When every stable pole is a dipole, the
        rule is applied to all of them.

    References
    ----------
    .. [1] K. Ogata, *Modern Control Engineering*, 5th ed., 2010 (dominant
       closed-loop poles), from memory.
    """
    p = _finite(poles)
    if p.size == 0:
        return p
    z = _finite(zeros)
    unstable = p.real >= 0
    if z.size:
        gap = np.min(np.abs(p[:, None] - z[None, :]), axis=1)
        dipole = gap <= DIPOLE_RTOL * np.abs(p)
    else:
        dipole = np.zeros(p.size, dtype=bool)
    stable = p[~unstable & ~dipole]
    if stable.size == 0:
        stable = p[~unstable]
    if stable.size == 0:
        return p[unstable]
    rate = -stable.real
    keep = stable[rate <= DOMINANCE_RATIO * float(np.min(rate))]
    return np.concatenate([p[unstable], keep])


def dominant_share(dominant, xlim, ylim) -> float:
    """Share of a view's axes that the dominant poles span (with the imaginary axis).

    The larger of the two shares: the real parts' span with 0 (the
    imaginary axis) over the view's width, and the imaginary parts' span over
    its height.  A lightly damped pair is tall and narrow, a real pole wide
    and flat; either way this is the share the eye sees.

    Parameters
    ----------
    dominant : array_like of complex
    xlim, ylim : (float, float)
        Axis limits (matplotlib ``Axes.get_xlim()`` / ``get_ylim()``).

    Returns
    -------
    float
        In ``[0, 1]`` when every pole is inside the view.
    """
    d = _finite(dominant)
    if d.size == 0:
        return 0.0
    re = np.append(d.real, 0.0)
    width = abs(xlim[1] - xlim[0])
    height = abs(ylim[1] - ylim[0])
    x_share = float(np.ptp(re)) / width if width > 0 else 0.0
    y_share = float(np.ptp(d.imag)) / height if height > 0 else 0.0
    return max(x_share, y_share)


@dataclass(frozen=True)
class LocusView:
    """How a root-locus picture is framed.

    Attributes
    ----------
    main : (x0, x1, y0, y1)
        Limits of the main view (width / height = :data:`VIEW_ASPECT`).
    overview : (x0, x1, y0, y1) or None
        Limits of a zoomed-out view holding every pole, zero and special
        point; ``None`` when nothing is far.
    dominant : ndarray of complex
        The dominant closed-loop poles (empty without an operating gain).
    far_poles, far_zeros, far_closed : ndarray of complex
        Open-loop poles, open-loop zeros and closed-loop poles outside the
        main view (the upper one of each conjugate pair is enough to name).
    far_points : tuple of (str, complex)
        Crossings and breakaways outside the main view, with a short label.
    """

    main: tuple[float, float, float, float]
    overview: tuple[float, float, float, float] | None
    dominant: np.ndarray
    far_poles: np.ndarray
    far_zeros: np.ndarray
    far_closed: np.ndarray
    far_points: tuple[tuple[str, complex], ...] = ()

    @property
    def has_far(self) -> bool:
        """Whether something lies outside the main view."""
        return bool(self.far_poles.size or self.far_zeros.size or self.far_closed.size
                    or self.far_points)

    def inside(self, z) -> np.ndarray:
        """Which points lie inside the main view."""
        z = np.asarray(z, dtype=complex)
        x0, x1, y0, y1 = self.main
        return (z.real >= x0) & (z.real <= x1) & (z.imag >= y0) & (z.imag <= y1)


def _box(points: np.ndarray, aspect: float, scale: float) -> tuple[float, float, float, float]:
    """Limits holding ``points`` with padding, widened to the aspect ratio ``aspect``.

    Extra width goes to the left of the points when they lie in the left
    half-plane (where a stable loop's poles are), so the view does not fill
    with empty right half-plane.
    """
    x0, x1 = float(points.real.min()), float(points.real.max())
    half = float(np.abs(points.imag).max())
    width, height = x1 - x0, 2.0 * half
    size = max(width, height)
    if not size > 0:
        size = scale  # a single point: the loop's own size
    # pad; keep some height for points on the real axis, some width for a tall pair
    pad = _PAD * size
    left, right = x0 - pad, x1 + pad
    height = max(height, 0.25 * size) + 2 * pad
    width = right - left
    if width < aspect * height:
        extra = aspect * height - width
        # the right half-plane gets at most a quarter of the extra width unless points are there
        share = 0.5 if x1 > 0 else 0.25
        left, right = left - (1 - share) * extra, right + share * extra
    else:
        height = width / aspect
    return left, right, -0.5 * height, 0.5 * height


def locus_view(poles, zeros, closed=(), crossings=(), breakaways=(), region=None,
               scale: float = 1.0, aspect: float = VIEW_ASPECT) -> LocusView:
    """Frame a root-locus picture on its dominant region.

    Parameters
    ----------
    poles, zeros : array_like of complex
        Open-loop poles and zeros of the traced loop.
    closed : array_like of complex
        Closed-loop poles at the operating gain (empty for a plant's locus).
    crossings : array_like of float
        Imaginary-axis crossing frequencies (``>= 0``).
    breakaways : array_like of complex
        Points where branches meet.
    region : Region, optional
        The requirement region; its decay line ``Re s = -sigma`` is framed
        when it is near.
    scale : float
        The locus's own size (``LocusTrace.scale``), used only when every
        framed point coincides.
    aspect : float
        Width / height of the view.

    Returns
    -------
    LocusView

    Notes
    -----
    The reach ``R`` is the largest magnitude of the dominant closed-loop poles
    (:func:`dominant_poles`); without an operating gain, the largest of the
    crossing frequencies, breakaway magnitudes and the region's decay rate;
    without any of those, every point is near.  Points within
    :data:`NEAR_FACTOR` ``* R`` are framed, the imaginary axis always.
    """
    poles, zeros, closed = _finite(poles), _finite(zeros), _finite(closed)
    w = np.asarray([c for c in crossings if math.isfinite(c)], dtype=float)
    cross = np.concatenate([1j * w, -1j * w]) if w.size else np.zeros(0, complex)
    brk = _finite(breakaways)
    sigma = float(getattr(region, "sigma", 0.0) or 0.0) if region is not None else 0.0
    decay = np.asarray([-sigma], dtype=complex) if sigma > 0 else np.zeros(0, complex)

    dominant = dominant_poles(closed, zeros) if closed.size else closed
    if dominant.size and float(np.max(np.abs(dominant))) > 0:
        reach = float(np.max(np.abs(dominant)))
    else:
        anchors = np.concatenate([np.abs(cross), np.abs(brk), np.abs(decay)])
        anchors = anchors[anchors > 0]
        reach = float(np.max(anchors)) if anchors.size else math.inf

    limit = NEAR_FACTOR * reach

    def near(z: np.ndarray) -> np.ndarray:
        return np.abs(z) <= limit

    body = np.concatenate([poles, zeros, closed])
    size = float(np.max(np.abs(body))) if body.size else 0.0
    # the overview holds every pole and zero, and the special points not absurdly far
    special = np.concatenate([cross, brk])
    every = np.concatenate([body, special[np.abs(special) <= 10.0 * size] if size > 0
                            else special])
    framed = np.concatenate([np.zeros(1, complex), dominant, *(z[near(z)] for z in
                             (poles, zeros, closed, cross, brk, decay))])
    main = _box(framed, aspect, scale if scale > 0 else 1.0)
    x0, x1, y0, y1 = main

    def outside(z: np.ndarray) -> np.ndarray:
        z = z[(z.real < x0) | (z.real > x1) | (z.imag < y0) | (z.imag > y1)]
        return z[z.imag >= 0]  # one of each conjugate pair names both

    far_points = tuple(
        [("crossing", complex(0.0, f)) for f in w if not (y0 <= f <= y1)]
        + [("breakaway", complex(b)) for b in brk
           if b.imag >= 0 and not (x0 <= b.real <= x1 and y0 <= b.imag <= y1)])
    view = LocusView(main=main, overview=None, dominant=dominant,
                     far_poles=outside(poles), far_zeros=outside(zeros),
                     far_closed=outside(closed), far_points=far_points)
    if view.has_far:
        every = np.concatenate([every, np.zeros(1, complex)])
        view = LocusView(main=main, overview=_box(every, aspect, scale), dominant=dominant,
                         far_poles=view.far_poles, far_zeros=view.far_zeros,
                         far_closed=view.far_closed, far_points=far_points)
    return view


def region_polygon(region, lims) -> list[tuple[float, float]]:
    """Vertices of the requirement region, cut off well beyond the view ``lims``.

    Parameters
    ----------
    region : Region
        Decay rate ``sigma`` and damping ratio ``zeta``: ``Re s <= -sigma`` and
        ``|Im s| <= -Re s * tan(acos(zeta))``.
    lims : (x0, x1, y0, y1)

    Returns
    -------
    list of (x, y)
    """
    x0, x1, y0, y1 = lims
    big = 10.0 * max(x1 - x0, y1 - y0)
    left = x0 - big
    edge = -float(region.sigma)
    zeta = float(region.zeta)
    if zeta <= 0.0:
        return [(edge, -big), (edge, big), (left, big), (left, -big)]
    slope = math.tan(math.acos(zeta))
    return [(edge, edge * slope), (edge, -edge * slope), (left, -left * slope),
            (left, left * slope)]


def resonances(*polys, damping: float = RESONANCE_DAMPING) -> np.ndarray:
    """Natural frequencies of the lightly damped root pairs of some polynomials.

    Parameters
    ----------
    *polys : array_like
        Polynomials (descending powers): the loop's numerator and denominator
        factors (the rational part; a dead time has no resonance).
    damping : float
        Pairs with damping ratio below this count.

    Returns
    -------
    ndarray of float
        Sorted natural frequencies ``|p|`` (each pair once).
    """
    from synth.numerics.poly import scaled_roots, trim

    out = []
    for p in polys:
        p = trim(np.asarray(p, dtype=float))
        if p.size < 3:
            continue
        r = _finite(scaled_roots(p))
        r = r[(r.imag > 0) & (np.abs(r) > 0)]
        zeta = -r.real / np.abs(r)
        out.extend(np.abs(r[np.abs(zeta) < damping]).tolist())
    return np.sort(np.asarray(out, dtype=float))


def frequency_window(marks, grid) -> tuple[float, float]:
    """The frequency range of a Bode plot: the marked frequencies and the decades around them.

    Parameters
    ----------
    marks : iterable of float
        Frequencies worth seeing: crossovers, the sensitivity peak, the
        bandwidth, resonances.  Non-finite or non-positive values are ignored.
    grid : array_like of float
        The computed frequencies (the window never leaves them).

    Returns
    -------
    (lo, hi) : float
        :data:`BODE_DECADES` decades beyond the outermost marks, clipped to the
        grid; the whole grid when nothing is marked.
    """
    g = np.asarray(grid, dtype=float)
    m = np.asarray([v for v in marks if v is not None and math.isfinite(v) and v > 0],
                   dtype=float)
    if m.size == 0 or g.size < 2:
        return float(g[0]), float(g[-1])
    span = 10.0 ** BODE_DECADES
    lo = max(float(m.min()) / span, float(g[0]))
    hi = min(float(m.max()) * span, float(g[-1]))
    if not hi > lo:
        return float(g[0]), float(g[-1])
    return lo, hi


def time_window(settling_time=None, rise_time=None, settling_limit=None,
                horizon: float | None = None) -> float | None:
    """How much of a step response is worth showing.

    The simulation runs until the slowest closed-loop pole has decayed; a
    slow, nearly cancelled pole can stretch that far beyond the settling time
    and squash the transient into the first pixel.  Show about twice the
    settling time, 1.5 times the settling-time limit or ten rise times,
    whichever is longest.

    Parameters
    ----------
    settling_time, rise_time : float or None
        The response's own (seconds).
    settling_limit : float or None
        The requirement's limit.
    horizon : float, optional
        The simulated length; when the window reaches 80 % of it, the whole.

    Returns
    -------
    float or None
        Seconds; ``None`` when nothing sets a window (show the whole horizon).
    """
    cands = [factor * v for v, factor in ((settling_time, 2.0), (rise_time, 10.0),
                                          (settling_limit, 1.5))
             if isinstance(v, (int, float)) and math.isfinite(v) and v > 0]
    if not cands:
        return horizon
    t = max(cands)
    if horizon is not None and t >= 0.8 * horizon:
        return horizon
    return t
