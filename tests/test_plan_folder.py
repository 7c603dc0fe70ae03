"""The plan folder: file names for any target name, all-or-nothing writes, --force, file modes."""

import os
import stat
import unicodedata

import pytest

from conftest import REPO, SAMPLE_TARGETS
from planner import cli
from planner.outputs import charts, file_names, plan_folder

SITE = REPO / "sample_targets" / "site.toml"
START = "2026-12-07"
#: Invented names (like every demo target) whose plain-ASCII file names would clash or vanish:
#: '/' and '_' both become '_', and a name of Nordic letters would lose all but its ASCII ones.
CLASHING = ("Lantisca 4/b", "Lantisca 4_b")
NORDIC = unicodedata.normalize("NFD", "Ågerlyn Ørnesø c")  # decomposed, as some systems store it
NORDIC_PART = unicodedata.normalize("NFC", "Ågerlyn_Ørnesø_c")


def disk_full(path, *args, **kwargs):
    """A chart writer that fails as on a full disk (module level: the workers must pickle it)."""
    raise OSError(28, "No space left on device", os.fspath(path))


def no_permission(path, *args, **kwargs):
    """A chart writer that fails as in a folder the user may not write."""
    raise OSError(13, "Permission denied", os.fspath(path))


def _catalogue(tmp_path):
    """The demo catalogue plus three copies of its RV target under the names above."""
    lines = SAMPLE_TARGETS.read_text(encoding="utf-8").splitlines()
    rv_row = next(ln for ln in lines if ln.startswith("Lantisca-4,"))
    extra = [name + rv_row[len("Lantisca-4"):] for name in (*CLASHING, NORDIC)]
    path = tmp_path / "targets.csv"
    path.write_text("\n".join(lines + extra) + "\n", encoding="utf-8")
    return path


def _plan(catalogue, out, *extra):
    return ["plan", str(catalogue), "--site", str(SITE), "--start", START, "--out", str(out), *extra]


def _snapshot(folder):
    """Every file of ``folder`` with its bytes (hidden ones included)."""
    return {n: (folder / n).read_bytes() for n in sorted(os.listdir(folder))}


def test_file_parts_keep_unicode_letters_in_nfc():
    # The Unicode Standard, Annex #15 (Normalization Forms): NFC composes A + combining ring
    # above (U+030A) into U+00C5; the file name is the composed form, whatever form the
    # catalogue used. U+00D8 has no decomposition and is kept as it is.
    part = file_names.file_part(NORDIC)
    assert part == NORDIC_PART and "\u00c5" in part and "\u00d8" in part
    assert NORDIC != NORDIC_PART.replace("_", " ")
    # separators and characters refused by common file systems are replaced, never kept
    assert file_names.file_part('a/b\\c:d*e?f"g<h>i|j k\tl') == "a_b_c_d_e_f_g_h_i_j_k_l"
    assert file_names.file_part("../..") == "target"


def test_ascii_names_get_the_parts_of_the_unicode_categories():
    # ASCII names take a shortcut (one regular expression); the rule is Python's unicodedata
    # categories L, M, N plus '-', '_', '.' (Unicode Standard, ch. 4.5, General Category)
    import unicodedata

    for code in range(128):
        c = chr(code)
        kept = c in "-_." or unicodedata.category(c)[0] in "LMN"
        assert file_names.file_part(f"a{c}b") == (f"a{c}b" if kept else "a_b"), repr(c)


def test_clashing_names_get_distinct_stable_suffixes_only_when_they_clash():
    parts = file_names.unique_file_parts([*CLASHING, "Varda-7 b", "VARDA-7 B"])
    assert len({p.casefold() for p in parts.values()}) == 4  # distinct even on case-blind file systems
    for name in CLASHING:
        assert parts[name] == f"Lantisca_4_b-{file_names.name_suffix(name)}"
    assert len(file_names.name_suffix("x")) == file_names.SUFFIX_HEX
    # the suffix depends on the name alone, not on the order or company it comes in
    again = file_names.unique_file_parts(["VARDA-7 B", CLASHING[1], "Varda-7 b", CLASHING[0]])
    assert again == parts
    # a name that clashes with nothing keeps its plain part
    assert file_names.unique_file_parts(["Corrie-2 b"]) == {"Corrie-2 b": "Corrie-2_b"}


def test_clashing_and_nordic_names_each_get_their_own_chart(tmp_path, capsys):
    out = tmp_path / "week"
    code = cli.main(_plan(_catalogue(tmp_path), out, "--nights", "2"))
    _, err = capsys.readouterr()
    assert code == 0, err
    rv = sorted(n for n in os.listdir(out) if n.startswith("rv-"))
    expected = {f"rv-Lantisca_4_b-{file_names.name_suffix(n)}.png" for n in CLASHING}
    expected.add(f"rv-{NORDIC_PART}.png")
    assert expected <= set(rv), rv
    for name in rv:
        assert (out / name).read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_failed_write_leaves_the_previous_plan_as_it_was(tmp_path, monkeypatch, capsys):
    catalogue, out = _catalogue(tmp_path), tmp_path / "week"
    assert cli.main(_plan(SAMPLE_TARGETS, out, "--nights", "3")) == 0
    (out / "my-notes.txt").write_text("observer's own file\n")
    before = _snapshot(out)
    capsys.readouterr()
    monkeypatch.setattr(charts, "write_rv_chart", disk_full)
    code = cli.main(_plan(catalogue, out, "--nights", "2", "--force"))
    _, err = capsys.readouterr()
    assert code == 2
    assert len(err.strip().splitlines()) == 1 and "No space left on device" in err
    assert "Traceback" not in err
    assert _snapshot(out) == before


def test_failure_while_moving_files_into_place_restores_the_folder(tmp_path, monkeypatch, capsys):
    out = tmp_path / "week"
    assert cli.main(_plan(SAMPLE_TARGETS, out, "--nights", "3")) == 0
    before = _snapshot(out)
    real_replace, calls = os.replace, []

    def fail_on_fifth_move(src, dst):  # the fifth file moved from staging into the folder
        staged = ".periplan-" in os.fspath(src) and ".periplan-old-" not in os.fspath(src)
        if os.path.dirname(os.fspath(dst)) == str(out) and staged:
            calls.append(dst)
            if len(calls) == 5:
                raise OSError(5, "Input/output error", os.fspath(dst))
        return real_replace(src, dst)

    monkeypatch.setattr(os, "replace", fail_on_fifth_move)
    code = cli.main(_plan(SAMPLE_TARGETS, out, "--nights", "2", "--force"))
    _, err = capsys.readouterr()
    monkeypatch.undo()
    assert code == 2 and "Input/output error" in err and len(calls) == 5
    assert _snapshot(out) == before


def test_failed_first_write_leaves_no_folder(tmp_path, monkeypatch, capsys):
    monkeypatch.setattr(charts, "write_week_chart", no_permission)
    out = tmp_path / "new"
    assert cli.main(_plan(SAMPLE_TARGETS, out, "--nights", "1")) == 2
    assert not out.exists()


def test_forced_run_holds_exactly_the_new_plan_and_keeps_other_files(tmp_path, capsys):
    out = tmp_path / "week"
    assert cli.main(_plan(SAMPLE_TARGETS, out, "--nights", "4")) == 0
    four = set(os.listdir(out))
    (out / "my-notes.txt").write_text("observer's own file\n")
    (out / "night-2026-12-31.txt").write_text("an observer's file with a plan-like name\n")
    assert cli.main(_plan(SAMPLE_TARGETS, out, "--nights", "2", "--force")) == 0
    capsys.readouterr()
    listed = plan_folder.manifest_names(out)
    assert set(os.listdir(out)) == set(listed) | {plan_folder.MANIFEST_NAME, "my-notes.txt", "night-2026-12-31.txt"}
    assert {"night-2026-12-07.txt", "night-2026-12-08.html"} <= set(listed)
    assert not {"night-2026-12-09.txt", "night-2026-12-10.html", "altitude-2026-12-10.png"} & set(os.listdir(out))
    assert "night-2026-12-10.txt" in four  # the 4-night plan did write them
    # a fresh 2-night plan writes the same file names
    fresh = tmp_path / "fresh"
    assert cli.main(_plan(SAMPLE_TARGETS, fresh, "--nights", "2")) == 0
    assert set(os.listdir(fresh)) == set(os.listdir(out)) - {"my-notes.txt", "night-2026-12-31.txt"}


def test_manifest_lines_that_are_not_plan_files_are_ignored(tmp_path, capsys):
    out = tmp_path / "week"
    assert cli.main(_plan(SAMPLE_TARGETS, out, "--nights", "1")) == 0
    (out / "keep.txt").write_text("mine\n")
    (tmp_path / "outside.png").write_text("not in the folder\n")
    with open(out / plan_folder.MANIFEST_NAME, "a", encoding="utf-8") as fh:
        fh.write("keep.txt\n../outside.png\n.hidden\n")
    assert cli.main(_plan(SAMPLE_TARGETS, out, "--nights", "1", "--force")) == 0
    assert (out / "keep.txt").exists() and (tmp_path / "outside.png").exists()


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


def test_text_tables_are_written_as_the_csv_module_writes_them(monkeypatch):
    """A table of text columns is joined by Arrow (the unscheduled requests of a survey); the text
    must be what Python's csv module writes (minimal quoting: a field holding a comma, a quote
    or a line break is quoted, its quotes doubled; a missing value is empty)."""
    import csv
    import io

    import pandas as pd

    from planner.outputs import tables
    from planner.outputs.tables import render

    monkeypatch.setattr(tables, "CSV_CHUNK_ROWS", 3)  # rows joined 3 at a time: chunks meet mid-table
    rows = [["x", "1", 1.5], ["", None, None], ['say "hi"', "3", 2.0], ["a,b", "4", 3.25], ["two\nlines", "5", 4.0],
            ["Ω Vel-é", "6", 0.0], ["cr\rlf", "", -0.0]]  # -0.0 formats as "-0.0", not as 0.0 does
    table = pd.DataFrame(rows, columns=["name", "note", "value"]).astype({"note": object})
    expected = io.StringIO()
    writer = csv.writer(expected, lineterminator="\n")
    writer.writerow(table.columns)
    writer.writerows([n, note, "" if v is None or v != v else format(v, ".1f")] for n, note, v in rows)
    got = render(table, "csv", {"value": ".1f"})
    assert got == expected.getvalue()
    assert got.splitlines()[4] == '"a,b",4,3.2'  # format(3.25, ".1f"): round half to even
