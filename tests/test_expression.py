"""Tests for synth.problem.expression.parse_rational.

External references: numpy.polymul / numpy.polyadd / numpy.polyval (reference
library), binomial coefficients via math.comb (mathematical fact), and
common practice for how engineers write transfer functions.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from synth.errors import InputError
from synth.problem.expression import MAX_EXPONENT, parse_rational


def _ratio(num, den, s):
    return np.polyval(num, s) / np.polyval(den, s)


@pytest.mark.parametrize("n", [1, 2, 3, 7, 12, 20])
def test_binomial_expansion(n):
    # (s+1)^n has the binomial coefficients C(n, k) (math.comb).
    num, den = parse_rational(f"(s+1)^{n}")
    assert num.tolist() == [float(math.comb(n, k)) for k in range(n + 1)]
    assert den.tolist() == [1.0]


def test_contract_example_matches_numpy_polymul():
    # contract.md example "4/(s^2*(s+8))": denominator via numpy.polymul.
    num, den = parse_rational("4/(s^2*(s+8))")
    ref = np.polymul(np.polymul([1, 0], [1, 0]), [1, 8])
    np.testing.assert_array_equal(num, [4.0])
    np.testing.assert_array_equal(den, ref)


def test_implicit_multiplication_like_engineers_write():
    # common practice: "2s", "s(s+2)", "(s+1)(s+2)" mean products.
    np.testing.assert_array_equal(parse_rational("2s")[0], [2.0, 0.0])
    np.testing.assert_array_equal(parse_rational("s(s+2)")[0], np.polymul([1, 0], [1, 2]))
    np.testing.assert_array_equal(parse_rational("(s+1)(s+2)")[0], np.polymul([1, 1], [1, 2]))
    np.testing.assert_array_equal(parse_rational("3 (s+1)")[0], [3.0, 3.0])
    # ^ binds tighter than implicit multiplication: 2s^2 = 2*(s^2)
    np.testing.assert_array_equal(parse_rational("2s^2")[0], [2.0, 0.0, 0.0])
    np.testing.assert_array_equal(parse_rational("-s^2")[0], [-1.0, 0.0, 0.0])


def test_numbers_forms():
    for text, value in [("1e-3", 1e-3), ("2.5E+4", 2.5e4), (".5", 0.5), ("3.", 3.0), ("007", 7.0)]:
        num, den = parse_rational(text)
        assert num.tolist() == [value] and den.tolist() == [1.0]


def test_negative_exponent_is_reciprocal():
    num, den = parse_rational("(s+2)^-2")
    np.testing.assert_array_equal(num, [1.0])
    np.testing.assert_array_equal(den, np.polymul([1, 2], [1, 2]))
    num, den = parse_rational("s^(-1)")
    np.testing.assert_array_equal(den, [1.0, 0.0])


def test_no_cancellation_and_unnormalised():
    # Common factors stay (contract: no cancellation may hide a mode).
    num, den = parse_rational("(s-1)/((s-1)(s+3))")
    np.testing.assert_array_equal(num, [1.0, -1.0])
    np.testing.assert_array_equal(den, np.polymul([1, -1], [1, 3]))
    num, den = parse_rational("s/2")
    np.testing.assert_array_equal(num, [1.0, 0.0])
    np.testing.assert_array_equal(den, [2.0])


def test_sum_of_fractions_against_numpy():
    # a/b + c/d = (a d + c b)/(b d), formed with numpy.polymul / numpy.polyadd.
    num, den = parse_rational("1/(s+1) + 3/(s+2)")
    np.testing.assert_allclose(num, np.polyadd(np.polymul([1], [1, 2]), np.polymul([3], [1, 1])))
    np.testing.assert_allclose(den, np.polymul([1, 1], [1, 2]))


def test_leading_zeros_trimmed_after_cancellation():
    num, den = parse_rational("(s+0.1)^2 - s^2")
    assert num.size == 2  # the s^2 terms cancel to rounding level
    np.testing.assert_allclose(num, [0.2, 0.01], rtol=1e-14)
    num, _ = parse_rational("s - s")
    np.testing.assert_array_equal(num, [0.0])


def test_precedence_left_to_right_division():
    # 1/s*(s+1) is (1/s)*(s+1) by the usual left-to-right rule.
    num, den = parse_rational("1/s*(s+1)")
    np.testing.assert_array_equal(num, [1.0, 1.0])
    np.testing.assert_array_equal(den, [1.0, 0.0])
    num, den = parse_rational("2^3 - 1 - 1")
    assert num.tolist() == [6.0] and den.tolist() == [1.0]


# ---- random expressions against numpy evaluation ---------------------------

_coef = st.integers(min_value=-9, max_value=9)


@st.composite
def _factor(draw):
    a = draw(_coef)
    b = draw(st.integers(min_value=1, max_value=5))
    k = draw(st.integers(min_value=1, max_value=3))
    return f"({b}s{'+' if a >= 0 else '-'}{abs(a)})^{k}", np.polynomial.polynomial.polypow(
        [a, b], k
    )[::-1]


@given(st.lists(_factor(), min_size=1, max_size=3), st.lists(_factor(), min_size=1, max_size=3),
       st.integers(min_value=1, max_value=50))
@settings(max_examples=60, deadline=None)
def test_random_products_match_numpy_polymul(nfacs, dfacs, gain):
    # Reference: numpy.polymul products of numpy.polynomial.polynomial.polypow factors.
    text = f"{gain}*" + "".join(t for t, _ in nfacs) + "/(" + "*".join(t for t, _ in dfacs) + ")"
    num, den = parse_rational(text)
    ref_num = np.array([float(gain)])
    for _, p in nfacs:
        ref_num = np.polymul(ref_num, p)
    ref_den = np.array([1.0])
    for _, p in dfacs:
        ref_den = np.polymul(ref_den, p)
    np.testing.assert_allclose(num, ref_num, rtol=1e-12)
    np.testing.assert_allclose(den, ref_den, rtol=1e-12)


# numbers are 0 or of magnitude >= 1e-100 (docs/requirements-file.md, Limits)
_COEF = st.floats(-5, 5, allow_subnormal=False).filter(lambda x: x == 0 or abs(x) >= 1e-100)


@given(st.lists(_COEF, min_size=1, max_size=5), st.lists(_COEF, min_size=1, max_size=5))
@settings(max_examples=60, deadline=None)
def test_sum_of_terms_evaluates_like_numpy_polyval(a, b):
    # N(s)/D(s) written term by term: compare the value at a test point with numpy.polyval.
    def poly_text(c):
        n = len(c) - 1
        return " + ".join(f"({ci!r})*s^{n - i}" for i, ci in enumerate(c))

    s = 0.37 + 1.1j
    assume(abs(np.polyval(b, s)) > 1e-6)
    num, den = parse_rational(f"({poly_text(a)})/({poly_text(b)})")
    ref = np.polyval(a, s) / np.polyval(b, s)
    got = _ratio(num, den, s)
    assert abs(got - ref) <= 1e-9 * (1 + abs(ref))


# ---- malformed-input corpus --------------------------------------------------

@pytest.mark.parametrize(
    ("text", "fragment"),
    [
        ("", "empty expression"),
        ("   ", "empty expression"),
        ("(s+1", "missing ')'"),
        ("s+1)", "unexpected ')' at position 4"),
        ("(s+1)*(s+2))", "unexpected ')' at position 12"),
        ("x+1", "unknown name 'x' at position 1"),
        ("s + t", "unknown name 't' at position 5"),
        ("exp(-s)", "unknown name 'exp'"),
        ("__import__('os')", "unknown name '__import__'"),
        ("1/0", "division by a zero polynomial"),
        ("1/(s-s)", "division by a zero polynomial"),
        ("(s-s)^-2", "division by a zero polynomial"),
        ("s^2.5", "must be an integer"),
        ("s^s", "must be an integer"),
        ("s^", "must be an integer"),
        (f"s^{MAX_EXPONENT + 1}", "too large"),
        ("s^-99", "too large"),
        ("s^2^3", "chained powers"),
        ("1/2s", "ambiguous"),
        ("1/(s+1)(s+2)", "ambiguous"),
        ("s**2", "use '^'"),
        ("2 3", "unexpected '3' at position 3"),
        ("s 2", "unexpected '2'"),
        ("s+", "unexpected end"),
        ("*s", "unexpected '*' at position 1"),
        ("()", "empty parentheses"),
        ("1e999", "too large"),
        ("1.2.3", "unexpected '.3'"),
        ("s;1", "unexpected character ';'"),
        ("s = 1", "unexpected character '='"),
        ("٣s", "unexpected character"),
        ("2j", "unknown name 'j'"),
        ("((s+1)^20)^2", "degree exceeds"),
        ("(" * 100 + "s" + ")" * 100, "nested too deeply"),
        ("-" * 100 + "s", "nested too deeply"),
        ("s" + "+s" * 1500, "too long"),
    ],
)
def test_malformed_corpus(text, fragment):
    with pytest.raises(InputError) as info:
        parse_rational(text)
    msg = str(info.value)
    assert fragment in msg
    assert "\n" not in msg


def test_non_string_rejected():
    with pytest.raises(InputError, match="must be a string"):
        parse_rational(3.0)  # type: ignore[arg-type]


@given(st.text(alphabet="s0123456789.+-*/^() e", max_size=40))
@settings(max_examples=300, deadline=None)
def test_fuzz_never_crashes(text):
    # Any text either parses to finite arrays or raises InputError, nothing else.
    try:
        num, den = parse_rational(text)
    except InputError as err:
        assert "\n" not in str(err)
        return
    assert num.ndim == den.ndim == 1 and num.size >= 1 and den.size >= 1
    assert np.all(np.isfinite(num)) and np.all(np.isfinite(den))
    assert np.any(den)
    assert num[0] != 0 or num.size == 1
    assert den[0] != 0
