"""The bundled cases (cases/*.toml): well-formed files whose numbers say what their headers say.

Each header derives its plant from simple physics; these tests recompute the
plant from the header's physical values with the textbook model of each
device and compare with what synth loads, and check the structural claims
(no proportional gain works, only negative gain works, only an unstable
compensator works) with numpy.roots / numpy.linalg.eigvals.
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path

import numpy as np
import pytest

CASES = Path(__file__).resolve().parents[1] / "cases"
FILES = sorted(CASES.glob("*.toml"))
PLANT_FORMS = ({"numerator", "denominator"}, {"zeros", "poles", "gain"}, {"expression"})


def _load(name: str):
    from synth.problem.requirements import load_problem

    return load_problem(CASES / name)


def _monic(p) -> np.ndarray:
    p = np.trim_zeros(np.asarray(p, dtype=float), "f")
    return p / p[0]


def _hurwitz_rows(polys: np.ndarray) -> np.ndarray:
    """Whether every root of each row (descending coefficients, leading entry non-zero) has
    negative real part, from the companion-matrix eigenvalues (numpy.linalg.eigvals)."""
    polys = polys / polys[:, :1]
    n = polys.shape[1] - 1
    comp = np.zeros((polys.shape[0], n, n))
    comp[:, 0, :] = -polys[:, 1:]
    comp[:, np.arange(1, n), np.arange(n - 1)] = 1.0
    return np.all(np.linalg.eigvals(comp).real < 0, axis=1)


# ----------------------------------------------------------------------------------------------
# form
# ----------------------------------------------------------------------------------------------


def test_there_are_at_least_eight_cases():
    assert len(FILES) >= 8


@pytest.mark.parametrize("path", FILES, ids=lambda p: p.name)
def test_case_file_is_well_formed(path):
    text = path.read_text(encoding="utf-8")
    data = tomllib.loads(text)
    assert data.get("format") == 1
    plant = data["plant"]
    forms = [f for f in PLANT_FORMS if f & plant.keys()]
    assert len(forms) == 1 and forms[0] <= plant.keys(), "exactly one complete plant form"
    assert "requirements" in data
    search = data["search"]
    assert isinstance(search["seed"], int)
    # the amount of search is counted in work (search.effort), so a bundled case gives the
    # same answer on any machine; time_budget, a safety limit only, must not decide it
    assert search.get("effort", 1.0) <= 1.0
    assert "time_budget" not in search or search["time_budget"] >= 60
    # comment header: scenario, units and where the numbers come from, before any key
    header = []
    for line in text.splitlines():
        if not line.startswith("#"):
            break
        header.append(line.lower())
    head = "\n".join(header)
    assert len(header) >= 10
    assert "input" in head and "output" in head and "second" in head
    assert "where the numbers come from" in head
    assert "illustrative" in head or "abstract" in head
    assert "caution" in head


@pytest.mark.parametrize("path", FILES, ids=lambda p: p.name)
def test_case_loads_through_load_problem(path):
    from synth.problem.requirements import load_problem

    problem = load_problem(path)
    assert problem.plant.den.size >= 2
    assert problem.search.effort <= 1.0


def test_the_cases_use_all_three_plant_forms():
    used = set()
    for path in FILES:
        plant = tomllib.loads(path.read_text(encoding="utf-8"))["plant"]
        used |= {i for i, f in enumerate(PLANT_FORMS) if f & plant.keys()}
    assert used == {0, 1, 2}


# ----------------------------------------------------------------------------------------------
# the physics in the headers
# ----------------------------------------------------------------------------------------------


def test_maglev_poles_follow_from_gap_and_coil():
    # linearised levitation: unstable pair at +-sqrt(2 g / gap) (common practice); coil lag -R/L
    g, gap, L, R = 9.81, 0.0218, 0.1, 10.0
    a = math.sqrt(2 * g / gap)
    poles = np.sort(np.roots(_load("maglev-ball.toml").plant.den).real)
    assert poles == pytest.approx([-R / L, -a, a], rel=0.01)


def test_boost_converter_matches_the_averaged_boost_model():
    # averaged CCM boost stage: Gvd = (V/D') (1 - s L/(D'^2 R)) / (1 + s L/(D'^2 R) + s^2 L C/D'^2)
    # (Erickson and Maksimovic, Fundamentals of Power Electronics, from memory)
    vin, duty, L, C, R = 12.0, 0.5, 500e-6, 1000e-6, 10.0
    dp = 1.0 - duty
    vout = vin / dp
    num = (vout / dp) * np.array([-L / (dp ** 2 * R), 1.0])
    den = np.array([L * C / dp ** 2, L / (dp ** 2 * R), 1.0])
    plant = _load("boost-converter-voltage.toml").plant
    assert np.roots(plant.num) == pytest.approx(np.roots(num), rel=1e-9)      # zero at +5000
    assert np.abs(np.roots(plant.den)) == pytest.approx(np.abs(np.roots(den)), rel=0.002)
    zeta = -np.roots(plant.den)[0].real / abs(np.roots(plant.den)[0])
    zeta_model = -np.roots(den)[0].real / abs(np.roots(den)[0])
    assert zeta == pytest.approx(zeta_model, rel=0.01)
    assert plant.dc_gain() == pytest.approx(vout / dp, rel=0.002)


def test_dc_motor_matches_the_armature_and_shaft_equations():
    # w/V = k / ((J s + b)(L s + R) + k^2)  (common practice)
    J, b, k, R, L = 2e-4, 1e-4, 0.05, 2.0, 2e-3
    den = np.polyadd(np.polymul([J, b], [L, R]), [k * k])
    plant = _load("dc-motor-speed.toml").plant
    scale = den[0]
    assert _monic(plant.den) == pytest.approx(den / scale, rel=1e-12)
    assert plant.num / plant.den[0] == pytest.approx([k / scale], rel=1e-12)


def test_flexure_stage_and_oven_and_tank_match_their_lumped_models():
    # stage: x/i = Kf / (m s^2 + c s + k), in mm (Newton's second law, common practice)
    m, c, k, kf = 0.5, 40.0, 2000.0, 10.0
    servo = _load("positioning-servo.toml").plant
    assert _monic(servo.den) == pytest.approx(np.array([m, c, k]) / m)
    assert servo.dc_gain() == pytest.approx(1000 * kf / k)
    # oven: two first-order lags 0.8 / ((120 s + 1)(15 s + 1))
    oven = _load("oven-temperature.toml").plant
    assert _monic(oven.den) == pytest.approx(_monic(np.polymul([120, 1], [15, 1])))
    assert oven.dc_gain() == pytest.approx(0.8)
    # tank: first-order lag with a 10 s dead time, delay-free part 0.5 / (60 s + 1)
    tank = _load("heated-tank-delay.toml").plant
    assert tank.dead_time == 10.0
    assert np.roots(tank.rational_den) == pytest.approx([-1 / 60])


def test_current_loop_matches_the_winding_and_the_pwm_timing():
    # i/v = 1 / (L s + R) (common practice: a winding with its back-emf fed forward); one
    # sample per PWM period, the output one period later, the modulator half a period
    L, R, f_pwm = 1.2e-3, 0.4, 10e3
    problem = _load("servo-current-loop-sampled.toml")
    plant = problem.plant
    assert _monic(plant.rational_den) == pytest.approx([1.0, R / L], rel=1e-12)
    assert plant.dc_gain() == pytest.approx(1 / R, rel=1e-12)
    assert problem.sampling.period == pytest.approx(1 / f_pwm, rel=1e-12)
    assert problem.sampling.compute_delay == pytest.approx(1 / f_pwm, rel=1e-12)
    assert plant.dead_time == pytest.approx(0.5 / f_pwm, rel=1e-12)
    # the header's "2 T = 200 us, about 23 deg at 2000 rad/s": hold T/2 + modulator T/2 + T
    lag = 0.5 / f_pwm + plant.dead_time + problem.sampling.compute_delay
    assert lag == pytest.approx(200e-6)
    assert math.degrees(2000 * lag) == pytest.approx(23, abs=0.5)


def test_satellite_axis_is_a_double_integrator_with_a_lightly_damped_mode():
    plant = _load("satellite-flexible-axis.toml").plant
    poles = np.roots(plant.den)
    assert np.sum(np.abs(poles) < 1e-9) == 2
    mode = poles[np.abs(poles.imag) > 0]
    assert np.all(-mode.real / np.abs(mode) < 0.02)   # about 1 % structural damping
    zeros = np.roots(plant.num)
    assert np.all(np.abs(zeros) < np.abs(mode).min())  # collocated: zero pair below the mode


def test_pasteuriser_ranges_follow_from_the_flows():
    # gain 3.6/Q K per %, lag 200/Q s, holding-tube delay volume/flow = 0.02 m3 * 3600 / Q s
    # for Q from 6 to 10 m3/h, nominal at 8 (first-order lag and plug flow, common practice)
    problem = _load("pasteuriser-flow-range.toml")
    ranges = {r.name: (r.lo, r.hi, r.nominal) for r in problem.models.ranges}
    k, lag, delay = (lambda q: 3.6 / q), (lambda q: 200.0 / q), (lambda q: 0.02 * 3600 / q)
    assert ranges["k"] == pytest.approx((k(10), k(6), k(8)))
    assert ranges["dead_time"] == pytest.approx((delay(10), delay(6), delay(8)))
    lo, hi, nominal = ranges["T"]
    assert lo == pytest.approx(lag(10)) and nominal == pytest.approx(lag(8))
    assert lag(6) <= hi <= lag(6) * 1.01
    # the plant at the low-flow corner: k / ((T s + 1)(3 s + 1)) multiplied out (numpy.polymul)
    corner = problem.models.plant_at({"k": k(6), "T": lag(6), "dead_time": delay(6)})
    assert _monic(corner.rational_den) == pytest.approx(_monic(np.polymul([lag(6), 1], [3, 1])))
    assert corner.dc_gain() == pytest.approx(k(6)) and corner.dead_time == pytest.approx(12.0)


def test_indexing_table_variants_follow_from_the_inertias():
    # theta / i = Kt / ((J s^2 + b s)(0.001 s + 1)), Newton's second law with a 1 ms current
    # loop (common practice); J = 6e-4 (nominal), 3e-4 (empty), 9e-4 (full load)
    problem = _load("indexing-table-loads.toml")
    kt, b = 0.5, 0.001
    models = [("nominal", problem.plant)] + [(v.label, v.plant) for v in problem.models.variants]
    inertia = {"nominal": 6e-4, "empty table": 3e-4, "full load": 9e-4}
    assert [m for m, _ in models] == list(inertia)
    for name, plant in models:
        den = np.polymul([inertia[name], b, 0.0], [0.001, 1.0])
        assert plant.rational_den == pytest.approx(tuple(den), rel=1e-12)
        assert plant.rational_num == pytest.approx((kt,))


# ----------------------------------------------------------------------------------------------
# structural claims
# ----------------------------------------------------------------------------------------------


@pytest.mark.parametrize("name", ["maglev-ball.toml", "balancing-robot.toml"])
def test_no_proportional_gain_stabilises_the_unstable_mechanical_cases(name):
    # the s^1 coefficient of den + K num stays negative for every K (Routh-Hurwitz necessary
    # condition, common practice); numpy.roots over a gain grid agrees, and so does explain
    plant = _load(name).plant
    gains = np.linspace(-1e3, 1e3, 4001)
    n = np.concatenate([np.zeros(plant.den.size - plant.num.size), plant.num])
    rows = plant.den[None, :] + gains[:, None] * n[None, :]
    assert not _hurwitz_rows(rows).any()
    from synth.explain import explain_problem

    assert explain_problem(_load(name)).to_json()["proportional"][
        "stabilizing_gain_intervals"] == []


def test_reactor_is_stabilised_by_negative_gain_only():
    # 500 s^2 + 40 s - 1 - 2 K is Hurwitz exactly when K < -0.5 (numpy.roots over gains)
    problem = _load("reverse-acting-reactor.toml")
    plant = problem.plant
    gains = np.linspace(-20.0, 20.0, 4001)
    stable = np.array([np.all(np.roots(np.polyadd(plant.den, g * plant.num)).real < 0)
                       for g in gains])
    assert not stable[gains > 0].any()
    assert stable[gains < -0.51].all() and not stable[(gains > -0.49)].any()
    from synth.explain import explain_problem

    (iv,) = explain_problem(problem).to_json()["proportional"]["stabilizing_gain_intervals"]
    assert iv[0] is None and iv[1] == pytest.approx(-0.5)


def test_needs_unstable_compensator_fails_parity_interlacing():
    # Youla, Bongiorno and Lu (Automatica 1974): strongly stabilisable iff the number of real
    # unstable poles between each pair of real zeros in Re s >= 0 (infinity included) is even
    plant = _load("needs-unstable-compensator.toml").plant
    zeros = sorted(z.real for z in np.roots(plant.num) if abs(z.imag) < 1e-12 and z.real >= 0)
    zeros.append(math.inf)  # strictly proper: a zero at infinity
    poles = [p.real for p in np.roots(plant.den) if abs(p.imag) < 1e-12 and p.real >= 0]
    odd = [(a, b) for a, b in zip(zeros, zeros[1:], strict=False)
           if sum(a < p < b for p in poles) % 2 == 1]
    assert odd == [(1.0, math.inf)]
    from synth.explain import explain_problem

    assert explain_problem(_load("needs-unstable-compensator.toml")).to_json()[
        "strongly_stabilizable"] is False


def test_no_stable_first_order_compensator_stabilises_it_but_the_header_example_does():
    plant = _load("needs-unstable-compensator.toml").plant
    ng, dg = plant.num, plant.den                      # (s - 1), (s - 2)(s + 3)
    K = np.linspace(-300.0, 300.0, 241)
    Z = np.concatenate([np.linspace(-60.0, 60.0, 61), [1e3, -1e3]])
    P = np.geomspace(1e-3, 1e3, 37)                    # stable compensator poles -p < 0
    kk, zz, pp = (a.ravel() for a in np.meshgrid(K, Z, P, indexing="ij"))
    # C = K (s + z) / (s + p): char = (s + p) dg + K (s + z) ng, a cubic per row
    d0, d1, d2 = dg
    n0, n1 = ng
    cubic = np.stack([np.full_like(pp, d0), d1 + pp * d0 + kk * n0,
                      d2 + pp * d1 + kk * (n1 + zz * n0), pp * d2 + kk * zz * n1], axis=1)
    assert not _hurwitz_rows(cubic).any()
    # C = K / (s + p), the z -> infinity end: char = (s + p) dg + K ng
    k2, p2 = (a.ravel() for a in np.meshgrid(K, P, indexing="ij"))
    cubic = np.stack([np.full_like(p2, d0), d1 + p2 * d0, d2 + p2 * d1 + k2 * n0,
                      p2 * d2 + k2 * n1], axis=1)
    assert not _hurwitz_rows(cubic).any()
    # the header's C(s) = 5 (s + 3.4) / (s - 3) puts all three poles at -1 (numpy.roots)
    char = np.polyadd(np.polymul([1.0, -3.0], dg), np.polymul([5.0, 17.0], ng))
    assert np.roots(char) == pytest.approx([-1.0, -1.0, -1.0], abs=1e-4)


def test_booster_pump_follows_the_affinity_law_and_its_lags():
    # pressure grows with the square of speed (the pump affinity laws, common practice):
    # p = p0 (n / 100)^2 with p0 = 550 kPa, slope 2 p0 n / 100^2 at n = 55 %, in kPa per %
    pump = _load("booster-pump-pressure.toml")
    slope = 2 * 550.0 * 55.0 / 100.0 ** 2
    assert pump.plant.dc_gain() == pytest.approx(slope, rel=0.01)
    assert np.sort(-np.roots(pump.plant.den).real) == pytest.approx([1 / 4.0, 1 / 1.5])
    # the actuator at rest must lie in the drive's range, with room to act both ways
    act = pump.actuator
    assert act.limits[0] < act.operating_point < act.limits[1]
    # the header's claims: 250 kPa needs about 42 % more speed, close to the top of the range,
    # and the drive's ramp alone needs over 4 s to supply it
    need = act.reference_step / slope
    assert need == pytest.approx(42.0, rel=0.02)
    assert act.operating_point + need > 0.9 * act.limits[1]
    assert need / act.max_rate > 4.0
