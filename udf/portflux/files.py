"""Writing files so that nothing is lost: a new file appears whole or not at all.

>>> import os, tempfile
>>> d = tempfile.mkdtemp()
>>> with atomic_path(os.path.join(d, "a.txt")) as tmp:
...     _ = open(tmp, "w").write("done")
>>> open(os.path.join(d, "a.txt")).read(), sorted(os.listdir(d))
('done', ['a.txt'])
"""

from __future__ import annotations

import contextlib
import os
import tempfile


@contextlib.contextmanager
def atomic_path(path, suffix: str = ".tmp"):
    """Yield a temporary path in ``path``'s folder; rename it onto ``path`` when the block ends
    normally, delete it when the block fails (an earlier file at ``path`` is then kept)."""
    path = os.fspath(path)
    folder = os.path.dirname(os.path.abspath(path))
    fd, tmp = tempfile.mkstemp(dir=folder, prefix="." + os.path.basename(path) + ".",
                               suffix=suffix)
    os.close(fd)
    try:
        yield tmp
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise
