"""Atomic file writes: a reader never sees a half-written file.

:func:`atomic_write` writes to a temporary file in the destination folder and renames it into
place, so an interrupted run leaves the previous file intact. Only the output modules write files.
"""

from __future__ import annotations

import contextlib
import os
import tempfile

@contextlib.contextmanager
def atomic_write(path, mode="w", encoding="utf-8", force=True):
    """Open a temporary file beside ``path``; on success rename it to ``path``, else delete it.

    With ``force=False`` an existing ``path`` raises ``FileExistsError`` before anything is written.
    """
    path = os.fspath(path)
    if not force and os.path.exists(path):
        raise FileExistsError(path)
    folder = os.path.dirname(os.path.abspath(path))
    fd, tmp = tempfile.mkstemp(prefix=".periplan-", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, mode, **({} if "b" in mode else {"encoding": encoding, "newline": ""})) as fh:
            yield fh
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise
