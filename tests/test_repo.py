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


def project_metadata():
    import tomllib

    return tomllib.loads((REPO / "pyproject.toml").read_text())["project"]


def requirement_names(requirements):
    from packaging.requirements import Requirement

    return {Requirement(r).name.lower() for r in requirements}


def test_declared_test_dependencies_are_imported_not_skipped():
    # importorskip on a declared test dependency would make its reference checks vanish
    # silently when it is missing; they must fail instead.
    declared = requirement_names(project_metadata()["optional-dependencies"]["test"])
    skipped = []
    for path in sorted((REPO / "tests").glob("*.py")):
        for module in re.findall(r"importorskip\(\s*['\"]([\w.]+)", path.read_text()):
            if module.split(".")[0].lower() in declared:
                skipped.append(f"{path.name}: {module}")
    assert not skipped


def test_astroplan_is_a_test_and_bench_reference_not_a_dependency():
    import ast

    meta = project_metadata()
    assert "astroplan" not in requirement_names(meta["dependencies"])
    assert "astroplan" in requirement_names(meta["optional-dependencies"]["test"])
    assert {"astroplan", "radvel"} <= requirement_names(meta["optional-dependencies"]["bench"])
    for path in (REPO / "planner").rglob("*.py"):
        for node in ast.walk(ast.parse(path.read_text())):
            names = ([a.name for a in node.names] if isinstance(node, ast.Import)
                     else [node.module or ""] if isinstance(node, ast.ImportFrom) else [])
            assert not [n for n in names if n.split(".")[0] == "astroplan"], path.name


def test_installed_versions_meet_the_declared_floors():
    # The floors in pyproject.toml are the versions the suite was run with; a run on older
    # versions than declared would test something the floors do not promise.
    from importlib.metadata import version

    from packaging.requirements import Requirement
    from packaging.version import Version

    meta = project_metadata()
    requirements = meta["dependencies"] + meta["optional-dependencies"]["test"]
    checked = 0
    for text in requirements:
        req = Requirement(text)
        if req.marker is not None and not req.marker.evaluate():
            continue
        floors = [s.version for s in req.specifier if s.operator == ">="]
        assert floors, f"{req.name} has no version floor"
        assert Version(version(req.name)) >= Version(floors[0]), req.name
        checked += 1
    assert checked >= 15


#: The places a plain ValueError is raised on purpose: the angle parser's and the log's time
#: parser's, which their one caller each catches and reports as an InputError with the cell.
PLAIN_VALUE_ERROR_ALLOWED = {"inputs/catalogue_checks.py", "inputs/observation_log.py"}


def test_the_package_raises_its_own_errors_and_never_swallows_one():
    # Errors a user can meet are PeriplanError subclasses (planner/errors.py), which the command
    # line reports in one line; an `except Exception: pass` or a bare `except:` hides failures.
    import ast

    found = []
    for path in sorted((REPO / "planner").rglob("*.py")):
        rel = path.relative_to(REPO / "planner").as_posix()
        for node in ast.walk(ast.parse(path.read_text())):
            if isinstance(node, ast.Raise) and node.exc is not None:
                exc = node.exc.func if isinstance(node.exc, ast.Call) else node.exc
                name = exc.id if isinstance(exc, ast.Name) else getattr(exc, "attr", "")
                if name in ("ValueError", "TypeError", "Exception") and rel not in PLAIN_VALUE_ERROR_ALLOWED:
                    found.append(f"{rel}:{node.lineno} raise {name}")
            if isinstance(node, ast.ExceptHandler):
                broad = node.type is None or (isinstance(node.type, ast.Name) and node.type.id == "Exception")
                silent = all(isinstance(s, ast.Pass) for s in node.body)
                if node.type is None or (broad and silent):
                    found.append(f"{rel}:{node.lineno} silent or bare except")
    assert not found
