"""Malformed inputs: each gives one clear line per problem naming file, row and column, exit 2,
no traceback, and nothing on stdout. The corpus lives in tests/data/bad_*/."""

import subprocess
import sys

import pytest

from conftest import REPO
from planner import cli

BAD_CATALOGUES = REPO / "tests" / "data" / "bad_catalogues"
BAD_SITES = REPO / "tests" / "data" / "bad_sites"

#: file -> (row, column, what the message must say); row/column None where the file has none.
CATALOGUE_EXPECTED = {
    "empty.csv": (None, None, "empty catalogue; expected a header row"),
    "only_comments.csv": (None, None, "empty catalogue"),
    "binary_junk.csv": (None, None, "not a text file"),
    "latin1_text.csv": (None, None, "not UTF-8 text"),
    "missing_name_column.csv": (1, "name", "missing required column 'name'"),
    "missing_epoch_column.csv": (1, "tp", "missing epoch column"),
    "missing_period_column.csv": (1, "period_d", "missing column 'period_d'"),
    "unknown_column.csv": (1, "perod_d", "did you mean 'period_d'?"),
    "duplicate_header_column.csv": (1, "e", "appears twice in the header"),
    "eccentricity_one.csv": (3, "e", "1 is not a bound orbit; eccentricity must satisfy 0 <= e < 1"),
    "eccentricity_negative.csv": (2, "e", "-0.2 is not a bound orbit"),
    "period_negative.csv": (2, "period_d", "-3.5 must be positive"),
    "period_zero.csv": (2, "period_d", "0 must be positive"),
    "period_text.csv": (2, "period_d", "'three' is not a number"),
    "period_nan.csv": (2, "period_d", "'nan' is not a number"),
    "swapped_ra_dec.csv": (2, "dec", "200.1 is outside -90..+90 deg"),
    "ra_out_of_range.csv": (2, "ra", "400 is outside 0 <= ra < 360 deg"),
    "ra_sexagesimal_typo.csv": (2, "ra", "'12:7x:00' is not a right ascension"),
    "ra_minutes_sixty.csv": (2, "ra", "minutes and seconds must be below 60"),
    "ra_hours_signed.csv": (2, "ra", "a right ascension in hours has no sign"),
    "dec_beyond_pole.csv": (2, "dec", "+95:00:00 is outside -90..+90 deg"),
    "dec_text.csv": (2, "dec", "'north' is not a declination"),
    "unknown_time_system.csv": (2, "time_system", "unknown time system 'BJD_UTC'; expected one of"),
    "reduced_jd_no_offset.csv": (2, "tc", "looks like a reduced Julian date; give the offset in column time_offset_d"),
    "implausible_epoch_after_offset.csv": (2, "tc", "is not a plausible Julian date"),
    "duplicate_names.csv": (3, "name", "duplicate target name 'Good-1' (first at row 2)"),
    "missing_omega.csv": (2, "omega_deg", "required when e > 0"),
    "missing_epoch_value.csv": (2, "tc", "missing epoch"),
    # tp with tc is allowed since issue 14 (two epochs), but only with both 1-sigma errors
    "two_epochs.csv": (2, "tp_err_d", "two epochs need both 1-sigma errors"),
    "epochs_inconsistent.csv": (2, "tp", "h earlier than the first epoch and e/omega put it"),
    "omega_dot_no_unit.csv": (1, "omega_dot", "omega_dot has no unit"),
    "period_kind_unknown.csv": (2, "period_kind", "expected 'sidereal' or 'anomalistic'"),
    "shape_both_parametrisations.csv": (2, "ecosw", "both e/omega_deg and ecosw/esinw are given"),
    "ecosw_without_esinw.csv": (2, "esinw", "come as a pair"),
    "third_body_e3_one.csv": (2, "e3", "1 is not a bound orbit"),
    "unknown_event.csv": (2, "events", "unknown event 'ingress'"),
    "too_many_fields.csv": (2, None, "8 fields but the header has 7"),
    "negative_uncertainty.csv": (2, "period_err_d", "must not be negative"),
    "omega_of_unknown.csv": (2, "omega_of", "expected 'primary' or 'companion'"),
    "priority_zero.csv": (2, "priority", "0 must be positive"),
    "a_rstar_inside_star.csv": (2, "a_rstar", "a/R* must exceed 1"),
    "inclination_and_impact.csv": (2, "b", "give either inc_deg or b, not both"),
    "empty_name.csv": (2, "name", "empty target name"),
    "tp_on_linear_ephemeris.csv": (2, "tp", "needs e and omega_deg"),
    "decimal_comma.csv": (2, "period_d", "'3,25' is not a number (a decimal comma?"),
    "period_without_unit.csv": (1, "period", "needs its unit: did you mean 'period_d'?"),
    "reserved_column_name.csv": (1, "ra_deg", "is a name periplan gives to a column it computes"),
    "quoted_note_then_bad_row.csv": (3, "e", "1.5 is not a bound orbit"),  # the note is one row
    "period_unit_of_length.ecsv": (None, None, "column 'period' has unit 'm' (length); period_d needs time"),
    "eccentricity_one.ecsv": (2, "e", "1.02 is not a bound orbit"),  # the second data row
    "unclosed_quote.csv": (3, None, 'not readable as CSV: a quote (") opened in this row is never closed'),
    "text_after_closing_quote.csv": (2, None, "text follows a closing quote"),
    "observe_unknown_word.csv": (2, "observe", "unknown observation 'spectroscopy'; expected photometry, rv"),
    "observe_unknown_in_list.csv": (2, "observe", "unknown observation 'imaging'"),
    "visit_length_negative.csv": (2, "visit_h", "-0.5 must be positive"),
    "rv_fraction_above_one.csv": (2, "rv_fraction_k", "1.5 is outside 0 < fraction <= 1"),
    "rv_fraction_negative.csv": (2, "rv_fraction_k", "-0.1 is outside 0 < fraction <= 1"),
    "rv_visits_fractional.csv": (2, "rv_visits", "2.5 is not a whole number of visits >= 1"),
    "full_coverage_not_yes_no.csv": (2, "full_coverage", "'maybe' is not yes or no"),
    "rv_phases_not_a_number.csv": (2, "rv_phases", "'half' is not an orbital phase"),
    "rv_phase_outside_range.csv": (3, "rv_phases", "1.25 is outside 0 <= phase < 1"),
    "rv_phase_tol_too_wide.csv": (2, "rv_phase_tol", "0.6 is outside 0 < tolerance < 0.5"),
    "rv_phases_linear_ephemeris.csv": (2, "rv_phases", "wanted orbital phases need an orbit with a periastron"),
}


#: site file -> (key, what the message must say)
SITE_EXPECTED = {
    "latitude_beyond_pole.toml": ("latitude_deg", "95 is out of range; expected a latitude in degrees"),
    "latitude_text.toml": ("latitude_deg", "'north' is not a number"),
    "unknown_timezone.toml": ("timezone", "unknown time zone 'Europe/Atlantis'"),
    "missing_timezone.toml": ("timezone", "missing required key"),
    "missing_name.toml": ("name", "missing required key"),
    "min_altitude_too_high.toml": ("min_altitude_deg", "95 is out of range"),
    "min_altitude_too_low.toml": ("min_altitude_deg", "-10 is out of range"),
    "horizon_out_of_order.toml": ("horizon", "horizon point [90, 20] comes after azimuth 180"),
    "horizon_not_pairs.toml": ("horizon", "malformed horizon profile"),
    "horizon_altitude_beyond_zenith.toml": ("horizon", "horizon point [90, 95] is out of range"),
    "darkness_unknown_name.toml": ("darkness", "'pitch black' is not a darkness"),
    "unknown_key.toml": ("min_altitud_deg", "did you mean 'min_altitude_deg'?"),
    "not_toml.toml": (None, "not valid TOML"),
    "empty.toml": ("name", "missing required key"),
    "max_airmass_below_one.toml": ("max_airmass", "0.8 is out of range"),
    "binary_junk.toml": (None, "not a text file (contains NUL bytes)"),
}


def test_corpus_is_complete():
    on_disk = {p.name for p in BAD_CATALOGUES.iterdir()}
    assert on_disk == set(CATALOGUE_EXPECTED)
    assert {p.name for p in BAD_SITES.iterdir()} == set(SITE_EXPECTED)
    assert len(on_disk) + len(SITE_EXPECTED) >= 30


@pytest.mark.parametrize("name", sorted(SITE_EXPECTED))
def test_bad_site(name, tmp_path, capsys):
    key, text = SITE_EXPECTED[name]
    out = tmp_path / "plan"
    code = cli.main(["plan", str(REPO / "sample_targets" / "targets.csv"), "--site", str(BAD_SITES / name),
                     "--start", "2026-12-07", "--nights", "1", "--out", str(out)])
    stdout, err = capsys.readouterr()
    assert code == 2 and stdout == "" and not out.exists()
    lines = err.strip().splitlines()
    where = f"periplan: error: {name}" + (f", key {key}:" if key else ":")
    assert any(line.startswith(where) and text in line for line in lines), lines


@pytest.mark.parametrize("name", sorted(CATALOGUE_EXPECTED))
def test_bad_catalogue(name, capsys):
    row, column, text = CATALOGUE_EXPECTED[name]
    code = cli.main(["events", str(BAD_CATALOGUES / name), "--start", "2026-12-07", "--days", "3"])
    out, err = capsys.readouterr()
    assert code == 2 and out == ""
    lines = err.strip().splitlines()
    prefix = f"periplan: error: {name}"
    assert all(line.startswith(prefix) for line in lines)
    where = prefix + (f", row {row}" if row else "") + (f", column {column}" if column else "") + ":"
    hits = [line for line in lines if line.startswith(where) and text in line]
    assert hits, f"expected a line starting {where!r} containing {text!r}; got {lines}"


def test_every_bad_row_in_one_run(tmp_path):
    # one file, many problems: all reported, in file order, by a real process without traceback
    text = "name,ra,dec,period_d,e,omega_deg,tc\n" + "".join(
        f"T{i},10,20,{-i},0.1,45,2460000.5\n" for i in range(1, 41))
    path = tmp_path / "many.csv"
    path.write_text(text)
    proc = subprocess.run([sys.executable, "-m", "planner", "events", str(path), "--start", "2026-12-07"],
                          capture_output=True, text=True, cwd=REPO)
    assert proc.returncode == 2 and "Traceback" not in proc.stderr
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 40
    assert [int(ln.split("row ")[1].split(",")[0]) for ln in lines] == list(range(2, 42))


def test_bad_catalogue_stops_plan_before_anything_is_written(tmp_path, capsys):
    for name in sorted(CATALOGUE_EXPECTED):
        out = tmp_path / name
        code = cli.main(["plan", str(BAD_CATALOGUES / name), "--site", str(REPO / "sample_targets" / "site.toml"),
                         "--start", "2026-12-07", "--nights", "1", "--out", str(out)])
        _, err = capsys.readouterr()
        assert code == 2 and err.startswith(f"periplan: error: {name}"), (name, err)
        assert not out.exists(), name


def test_linear_row_with_tp_and_tc_gets_only_the_epoch_messages():
    # a linear ephemeris (no e, omega) cannot hold two epochs; the refusal names the epochs and
    # does not also ask for errors that are there
    from planner.errors import InputErrors
    from planner.inputs import catalogue

    with pytest.raises(InputErrors) as err:
        catalogue.parse_catalogue("name,ra,dec,period_d,tc,tc_err_d,tp,tp_err_d\n"
                                  "X,10,20,3.1,2455000.5,0.01,2455000.1,0.02\n", source="lin.csv")
    text = str(err.value)
    assert "lin.csv, row 2, column tc: more than one epoch given" in text
    assert "lin.csv, row 2, column tp: tp (periastron) needs e and omega_deg" in text
    assert "1-sigma errors" not in text
