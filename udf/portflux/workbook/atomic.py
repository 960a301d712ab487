"""Write a file atomically: a temporary file in the target folder, flushed, then renamed."""

from __future__ import annotations

import os
import tempfile

__all__ = ["write_atomically"]


def write_atomically(out_path: str, write) -> None:
    """Call ``write(binary_file)`` on a temporary file beside ``out_path``, then rename it.

    The temporary file is synced to disk before :func:`os.replace` moves it into place, so a
    reader sees either the previous file or the whole new one; on any failure it is removed and
    the previous file is left as it was.
    """
    out_dir = os.path.dirname(os.path.abspath(out_path))
    fd, tmp = tempfile.mkstemp(dir=out_dir, prefix="." + os.path.basename(out_path) + ".",
                               suffix=".tmp")
    try:
        with os.fdopen(fd, "wb") as raw:
            write(raw)
            raw.flush()
            os.fsync(raw.fileno())
        os.replace(tmp, out_path)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
        raise
