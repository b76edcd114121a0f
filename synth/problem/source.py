"""Reading an input file safely: regular files only, never blocking, never unbounded.

Every file synth reads (requirements files, design JSON, data files) goes
through :func:`read_input_bytes`, so a FIFO, a device, a socket, a folder or
an oversized file gets the same one-line refusal everywhere.
"""

from __future__ import annotations

import os
import stat

from synth.errors import InputError
from synth.problem.limits import MAX_FILE_BYTES

__all__ = ["read_input_bytes", "read_input_text"]

_SPECIAL = (
    (stat.S_ISFIFO, "a FIFO (named pipe)"),
    (stat.S_ISCHR, "a character device"),
    (stat.S_ISBLK, "a block device"),
    (stat.S_ISSOCK, "a socket"),
)


def _size_text(n: int) -> str:
    return f"{n / (1 << 20):.3g} MiB" if n >= (1 << 20) else f"{n} bytes"


def read_input_bytes(path, *, max_bytes: int = MAX_FILE_BYTES,
                     kind: str = "requirements file") -> bytes:
    """Read a whole regular file of at most ``max_bytes`` bytes.

    Parameters
    ----------
    path : str or path-like
        The file.
    max_bytes : int, optional
        Largest size accepted (default :data:`synth.problem.limits.MAX_FILE_BYTES`).
    kind : str, optional
        What the file should be, for messages (``"is a folder, not a <kind>"``).

    Returns
    -------
    bytes
        The content.

    Raises
    ------
    InputError
        Naming the file, when it is missing, unreadable, not a regular file
        (folder, FIFO, device, socket) or larger than ``max_bytes``.

    Notes
    -----
    The file is opened with ``O_NONBLOCK`` and checked with ``fstat`` on the
    open descriptor, so a FIFO cannot block the open and a file swapped for
    something else between a check and the open is still caught. Reading
    stops one byte past the cap, so a file that grows while it is read (or a
    pseudo-file reporting size 0) cannot exhaust memory.

    References
    ----------
    .. [1] IEEE Std 1003.1 (POSIX), ``open()`` with ``O_NONBLOCK`` on a FIFO
       and ``fstat()`` file-type tests.
    """
    src = str(path)
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_CLOEXEC", 0)
    try:
        fd = os.open(path, flags)
    except FileNotFoundError:
        raise InputError("no such file", src) from None
    except IsADirectoryError:
        raise InputError(f"is a folder, not a {kind}", src) from None
    except OSError as err:
        # ENXIO for a socket, EACCES, ELOOP, ENAMETOOLONG, ...
        raise InputError(f"cannot be read: {err.strerror or err}", src) from None
    try:
        st = os.fstat(fd)
        if stat.S_ISDIR(st.st_mode):
            raise InputError(f"is a folder, not a {kind}", src)
        for test, name in _SPECIAL:
            if test(st.st_mode):
                raise InputError(f"is {name}, not a regular file; synth reads only regular "
                                 "files", src)
        if st.st_size > max_bytes:
            raise InputError(f"is {_size_text(st.st_size)}; a {kind} may have at most "
                             f"{_size_text(max_bytes)}", src)
        chunks, total = [], 0
        while total <= max_bytes:
            chunk = os.read(fd, min(1 << 16, max_bytes + 1 - total))
            if not chunk:
                break
            chunks.append(chunk)
            total += len(chunk)
        if total > max_bytes:
            raise InputError(f"is larger than {_size_text(max_bytes)}, the most a {kind} may "
                             "have", src)
        return b"".join(chunks)
    except OSError as err:
        raise InputError(f"cannot be read: {err.strerror or err}", src) from None
    finally:
        os.close(fd)


def read_input_text(path, *, max_bytes: int = MAX_FILE_BYTES,
                    kind: str = "requirements file") -> str:
    """:func:`read_input_bytes` decoded as UTF-8 (a byte-order mark is dropped).

    Raises
    ------
    InputError
        As :func:`read_input_bytes`, and when the content is not UTF-8.
    """
    raw = read_input_bytes(path, max_bytes=max_bytes, kind=kind)
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as err:
        raise InputError(f"is not UTF-8 text (byte {err.start + 1})", str(path)) from None
