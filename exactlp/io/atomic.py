"""Atomic file output: a temporary file in the same folder, fsync, rename.

An interrupted or failing run never leaves a half-written file and never
replaces a good file already at the target path.
"""

from __future__ import annotations

import os
import tempfile

from ..errors import OutputError


def same_file(a: str | os.PathLike, b: str | os.PathLike) -> bool:
    try:
        return os.path.samefile(a, b)
    except OSError:
        return os.path.abspath(a) == os.path.abspath(b)


def write_atomic(path: str | os.PathLike, text: str, *, protect: tuple = ()) -> None:
    """Write ``text`` to ``path`` atomically; refuse to overwrite ``protect`` paths."""
    p = os.fspath(path)
    for other in protect:
        if other is not None and same_file(p, other):
            raise OutputError(f"{p}: refusing to write over the input file {os.fspath(other)}")
    folder = os.path.dirname(os.path.abspath(p))
    if not os.path.isdir(folder):
        raise OutputError(f"{p}: the folder {folder} does not exist")
    if os.path.isdir(p):
        raise OutputError(f"{p}: is a folder; give a file name")
    fd, tmp = tempfile.mkstemp(prefix="." + os.path.basename(p) + ".", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, p)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
