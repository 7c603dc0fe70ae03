"""A folder of Parquet chunk files and one metadata file, written as a streamed run goes.

Layout of ``out_dir``:

========================  ==========================================================================
``events-NNNNN.parquet``  the rows of chunk NNNNN (targets ``chunk_rows * NNNNN`` onwards, in
                          catalogue order), one file per chunk, written whole by atomic rename
``run.json``              what the run was: the elements' source (file name, size, SHA-256), the
                          span (UTC), the site, the units of each column, the chunk size, and
                          ``complete`` (false while the run goes on, true with the list of chunk
                          files and their row counts once every chunk is written)
========================  ==========================================================================

An interrupted run therefore leaves only complete chunk files and a ``run.json`` that says
``"complete": false``. A folder that already holds any of these files is refused unless
``force`` is given; then those files (and only those) are removed before the first chunk.
"""

from __future__ import annotations

import json
import os
import re

from ..errors import PeriplanError
from .atomic import atomic_write

METADATA_NAME = "run.json"
_CHUNK_FILE = re.compile(r"^events-\d{5,}\.parquet$")


class ChunkFolderExists(PeriplanError):
    """``out_dir`` already holds a streamed run and ``force`` was not given."""

    def __init__(self, folder: str, found: list[str]):
        shown = ", ".join(found[:3]) + (", ..." if len(found) > 3 else "")
        super().__init__(f"{folder}: already holds a streamed run ({shown})")
        self.folder, self.found = folder, found


def chunk_name(index: int) -> str:
    """File name of chunk ``index`` (0-based)."""
    return f"events-{index:05d}.parquet"


def run_files(out_dir) -> list[str]:
    """Names of the files of a streamed run in ``out_dir`` (empty when none or no folder)."""
    try:
        names = os.listdir(out_dir)
    except (FileNotFoundError, NotADirectoryError):
        return []
    return sorted(n for n in names if n == METADATA_NAME or _CHUNK_FILE.match(n))


def prepare_folder(out_dir, force: bool) -> None:
    """Make ``out_dir`` ready for a run: refuse an earlier run's files, or remove them with ``force``."""
    out_dir = os.fspath(out_dir)
    if os.path.exists(out_dir) and not os.path.isdir(out_dir):
        raise PeriplanError(f"{out_dir}: is a file, not a folder")
    found = run_files(out_dir)
    if found and not force:
        raise ChunkFolderExists(out_dir, found)
    try:
        os.makedirs(out_dir, exist_ok=True)
        for name in found:
            os.unlink(os.path.join(out_dir, name))
    except OSError as exc:
        raise PeriplanError(f"{out_dir}: cannot prepare the folder: {exc.strerror}") from None


def write_chunk(out_dir, index: int, table) -> str:
    """Write ``table`` (a DataFrame) as chunk ``index``; returns the file name. Atomic."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    name = chunk_name(index)
    arrow = pa.Table.from_pandas(table, preserve_index=False)
    with atomic_write(os.path.join(os.fspath(out_dir), name), mode="wb") as fh:
        pq.write_table(arrow, fh)
    return name


def write_metadata(out_dir, metadata: dict) -> None:
    """Write ``run.json`` (atomic), keys sorted, two-space indent."""
    with atomic_write(os.path.join(os.fspath(out_dir), METADATA_NAME)) as fh:
        json.dump(metadata, fh, indent=2, sort_keys=True)
        fh.write("\n")
