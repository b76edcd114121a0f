"""Shared test helpers."""

from __future__ import annotations

import os

# as the CLI does: one BLAS thread for synth's small matrices (set before numpy loads)
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import numpy as np  # noqa: E402  (after the BLAS setting above)
import pytest  # noqa: E402

# Plots in tests never need a screen.
os.environ.setdefault("MPLBACKEND", "Agg")


@pytest.fixture
def write_toml(tmp_path):
    """Write a requirements file and return its path."""

    def _write(text: str, name: str = "case.toml"):
        p = tmp_path / name
        p.write_text(text)
        return p

    return _write


def _numpy_roots(polys: np.ndarray) -> np.ndarray:
    """Roots of each row (descending coefficients, non-zero leading one) by numpy.roots."""
    P = np.atleast_2d(np.asarray(polys, dtype=float))
    out = np.empty((P.shape[0], P.shape[1] - 1), dtype=complex)
    for i, row in enumerate(P):
        out[i] = np.roots(row)
    return out


def _hurwitz_minors(polys: np.ndarray) -> np.ndarray:
    """Whether each row is Hurwitz: every leading principal minor of its Hurwitz matrix is
    positive (A. Hurwitz, Math. Ann. 46, 1895), the minors from numpy.linalg.det."""
    P = np.atleast_2d(np.asarray(polys, dtype=float))
    P = P * np.sign(P[:, :1])
    n = P.shape[1] - 1
    ok = np.all(P > 0, axis=1)
    H = np.zeros((P.shape[0], n, n))
    for i in range(n):
        for j in range(n):
            k = 2 * j - i + 1
            if 0 <= k <= n:
                H[:, i, j] = P[:, k]
    for m in range(1, n + 1):
        ok &= np.linalg.det(H[:, :m, :m]) > 0
    return ok


@pytest.fixture(scope="session")
def reference_roots():
    """Reference roots of a polynomial batch, row by row with numpy.roots.

    Session-scoped so property-based tests can use it too.
    """
    return _numpy_roots


@pytest.fixture(scope="session")
def hurwitz_reference():
    """Reference stability test of a polynomial batch: Hurwitz determinants (numpy.linalg.det)."""
    return _hurwitz_minors
