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


def _python_floor():
    import tomllib

    spec = tomllib.loads((REPO / "pyproject.toml").read_text())["project"]["requires-python"]
    major, minor = re.fullmatch(r">=\s*(\d+)\.(\d+)", spec.strip()).groups()
    return int(major), int(minor)


def test_python_floor_has_every_stdlib_module_the_package_imports():
    # tomllib is in the standard library from Python 3.11 on (Python documentation, "tomllib",
    # "Added in version 3.11"); the package imports it without a fallback, so the declared floor
    # must be at least 3.11.
    uses_tomllib = any(re.search(r"^\s*import tomllib|^\s*from tomllib", p.read_text(), re.M)
                       for p in (REPO / "planner").rglob("*.py"))
    assert uses_tomllib
    assert _python_floor() >= (3, 11)


def test_readme_states_the_declared_python_floor():
    major, minor = _python_floor()
    text = (REPO / "README.md").read_text()
    assert f"Python {major}.{minor} or newer" in text
    assert not re.search(r"Python 3\.\d+ or newer", text.replace(f"Python {major}.{minor} or newer", ""))
