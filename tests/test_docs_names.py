"""Every synth name docs/python-api.md mentions exists.

The page is the user's map of the library; a name it gives that no longer
imports sends the reader to a dead end.  The check is against the import
system itself (``importlib.import_module`` and ``getattr``), not against a
list kept in the project.
"""

from __future__ import annotations

import importlib
import re
from pathlib import Path

import pytest

PAGE = Path(__file__).resolve().parent.parent / "docs" / "python-api.md"

_FROM = re.compile(r"^\s*from\s+(synth(?:\.\w+)*)\s+import\s+(.+?)\s*(?:#.*)?$", re.M)
# schema names such as synth.design/1 are not Python names
_DOTTED = re.compile(r"(?<![\w./])(synth(?:\.[A-Za-z_]\w*)+)(?![\w/])")


def _resolve(dotted: str) -> object:
    """The object ``dotted`` names: the longest importable module prefix, then attributes."""
    parts = dotted.split(".")
    for cut in range(len(parts), 0, -1):
        try:
            obj = importlib.import_module(".".join(parts[:cut]))
        except ModuleNotFoundError:
            continue
        for attr in parts[cut:]:
            obj = getattr(obj, attr)
        return obj
    raise ModuleNotFoundError(dotted)


def _names() -> list[str]:
    text = PAGE.read_text(encoding="utf-8")
    names = set()
    for module, imported in _FROM.findall(text):
        for item in imported.strip("()").split(","):
            item = item.split(" as ")[0].strip()
            if item:
                names.add(f"{module}.{item}")
    names.update(m.rstrip(".") for m in _DOTTED.findall(text))
    return sorted(names)


def test_page_names_synth_objects():
    # guard against a pattern that silently matches nothing
    assert len(_names()) > 40


@pytest.mark.parametrize("dotted", _names())
def test_documented_name_exists(dotted):
    try:
        _resolve(dotted)
    except (ImportError, AttributeError) as err:
        pytest.fail(f"docs/python-api.md names {dotted}, which does not exist: {err}")
