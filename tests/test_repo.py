"""The repository's own promises: CI runs the README's test command; no machine paths."""

import re
import subprocess

from conftest import REPO


def readme_test_command():
    lines = (REPO / "README.md").read_text().splitlines()
    i = lines.index("<!-- test-command -->")
    return next(ln for ln in lines[i + 1:] if ln and not ln.startswith("```"))


def test_ci_runs_the_readme_test_command():
    # .ci/run extracts the command after the marker; check that its extraction gives the same line.
    script = (REPO / ".ci" / "run").read_text()
    awk = re.search(r"cmd=\$\((awk .*) README.md\)", script).group(1)
    got = subprocess.run(["bash", "-c", f"{awk} README.md"], capture_output=True, text=True, cwd=REPO).stdout.strip()
    assert got == readme_test_command()
    assert "pytest" in got and ".[test]" in got


def test_readme_states_the_safety_caution():
    text = (REPO / "README.md").read_text()
    assert "Never point a telescope at or near the Sun" in text
    assert "local regulations" in text


def test_readme_accuracy_claims_are_the_tolerances_of_the_tests_it_names():
    # The guarantee table names test_night, test_visibility and test_windows for these numbers;
    # their tolerances must be the promise, not looser.
    import test_night
    import test_visibility
    import test_windows

    text = (REPO / "README.md").read_text()
    assert "Night times within a second of astroplan" in text
    assert "target altitudes within 1 arcsecond of astropy, the Sun and Moon within 1.5 arcseconds" in text
    rounding = 1e-9  # of an arcsecond: the constants are written as n / 3600
    assert test_night.ASTROPLAN_TOLERANCE_S <= 1.0
    assert test_visibility.ALT_TOLERANCE_DEG * 3600.0 <= 1.0 + rounding
    assert test_windows.EDGE_TOLERANCE_DEG * 3600.0 <= 1.0 + rounding
    assert test_visibility.BODY_TOLERANCE_DEG * 3600.0 <= 1.5 + rounding
