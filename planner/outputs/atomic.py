"""Atomic file writes: a reader never sees a half-written file.

:func:`atomic_write` writes to a temporary file in the destination folder and renames it into
place, so an interrupted run leaves the previous file intact. The file gets the mode an ordinary
``open(path, "w")`` would give it (0666 less the user's umask, so 0644 under the usual umask 022),
not the 0600 of the temporary file. Only the output modules write files.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
import threading

_UMASK_LOCK = threading.Lock()


def current_umask() -> int:
    """The process's file-mode creation mask (e.g. 0o022).

    Read from ``/proc/self/status`` where the system has it (Linux 4.7 and later), else by
    setting and restoring the mask under a lock.
    """
    with contextlib.suppress(OSError, ValueError):
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("Umask:"):
                    return int(line.split()[1], 8)
    with _UMASK_LOCK:
        mask = os.umask(0o022)
        os.umask(mask)
    return mask


def default_file_mode() -> int:
    """Permission bits of a newly created regular file: 0o666 without the umask's bits."""
    return 0o666 & ~current_umask()


@contextlib.contextmanager
def atomic_write(path, mode="w", encoding="utf-8", force=True):
    """Open a temporary file beside ``path``; on success rename it to ``path``, else delete it.

    With ``force=False`` an existing ``path`` raises ``FileExistsError`` before anything is written.
    The file ends with :func:`default_file_mode` permissions.
    """
    path = os.fspath(path)
    if not force and os.path.exists(path):
        raise FileExistsError(path)
    folder = os.path.dirname(os.path.abspath(path))
    fd, tmp = tempfile.mkstemp(prefix=".periplan-", suffix=".tmp", dir=folder)
    try:
        if hasattr(os, "fchmod"):  # mkstemp makes it 0600
            os.fchmod(fd, default_file_mode())
        else:
            os.chmod(tmp, default_file_mode())
        with os.fdopen(fd, mode, **({} if "b" in mode else {"encoding": encoding, "newline": ""})) as fh:
            yield fh
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise
