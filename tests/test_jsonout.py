"""The shared JSON cleaning: every value must be valid strict JSON.

External reference: RFC 8259 has no NaN or infinity; Python's ``json.dumps``
with ``allow_nan=False`` enforces that and ``json.loads`` reads it back.
"""

import json
import math

import numpy as np

from synth.outputs.jsonout import clean, finite_or_none, interval_lists, root_pairs


def test_clean_gives_strict_json():
    value = {1: np.float64(np.nan), "a": (np.int64(3), np.bool_(True), -math.inf),
             "z": np.array([1.5, np.inf]), "c": np.complex128(1 - 2j), "m": -0.0}
    out = clean(value)
    text = json.dumps(out, allow_nan=False)  # raises on NaN or infinity
    assert json.loads(text) == {"1": None, "a": [3, True, None], "z": [1.5, None],
                                "c": [1.0, -2.0], "m": 0.0}
    assert "-0" not in text
    assert type(out["a"][1]) is bool and type(out["a"][0]) is int


def test_finite_or_none():
    assert finite_or_none(None) is None
    assert finite_or_none("x") is None
    assert finite_or_none(float("nan")) is None
    assert finite_or_none(np.float32(2.5)) == 2.5


def test_root_pairs_sorted_like_numpy_sort_complex():
    roots = np.roots([1.0, 2.0, 5.0, 0.0])  # 0, -1 +- 2j
    # numpy.sort_complex orders by real part, then imaginary part
    expected = [[z.real, z.imag] for z in np.sort_complex(roots)]
    assert np.allclose(root_pairs(roots), expected)
    assert root_pairs([2j, -1.0], sort=False) == [[0.0, 2.0], [-1.0, 0.0]]


def test_interval_lists_keep_unbounded_ends():
    assert interval_lists([(None, np.float64(2.0)), (3, None)]) == [[None, 2.0], [3.0, None]]
