"""Shared test helpers."""

from __future__ import annotations

import os

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
