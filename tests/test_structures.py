"""Compensator families: polynomials against numpy, PID forms against the textbook relations."""

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from synth.errors import InputError
from synth.families import FAMILIES, families_for, family_for
from synth.problem.requirements import problem_from_text

PROBLEM = problem_from_text("""
[plant]
numerator = [2.0]
denominator = [1.0, 3.0, 2.0, 0.0]
[requirements]
max_overshoot_percent = 10.0
max_settling_time = 5.0
[search]
general_order = 3
max_frequency = 200.0
""")

GAIN_LIMITED = problem_from_text("""
[plant]
numerator = [1.0]
denominator = [1.0, 1.0]
[requirements]
gain_range = [0.5, 40.0]
""")


def _sample(family, n, seed=0):
    lo, hi = family.bounds()
    return lo + (hi - lo) * np.random.default_rng(seed).random((n, family.n_params))


def test_registry_uses_the_contract_names():
    # the contract's structure names, exactly
    assert tuple(FAMILIES) == ("P", "PI", "PD", "PID", "lead", "lag", "lead-lag", "general")
    assert [f.name for f in families_for(PROBLEM)] == list(FAMILIES)
    with pytest.raises(ValueError):
        family_for("PIDD", PROBLEM)


@pytest.mark.parametrize("name", list(FAMILIES))
def test_batched_polys_are_proper_monic_and_shaped(name):
    fam = family_for(name, PROBLEM)
    X = _sample(fam, 50)
    num, den = fam.polys(X)
    assert num.shape == den.shape and num.shape[0] == 50
    np.testing.assert_array_equal(den[:, 0], 1.0)  # monic denominator, proper compensator
    assert len(fam.param_names) == fam.n_params == X.shape[1]
    # the gain K is the ratio of leading coefficients and stays in its bounds
    k = np.array([fam.natural(x)["gain"] for x in X])
    np.testing.assert_allclose(num[:, 0], k, rtol=1e-12)


@pytest.mark.parametrize("name", ["PI", "PID"])
def test_integral_families_have_a_pole_at_the_origin(name):
    fam = family_for(name, PROBLEM)
    num, den = fam.polys(_sample(fam, 20))
    np.testing.assert_array_equal(den[:, -1], 0.0)
    for d in den:
        assert np.min(np.abs(np.roots(d))) == 0.0  # numpy.roots


def test_lead_and_lag_zero_pole_order_by_numpy_roots():
    for name, lead in (("lead", True), ("lag", False)):
        fam = family_for(name, PROBLEM)
        for n, d in zip(*fam.polys(_sample(fam, 40, seed=3)), strict=True):
            z = -np.roots(n)[0].real
            p = -np.roots(d)[0].real
            assert z > 0 and p > 0
            assert (z <= p) if lead else (z >= p)


def test_magnitudes_respect_max_frequency():
    for name in ("PI", "PD", "PID", "lead", "lag", "lead-lag"):
        fam = family_for(name, PROBLEM)
        for n, d in zip(*fam.polys(_sample(fam, 40, seed=5)), strict=True):
            for p in (n, d):
                p = np.trim_zeros(p, "f")
                if p.size > 1:
                    assert np.all(np.abs(np.roots(p)) <= 200.0 * (1 + 1e-9))


def test_general_family_reaches_unstable_poles_and_stays_near_the_band():
    fam = family_for("general", PROBLEM)
    assert fam.order == 3 and fam.n_params == 7
    num, den = fam.polys(_sample(fam, 400, seed=7))
    poles = np.array([np.roots(d) for d in den])  # numpy.roots
    assert np.any(poles.real > 0), "right-half-plane compensator poles must be reachable"
    assert np.any(np.all(poles.real < 0, axis=1))
    assert np.max(np.abs(poles)) <= 200.0 * (1 + 1e-9)  # the disc |s| <= max_frequency


def test_gain_bounds_come_from_gain_range():
    for name in FAMILIES:
        fam = family_for(name, GAIN_LIMITED)
        num, den = fam.polys(_sample(fam, 30, seed=11))
        k = num[:, 0] / den[:, 0]
        assert np.all(k >= 0.5 - 1e-9) and np.all(k <= 40.0 + 1e-9)


def test_pid_parallel_form_matches_the_textbook_transfer_function():
    # C(s) = Kp + Ki/s + Kd s / (1 + s/N): PID with a first-order derivative filter
    # (K. J. Astrom and T. Hagglund, Advanced PID Control, ISA 2006, ch. 3; from memory)
    fam = family_for("PID", PROBLEM)
    s = np.array([0.3j, 1 + 2j, 7.5j, -0.4 + 0.1j])
    for x in _sample(fam, 25, seed=13):
        nat = fam.natural(x)
        num, den = fam.poly(x)
        c = np.polyval(num, s) / np.polyval(den, s)
        ref = nat["Kp"] + nat["Ki"] / s + nat["Kd"] * s / (1 + s / nat["filter_pole"])
        # the parallel gains can differ by orders of magnitude: allow their rounding
        np.testing.assert_allclose(c, ref, rtol=1e-6)


def test_pd_and_pi_parallel_forms():
    s = np.array([0.5j, 2 + 1j, 30j])
    pd = family_for("PD", PROBLEM)
    for x in _sample(pd, 20, seed=17):
        nat = pd.natural(x)
        num, den = pd.poly(x)
        ref = nat["Kp"] + nat["Kd"] * s / (1 + s / nat["filter_pole"])
        np.testing.assert_allclose(np.polyval(num, s) / np.polyval(den, s), ref, rtol=1e-6)
        # derivative filter ratio 1 + N_f with N_f in [2, 50] (common practice)
        assert 3.0 - 1e-9 <= nat["filter_pole"] / nat["zero"] <= 51.0 + 1e-9
    pi = family_for("PI", PROBLEM)
    for x in _sample(pi, 20, seed=19):
        nat = pi.natural(x)
        num, den = pi.poly(x)
        ref = nat["Kp"] + nat["Ki"] / s
        np.testing.assert_allclose(np.polyval(num, s) / np.polyval(den, s), ref, rtol=1e-9)


@pytest.mark.parametrize("name", list(FAMILIES))
def test_described_zeros_and_poles_agree_with_numpy_roots(name):
    fam = family_for(name, PROBLEM)
    for x in _sample(fam, 10, seed=23):
        num, den = fam.poly(x)
        nat = fam.natural(x)
        zeros = np.sort_complex(np.roots(num)) if num.size > 1 else np.zeros(0)
        named = sorted(v for k, v in nat.items() if k in ("zero", "lead_zero", "lag_zero"))
        if named:
            np.testing.assert_allclose(np.sort(-zeros.real), named, rtol=1e-8)
        assert f"{nat['gain']:.4g}" in fam.describe(x)


@settings(max_examples=60, deadline=None, derandomize=True)
@given(name=st.sampled_from(list(FAMILIES)), u=st.lists(st.floats(0.0, 1.0), min_size=7,
                                                         max_size=7))
def test_from_polys_inverts_polys(name, u):
    fam = family_for(name, PROBLEM)
    lo, hi = fam.bounds()
    x = lo + (hi - lo) * np.asarray(u[: fam.n_params])
    num, den = fam.poly(x)
    assume(abs(num[0]) > 0.0)  # K = 0 has no structure to recover
    back = fam.from_polys(num, den)
    assert back is not None
    n2, d2 = fam.poly(back)
    # same compensator: compare the frequency responses (numpy.polyval); roots on the
    # edge of the general family's disc are clipped back in (documented slack 1e-4)
    s = 1j * np.geomspace(0.01, 100.0, 9)
    np.testing.assert_allclose(np.polyval(n2, s) / np.polyval(d2, s),
                               np.polyval(num, s) / np.polyval(den, s), rtol=1e-4)


def test_from_polys_rejects_other_shapes():
    lead = family_for("lead", PROBLEM)
    assert lead.from_polys([1.0, 5.0], [1.0, 2.0]) is None  # zero beyond the pole: a lag
    assert family_for("PI", PROBLEM).from_polys([1.0, 1.0], [1.0, 2.0]) is None
    assert family_for("P", PROBLEM).from_polys([1.0, 1.0], [1.0, 2.0]) is None


def _sample_shapes(name, rng, n):
    """Random compensators of the textbook shape (zeros and poles drawn here, numpy.poly)."""
    out = []
    for _ in range(n):
        k = rng.uniform(0.5, 5.0)
        if name == "lead":      # zero below the pole (common practice)
            p = rng.uniform(1.0, 50.0)
            out.append((p, k * np.poly([-p * rng.uniform(0.0, 1.0)])))
        elif name == "lag":     # zero above the pole
            p = rng.uniform(0.01, 1.0)
            out.append((p, k * np.poly([-p * rng.uniform(1.0, 100.0)])))
        elif name == "PD":      # filter pole N = (1 + N_f) z, N_f in [2, 50] (common practice)
            N = rng.uniform(5.0, 100.0)
            out.append((N, k * np.poly([-N / rng.uniform(3.0, 51.0)])))
        elif name == "PI":      # zero in the left half-plane
            out.append((None, k * np.poly([-rng.uniform(0.01, 10.0)])))
    return out


@pytest.mark.parametrize("name", ["lead", "lag", "PD", "PI"])
def test_conic_form_covers_exactly_the_textbook_shape(name):
    # every compensator of the textbook shape is a nonnegative combination of the
    # generators (scipy.optimize.nnls: zero residual) ...
    from scipy.optimize import nnls

    from synth.families import NotSupported

    fam = family_for(name, PROBLEM)
    rng = np.random.default_rng(31)
    for fixed, num in _sample_shapes(name, rng, 20):
        form = fam.conic_form(() if fixed is None else (fixed,), 2.0)
        assert not isinstance(form, NotSupported)
        x, resid = nnls(form.generators.T, num)
        assert resid <= 1e-9 * np.linalg.norm(num)
    # ... and every nonnegative combination has the shape (numpy.roots)
    form = fam.conic_form(() if name == "PI" else (7.0,), 2.0)
    for x in rng.uniform(0.0, 3.0, (30, form.generators.shape[0])):
        z = -np.roots(form.numerator(x)).real[0]
        if name == "lead":
            assert -1e-12 <= z <= 7.0 * (1 + 1e-12)
        elif name == "lag":
            assert z >= 7.0 * (1 - 1e-12)
        elif name == "PD":
            assert 3.0 * (1 - 1e-9) <= 7.0 / z <= 51.0 * (1 + 1e-9)
        else:
            assert z >= 0.0


@pytest.mark.parametrize("name", ["PD", "PID", "lead", "lag", "lead-lag", "general"])
def test_conic_form_keeps_the_fixed_denominator(name):
    # the denominator is the product of the fixed factors (numpy.polymul), monic
    fam = family_for(name, PROBLEM)
    fixed = {"PD": (20.0,), "PID": (30.0,), "lead": (8.0,), "lag": (0.1,),
             "lead-lag": (8.0, 0.05, 0.5), "general": (1.0, -2.0, 3.0)}[name]
    form = fam.conic_form(fixed, 1.0)
    ref = {"PD": [1.0, 20.0], "PID": np.polymul([1.0, 30.0], [1.0, 0.0]), "lead": [1.0, 8.0],
           "lag": [1.0, 0.1], "lead-lag": np.polymul([1.0, 8.0], [1.0, 0.05]),
           "general": [1.0, 1.0, -2.0, 3.0]}[name]
    np.testing.assert_allclose(form.den, ref, rtol=1e-15)
    assert form.generators.shape[1] == form.den.size  # proper: numerator degree <= denominator
    assert len(form.fixed) == len(fam.fixed_names)


@pytest.mark.parametrize("name", ["P", "PI", "PD", "PID"])
def test_pid_gains_give_the_textbook_parallel_form(name):
    # C(s) = Kp + Ki/s + Kd s / (Tf s + 1) (K. J. Astrom and T. Hagglund, Advanced PID
    # Control, ISA 2006, ch. 3; from memory), evaluated with numpy.polyval
    fam = family_for(name, PROBLEM)
    s = np.array([0.3j, 1 + 2j, 7.5j])
    for x in _sample(fam, 15, seed=37):
        num, den = fam.poly(x)
        g = fam.pid_gains(num, den)
        ref = g.kp + g.ki / s + g.kd * s / (g.tf * s + 1)
        np.testing.assert_allclose(np.polyval(num, s) / np.polyval(den, s), ref, rtol=1e-6)


@pytest.mark.parametrize("name", ["lead", "lag", "lead-lag", "general"])
def test_families_without_a_pid_form_say_so(name):
    from synth.families import NotSupported

    fam = family_for(name, PROBLEM)
    num, den = fam.poly(_sample(fam, 1, seed=41)[0])
    assert isinstance(fam.pid_gains(num, den), NotSupported)


def test_structure_names_in_files_come_from_the_registry(write_toml):
    from synth.problem.requirements import STRUCTURES, load_problem

    assert STRUCTURES == tuple(FAMILIES)
    path = write_toml('[plant]\nnumerator = [1.0]\ndenominator = [1.0, 1.0]\n'
                      '[search]\nstructures = ["PID", "notch"]\n')
    with pytest.raises(InputError) as err:
        load_problem(path)
    assert "search.structures" in str(err.value) and "lead-lag" in str(err.value)


def test_near_gain_is_close_to_a_plain_gain_mid_band():
    # far below the compensator's own corners, C(jw) ~ K for the seeds of P, lead, lag, general
    for name in ("P", "lead", "lag", "general"):
        fam = family_for(name, PROBLEM)
        num, den = fam.poly(fam.near_gain(2.5))
        w = fam.space.w_char
        c = np.polyval(num, 1j * w) / np.polyval(den, 1j * w)
        assert abs(c - 2.5) < 1e-9 * 2.5
