"""Writing output files and folders whole or not at all, and checking output paths first.

Every command that writes (``--json``, ``--plot``, ``--report``, ``--out``, ...)
uses these helpers:

* :func:`check_output_file` and :func:`check_output_folder` run before any
  work, so a bad path costs nothing: the folder must exist and take a new
  file, and the target must not be a folder, a device, a FIFO or a socket.
* :func:`write_text_atomic`, :func:`write_json_atomic` and :func:`atomic_file`
  write into a hidden temporary file beside the target and rename it into
  place; :func:`atomic_folder` builds a whole folder (a report) in a hidden
  temporary folder and renames it, or its entries, into place at the end.
  On any exception, interrupts included, the temporary file or folder is
  removed, so an interrupted run leaves neither hidden files nor an empty
  folder.
* The final renames run with SIGINT and SIGTERM deferred (main thread only),
  so an interrupt never splits a folder's commit; the interrupt is raised
  right after it, and the exception carries ``written``, the paths committed.

References
----------
.. [1] IEEE Std 1003.1 (POSIX), ``rename()``: atomic replacement of a
   directory entry within one file system.
"""

from __future__ import annotations

import json
import os
import shutil
import signal
import stat
import tempfile
import threading
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from synth.errors import OptionError

__all__ = [
    "TEMP_PREFIX",
    "atomic_file",
    "atomic_folder",
    "check_output_file",
    "check_output_folder",
    "interrupt_point",
    "write_json_atomic",
    "write_text_atomic",
]

#: Name prefix of every temporary file or folder synth makes beside an output.
TEMP_PREFIX = ".synth-tmp-"

#: Environment variable naming a point where synth sends itself a signal, for
#: the interrupt tests: ``POINT`` or ``POINT:INT`` / ``POINT:TERM``.
INTERRUPT_ENV = "SYNTH_INTERRUPT_AT"

_SPECIAL = ((stat.S_ISFIFO, "a FIFO (named pipe)"), (stat.S_ISCHR, "a character device"),
            (stat.S_ISBLK, "a block device"), (stat.S_ISSOCK, "a socket"))


def _label(option: str | None, path) -> str:
    return f"{option} {path}" if option else str(path)


def _probe_folder(folder: Path, option: str | None, path) -> None:
    """Create and remove a temporary file in ``folder``: the only reliable writability test.

    ``os.access`` answers for the real user id and knows nothing of read-only
    mounts or of root on a network share; trying is the test that matches
    what the write will meet.
    """
    try:
        fd, probe = tempfile.mkstemp(prefix=TEMP_PREFIX, dir=folder)
    except OSError as err:
        raise OptionError(f"{_label(option, path)}: cannot write in the folder {folder} "
                          f"({err.strerror or err})") from None
    os.close(fd)
    os.unlink(probe)


def _refuse_special(p: Path, option: str | None, path, what: str) -> None:
    try:
        mode = os.stat(p).st_mode
    except FileNotFoundError:
        return
    except OSError as err:
        raise OptionError(f"{_label(option, path)}: cannot be used ({err.strerror or err})") from None
    if stat.S_ISDIR(mode) and what == "file":
        raise OptionError(f"{_label(option, path)}: is a folder, not a file")
    if not stat.S_ISDIR(mode) and what == "folder" and stat.S_ISREG(mode):
        raise OptionError(f"{_label(option, path)}: exists and is not a folder")
    for test, name in _SPECIAL:
        if test(mode):
            raise OptionError(f"{_label(option, path)}: is {name}; synth writes only regular "
                              "files")


def check_output_file(path, option: str | None = None,
                      suffixes: tuple[str, ...] | None = None) -> Path | None:
    """Check, before any work, that an output file can be written.

    Parameters
    ----------
    path : str, path-like or None
        The output file; ``None`` (option not given) passes.
    option : str, optional
        The option that named it (``"--json"``), for the message.
    suffixes : tuple of str, optional
        Accepted lower-case suffixes, e.g. ``(".png", ".svg")``.

    Returns
    -------
    pathlib.Path or None
        The path.

    Raises
    ------
    synth.errors.OptionError
        When the suffix is wrong, the folder is missing or not writable, or
        the path is a folder, a device, a FIFO or a socket.
    """
    if path is None:
        return None
    p = Path(path)
    if suffixes and p.suffix.lower() not in suffixes:
        raise OptionError(f"{_label(option, path)}: the file name must end in "
                          f"{' or '.join(suffixes)}")
    _refuse_special(p, option, path, "file")
    parent = p.parent if str(p.parent) else Path(".")
    if not parent.is_dir():
        raise OptionError(f"{_label(option, path)}: folder {parent} does not exist")
    _probe_folder(parent, option, path)
    return p


def check_output_folder(path, option: str | None = None) -> Path | None:
    """Check, before any work, that an output folder can be written (created if missing).

    The folder and its missing parents are created only at the end, by
    :func:`atomic_folder`; the nearest existing ancestor must be a folder
    that takes new entries.

    Raises
    ------
    synth.errors.OptionError
        When the path exists and is not a folder, or the place it goes in is
        missing or not writable.
    """
    if path is None:
        return None
    p = Path(path)
    _refuse_special(p, option, path, "folder")
    if p.is_dir():
        _probe_folder(p, option, path)
        return p
    base = _existing_ancestor(p)
    if not base.is_dir():
        raise OptionError(f"{_label(option, path)}: {base} is not a folder")
    _probe_folder(base, option, path)
    return p


def _existing_ancestor(p: Path) -> Path:
    """The nearest ancestor of ``p`` that exists (``.`` for a relative name)."""
    for parent in p.parents:
        if os.path.lexists(parent):
            return parent
    return Path(".")


def interrupt_point(name: str) -> None:
    """Send this process a signal at a named point when :data:`INTERRUPT_ENV` asks for it.

    A test hook: ``SYNTH_INTERRUPT_AT=report:TERM`` makes the process signal
    itself with SIGTERM when it reaches ``interrupt_point("report")``, so the
    interrupt tests hit the exact stage they mean without relying on timing.
    Without the variable this does nothing.
    """
    spec = os.environ.get(INTERRUPT_ENV)
    if not spec:
        return
    point, _, sig = spec.partition(":")
    if point == name:
        os.kill(os.getpid(), signal.SIGINT if sig.upper() == "INT" else signal.SIGTERM)


@contextmanager
def _signals_deferred(committed: list[Path]) -> Iterator[None]:
    """Hold SIGINT and SIGTERM while the block runs; deliver the first one after it.

    The exception the original handler raises gains ``written``: the paths
    committed in the block. Outside the main thread (where handlers cannot be
    set) the block runs as is.
    """
    if threading.current_thread() is not threading.main_thread():
        yield
        return
    caught: list[int] = []

    def record(signum, _frame):
        caught.append(signum)

    old = {s: signal.signal(s, record) for s in (signal.SIGINT, signal.SIGTERM)}
    try:
        yield
    finally:
        for s, handler in old.items():
            signal.signal(s, handler)
    if caught:
        handler = old[caught[0]]
        if callable(handler):
            try:
                handler(caught[0], None)
            except BaseException as err:
                err.written = tuple(str(p) for p in committed)
                raise
        elif handler == signal.SIG_DFL:
            signal.raise_signal(caught[0])


@contextmanager
def atomic_file(path, option: str | None = None) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; rename it onto ``path`` when the block succeeds.

    For writers that want a file name (``matplotlib``'s ``savefig``). The
    temporary file keeps the target's suffix, so format detection works.

    Raises
    ------
    synth.errors.OptionError
        When the folder cannot be written (the temporary file is removed).
    """
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    try:
        fd, tmp = tempfile.mkstemp(prefix=TEMP_PREFIX, suffix=target.suffix, dir=folder)
    except OSError as err:
        raise OptionError(f"{_label(option, path)}: cannot write ({err.strerror or err})") from None
    os.close(fd)
    tmp_path = Path(tmp)
    try:
        yield tmp_path
        interrupt_point("file")
        # mkstemp makes the file private; give it the mode a plain open() would
        os.chmod(tmp_path, 0o666 & ~_umask())
        with _signals_deferred([target]):
            os.replace(tmp_path, target)
    except OSError as err:
        raise OptionError(f"{_label(option, path)}: cannot write ({err.strerror or err})") from None
    finally:
        tmp_path.unlink(missing_ok=True)


def write_text_atomic(path, text: str | bytes, option: str | None = None) -> Path:
    """Write ``text`` (UTF-8; bytes as they are) to ``path`` whole or not at all; return the path."""
    with atomic_file(path, option) as tmp:
        if isinstance(text, bytes):
            tmp.write_bytes(text)
        else:
            tmp.write_text(text, encoding="utf-8")
    return Path(path)


def write_json_atomic(path, doc, option: str | None = None) -> Path:
    """Write ``doc`` as strict JSON (no NaN or infinity), indented, whole or not at all."""
    text = json.dumps(doc, indent=2, allow_nan=False) + "\n"
    return write_text_atomic(path, text, option)


@contextmanager
def atomic_folder(path, option: str | None = None) -> Iterator[Path]:
    """Yield a hidden staging folder; its content becomes the folder ``path`` when the block succeeds.

    A missing ``path`` is built as a staging folder in its nearest existing
    ancestor and renamed into place in one step (missing parents are made
    just before). An existing folder keeps its other files: the staging
    folder is made inside it and each entry is renamed into place, all with
    interrupts deferred. On failure or interrupt the staging folder is
    removed and ``path`` is left as it was (a folder is never created empty).

    Yields
    ------
    pathlib.Path
        Where to write the folder's files.

    Raises
    ------
    synth.errors.OptionError
        When the staging folder cannot be made or the commit fails.
    """
    target = Path(path)
    into_existing = target.is_dir()
    where = target if into_existing else _existing_ancestor(target)
    try:
        staging = Path(tempfile.mkdtemp(prefix=TEMP_PREFIX, dir=where))
    except OSError as err:
        raise OptionError(f"{_label(option, path)}: cannot write ({err.strerror or err})") from None
    try:
        yield staging
        interrupt_point("folder")
        committed: list[Path] = []
        with _signals_deferred(committed):
            interrupt_point("commit")  # a signal here waits until the commit is done
            if into_existing:
                for entry in sorted(staging.iterdir()):
                    os.replace(entry, target / entry.name)
                    committed.append(target / entry.name)
                staging.rmdir()
            else:
                os.chmod(staging, 0o777 & ~_umask())
                target.parent.mkdir(parents=True, exist_ok=True)
                os.rename(staging, target)
                committed.append(target)
    except OSError as err:
        raise OptionError(f"{_label(option, path)}: cannot write ({err.strerror or err})") from None
    finally:
        if staging.exists():
            shutil.rmtree(staging, ignore_errors=True)


def _umask() -> int:
    """The process umask (read by setting and restoring it; there is no other way)."""
    mask = os.umask(0o022)
    os.umask(mask)
    return mask
