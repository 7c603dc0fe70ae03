"""The plan folder: file names for any target name, all-or-nothing writes, --force, file modes."""

import os
import stat

import pytest

from conftest import REPO, SAMPLE_TARGETS
from planner import cli

SITE = REPO / "sample_targets" / "site.toml"
START = "2026-12-07"


def _plan(catalogue, out, *extra):
    return ["plan", str(catalogue), "--site", str(SITE), "--start", START, "--out", str(out), *extra]


@pytest.mark.parametrize("umask", [0o022, 0o027])
def test_plan_files_get_the_mode_open_gives_under_the_umask(tmp_path, capsys, umask):
    # Reference: the mode the operating system gives a file made by Python's own open() under
    # the same umask (POSIX open(2): mode 0666 & ~umask).
    old = os.umask(umask)
    try:
        out = tmp_path / "week"
        assert cli.main(_plan(SAMPLE_TARGETS, out, "--nights", "1")) == 0
        with open(tmp_path / "reference.txt", "w") as fh:
            fh.write("x")
    finally:
        os.umask(old)
    expected = stat.S_IMODE(os.stat(tmp_path / "reference.txt").st_mode)
    assert expected == 0o666 & ~umask
    modes = {n: stat.S_IMODE(os.stat(out / n).st_mode) for n in os.listdir(out)}
    assert modes and all(m == expected for m in modes.values()), modes
