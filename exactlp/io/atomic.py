"""Atomic file output: a temporary file in the same folder, fsync, rename.

An interrupted or failing run never leaves a half-written file and never
replaces a good file already at the target path.
"""

from __future__ import annotations

import os
import secrets

from ..errors import OutputError


def _temporary(folder: str, name: str) -> tuple[int, str]:
    """A new file beside the target, opened for writing.  Created with mode 0o666,
    which the process's umask trims as for any file it writes (0o644 under the
    usual 022): a certificate is meant to be handed on, and ``tempfile.mkstemp``'s
    0o600 would have kept it from the group and the reviewer's account."""
    for _ in range(100):
        tmp = os.path.join(folder, f".{name}.{secrets.token_hex(4)}.tmp")
        try:
            return os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666), tmp
        except FileExistsError:
            continue
    raise OutputError(f"{os.path.join(folder, name)}: no temporary name was free beside it")


def same_file(a: str | os.PathLike, b: str | os.PathLike) -> bool:
    try:
        return os.path.samefile(a, b)
    except OSError:
        return os.path.abspath(a) == os.path.abspath(b)


def write_atomic(path: str | os.PathLike, text, *, protect: tuple = ()) -> None:
    """Write ``text`` to ``path`` atomically; refuse to overwrite ``protect`` paths.

    ``text`` is a string, or a function that writes the text to the open file
    it is given (a large report, written as it is made)."""
    p = os.fspath(path)
    for other in protect:
        if other is not None and same_file(p, other):
            raise OutputError(f"{p}: refusing to write over the input file {os.fspath(other)}")
    folder = os.path.dirname(os.path.abspath(p))
    if not os.path.isdir(folder):
        raise OutputError(f"{p}: the folder {folder} does not exist")
    if os.path.isdir(p):
        raise OutputError(f"{p}: is a folder; give a file name")
    fd, tmp = _temporary(folder, os.path.basename(p))
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            try:  # a file written over keeps its permissions
                os.fchmod(fh.fileno(), os.stat(p).st_mode & 0o7777)
            except OSError:  # (none there yet, or not ours to read)
                pass
            if callable(text):
                text(fh)
            else:
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
