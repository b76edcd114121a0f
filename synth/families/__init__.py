"""Compensator structure families: one file per family, all behind one interface.

See :mod:`synth.families.base` for the interface (:class:`Family`), the
search space shared by the families of one problem, and what each family
declares for the strategies.

Registry.  Every module of this package whose name does not start with ``_``
and that defines ``FAMILY = TheClass`` registers that family under
``TheClass.name``, listed by ``TheClass.position``; adding a structure is one
new file plus its tests.  The structure names valid in a requirements file
(``search.structures``) are the registry's names, read from here only.
:func:`synth.design.run_design` also takes family classes directly
(``run_design(problem, families=[...])``), so a family defined anywhere plugs
in without touching the package.
"""

from __future__ import annotations

import importlib
import pkgutil
from collections.abc import Mapping
from types import MappingProxyType

from synth.families.base import (
    PD_RATIO_RANGE,
    ConicForm,
    Family,
    NotSupported,
    ParallelGains,
    SearchSpace,
)

__all__ = [
    "ConicForm",
    "FAMILIES",
    "Family",
    "NotSupported",
    "PD_RATIO_RANGE",
    "ParallelGains",
    "SearchSpace",
    "families_for",
    "family_for",
    "registry",
    "structure_names",
]


def registry() -> Mapping[str, type[Family]]:
    """The families of this package, name -> class, in listing order (read-only).

    Raises
    ------
    TypeError
        When two modules register the same name or ``FAMILY`` is not a
        :class:`Family` subclass with a name (a programming error).
    """
    found: list[type[Family]] = []
    for info in pkgutil.iter_modules(__path__):
        if info.name.startswith("_") or info.name == "base":
            continue
        cls = getattr(importlib.import_module(f"{__name__}.{info.name}"), "FAMILY", None)
        if cls is None:
            continue
        if not (isinstance(cls, type) and issubclass(cls, Family) and cls.name):
            raise TypeError(f"synth.families.{info.name}.FAMILY must be a named Family subclass")
        found.append(cls)
    found.sort(key=lambda c: (c.position, c.name))
    names = [c.name for c in found]
    if len(set(names)) != len(names):
        raise TypeError(f"structure names must be unique, got {names}")
    return MappingProxyType({c.name: c for c in found})


#: Structure families keyed by their names, in listing order (read-only).
FAMILIES = registry()


def structure_names() -> tuple[str, ...]:
    """The structure names a requirements file may list in ``search.structures``."""
    return tuple(FAMILIES)


def _lookup(name: str, families: Mapping[str, type[Family]] | None) -> type[Family]:
    table = FAMILIES if families is None else families
    try:
        return table[name]
    except KeyError:
        raise ValueError(f"unknown structure {name!r}; choose from {', '.join(table)}") from None


def family_for(name: str, problem, families: Mapping[str, type[Family]] | None = None) -> Family:
    """The family ``name`` over the search space of ``problem``.

    Raises
    ------
    ValueError
        For a name not in ``families`` (default: the registry).  Names read
        from a file are validated when it is loaded; this is a programming error.
    """
    return _lookup(name, families)(SearchSpace.for_problem(problem))


def families_for(problem, families=None) -> list[Family]:
    """The families a design run searches.

    Parameters
    ----------
    problem : synth.problem.Problem
    families : None or iterable of (Family class, Family, or str)
        None: ``search.structures`` (or every registered family) from the
        registry.  Otherwise exactly these, in the given order: classes are
        built over the problem's search space, instances used as they are,
        names looked up in the registry.
    """
    space = SearchSpace.for_problem(problem)
    if families is None:
        names = problem.search.structures or tuple(FAMILIES)
        return [_lookup(n, None)(space) for n in names]
    out: list[Family] = []
    for item in families:
        if isinstance(item, str):
            item = _lookup(item, None)
        if isinstance(item, type) and issubclass(item, Family):
            item = item(space)
        if not isinstance(item, Family):
            raise TypeError(f"{item!r} is not a structure family")
        out.append(item)
    names = [f.name for f in out]
    if len(set(names)) != len(names):
        raise ValueError(f"structure names must be unique, got {names}")
    return out
