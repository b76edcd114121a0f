"""Shared test helpers."""

from __future__ import annotations

import os

import numpy as np
import pytest

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


def _eigvals_roots(polys: np.ndarray) -> np.ndarray:
    """Roots of each row (descending coefficients) from numpy.linalg.eigvals of its companion matrix."""
    P = polys / polys[:, :1]
    n = P.shape[1] - 1
    C = np.zeros((P.shape[0], n, n))
    C[:, 0, :] = -P[:, 1:]
    C[:, np.arange(1, n), np.arange(n - 1)] = 1.0
    return np.linalg.eigvals(C)


@pytest.fixture(scope="session")
def companion_roots():
    """Reference roots of a polynomial batch: numpy.linalg.eigvals of companion matrices.

    Session-scoped so property-based tests can use it too.
    """
    return _eigvals_roots
