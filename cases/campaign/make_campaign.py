"""Generate the invented bump tests of the bundled campaign (cases/campaign/).

Every number below is invented for the demo: round values of the kind one
meets on process units and drives, not measurements of any real plant.  Each
test is simulated with scipy.signal.lti.output on a fine uniform grid (the input
piecewise linear between grid points), the dead time is an exact shift by a
whole number of grid steps, and the result is sampled (evenly or unevenly),
offset and overlaid with white noise from a fixed seed.  Run from the
repository root:

    python cases/campaign/make_campaign.py

The script rewrites the CSV files in the three model folders; the templates
and the README are kept by hand.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
from scipy import signal

HERE = Path(__file__).resolve().parent
SEED = 20260


@dataclass(frozen=True)
class Loop:
    folder: str            # the model folder (its template names the model)
    name: str
    gain: float            # output units per input unit (per second when integrating)
    lags: tuple            # time constants, seconds
    dead_time: float       # seconds
    integrating: bool
    duration: float        # seconds recorded
    step_at: float         # seconds after the start
    step: float            # input step size, input units
    input_rest: float      # input before the test
    output_rest: float     # output before the test
    samples: int
    noise: float           # standard deviation, output units
    uneven: bool = False
    second_step: tuple | None = None   # (time, size): a second move of the input
    ramp: float = 0.0      # seconds over which the step is ramped (0: a step)


LOOPS = (
    Loop("first-order", "steam-header-pressure", 0.12, (45.0,), 6.0, False, 400.0, 20.0, 10.0,
         45.0, 8.2, 400, 0.01),
    Loop("first-order", "conveyor-drive-speed", 14.0, (0.08,), 0.01, False, 0.8, 0.05, 5.0,
         20.0, 280.0, 500, 0.6, uneven=True),
    Loop("first-order", "fan-duct-pressure", -3.5, (1.2,), 0.3, False, 12.0, 1.0, 4.0, 60.0,
         250.0, 300, 0.3),
    Loop("first-order", "basis-weight", 0.9, (30.0,), 60.0, False, 400.0, 30.0, 3.0, 50.0,
         80.0, 220, 0.05, uneven=True),
    Loop("first-order", "chilled-water-temperature", -0.25, (90.0,), 20.0, False, 1500.0,
         60.0, 8.0, 40.0, 7.0, 600, 0.02, second_step=(800.0, -4.0)),
    Loop("second-order", "reboiler-temperature", 0.8, (300.0, 60.0), 40.0, False, 2400.0,
         120.0, 5.0, 55.0, 142.0, 480, 0.03),
    Loop("second-order", "exchanger-outlet-temperature", 1.6, (120.0, 25.0), 15.0, False,
         900.0, 30.0, 6.0, 35.0, 64.0, 450, 0.08, uneven=True),
    Loop("second-order", "furnace-zone-temperature", 4.0, (900.0, 150.0), 60.0, False,
         7200.0, 300.0, 5.0, 30.0, 850.0, 720, 0.5),
    Loop("second-order", "dryer-moisture", -0.35, (180.0, 180.0), 90.0, False, 2400.0, 100.0,
         6.0, 60.0, 9.5, 400, 0.02, ramp=20.0),
    Loop("second-order", "compressor-flow", 2.2, (2.5, 0.6), 0.5, False, 30.0, 2.0, 5.0, 50.0,
         410.0, 600, 0.15),
    Loop("integrating", "drum-level", 0.004, (8.0,), 3.0, True, 200.0, 20.0, 5.0, 50.0, 0.0,
         400, 0.01),
    Loop("integrating", "surge-tank-level", 0.0015, (), 5.0, True, 600.0, 60.0, 8.0, 40.0,
         52.0, 300, 0.02, uneven=True),
    Loop("integrating", "hydraulic-ram-position", 25.0, (0.02,), 0.005, True, 0.4, 0.04, 0.2,
         0.0, 12.0, 400, 0.02),
    Loop("integrating", "silo-inventory", 0.0008, (40.0,), 20.0, True, 3000.0, 200.0, 10.0,
         30.0, 61.0, 500, 0.05),
)


def simulate(loop: Loop, rng: np.random.Generator) -> tuple[np.ndarray, ...]:
    """Sampled time, input and output of one invented bump test."""
    fine = 40_000
    tf = np.linspace(0.0, loop.duration, fine + 1)
    dt = tf[1] - tf[0]
    du = np.zeros_like(tf)
    if loop.ramp > 0:
        du += loop.step * np.clip((tf - loop.step_at) / loop.ramp, 0.0, 1.0)
    else:
        du += np.where(tf >= loop.step_at, loop.step, 0.0)
    if loop.second_step is not None:
        t2, s2 = loop.second_step
        du += np.where(tf >= t2, s2, 0.0)
    den = np.array([1.0])
    for tc in loop.lags:
        den = np.polymul(den, [tc, 1.0])
    if loop.integrating:
        den = np.polymul(den, [1.0, 0.0])
    _, y, _ = signal.lti([loop.gain], den).output(du, tf)
    shift = int(round(loop.dead_time / dt))
    y = np.concatenate([np.zeros(shift), y[: y.size - shift]])
    if loop.uneven:
        idx = np.sort(rng.choice(np.arange(1, fine), loop.samples - 2, replace=False))
        idx = np.concatenate([[0], idx, [fine]])
    else:
        idx = np.round(np.linspace(0, fine, loop.samples)).astype(int)
    # keep the grid points on both sides of each input move, so that the recorded input,
    # read as piecewise linear, is the input that was simulated
    moves = np.flatnonzero(np.diff(du) != 0.0)
    idx = np.unique(np.concatenate([idx, moves, moves + 1]))
    t = tf[idx]
    u = loop.input_rest + du[idx]
    out = loop.output_rest + y[idx] + loop.noise * rng.standard_normal(idx.size)
    return t, u, out


def main() -> None:
    rng = np.random.default_rng(SEED)
    for loop in LOOPS:
        t, u, y = simulate(loop, rng)
        folder = HERE / loop.folder
        folder.mkdir(exist_ok=True)
        lines = ["time,input,output"]
        lines += [f"{a:.9g},{b:.7g},{c:.7g}" for a, b, c in zip(t, u, y, strict=True)]
        (folder / f"{loop.name}.csv").write_text("\n".join(lines) + "\n")
        print(f"{loop.folder}/{loop.name}.csv: {t.size} samples")


if __name__ == "__main__":
    main()
