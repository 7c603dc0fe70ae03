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


def test_ci_installs_the_browser_test_tools_on_a_fresh_machine():
    # tests/test_browser.py fails (not skips) under CI=true without them, so .ci/run must bring them
    script = (REPO / ".ci" / "run").read_text()
    assert "apt-get update" in script and script.index("apt-get update") < script.index("apt-get install")
    assert re.search(r"apt-get install .*chromium .*poppler-utils", script)
