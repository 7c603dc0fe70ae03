"""The package layout: imports run one way down the pipeline, and only the command line knows options.

Stages in the order data flows (DEVELOPERS.md, "Layout"): timescales -> orbits -> inputs -> sky
-> scheduling -> outputs; the pipeline module, the API and the command line sit on top. A module
may import its own stage and the stages before it, never one after; the foundation modules
(errors, numerics) may be imported by anyone and import no stage.
"""

import ast
import pathlib

import pytest

PACKAGE = pathlib.Path(__file__).resolve().parents[1] / "planner"
FOUNDATION = {"errors", "numerics"}
RANK = {"timescales": 0, "orbits": 1, "inputs": 2, "sky": 3, "scheduling": 4, "outputs": 5,
        "pipeline": 6, "api": 6, "survey": 6, "cli": 7, "__init__": 7, "__main__": 7}


def module_name(path: pathlib.Path) -> str:
    parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
    if parts[-1] == "__init__" and len(parts) > 1:
        parts = parts[:-1]
    return ".".join(parts)


def stage(module: str) -> str:
    """The stage a dotted name belongs to; a name defined in planner/__init__ counts as the top."""
    parts = module.split(".")
    return parts[1] if len(parts) > 1 and (parts[1] in RANK or parts[1] in FOUNDATION) else "__init__"


def imports_of(path: pathlib.Path):
    """(line, imported module) of every import of planner in a file, TYPE_CHECKING blocks aside."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    package = module_name(path) if path.name == "__init__.py" else module_name(path).rpartition(".")[0]
    skip = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.If) and "TYPE_CHECKING" in ast.unparse(node.test):
            skip.update(id(n) for n in ast.walk(node))
    for node in ast.walk(tree):
        if id(node) in skip:
            continue
        if isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name.startswith("planner"):
                    yield node.lineno, alias.name
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[:len(base) - node.level + 1]
                target = ".".join(base + ([node.module] if node.module else []))
            elif node.module and node.module.startswith("planner"):
                target = node.module
            else:
                continue
            names = [target] if node.module else [f"{target}.{a.name}" for a in node.names]
            for name in names:
                yield node.lineno, name


def violations():
    found = []
    for path in sorted(PACKAGE.rglob("*.py")):
        here = stage(module_name(path))
        for line, target in imports_of(path):
            there = stage(target)
            where = f"{path.relative_to(PACKAGE.parent)}:{line} imports {target}"
            if there in FOUNDATION:
                continue
            if here in FOUNDATION:
                found.append(f"{where}: a foundation module imports no stage")
            elif RANK[there] > RANK[here]:
                found.append(f"{where}: {here} may not import {there}, a later stage")
    return found


def test_no_module_imports_against_the_flow():
    assert violations() == []


def test_the_graph_reader_sees_a_backward_import(tmp_path, monkeypatch):
    # the check must be able to fail: a sky module importing the scheduler is reported by name
    fake = tmp_path / "planner"
    (fake / "sky").mkdir(parents=True)
    (fake / "sky" / "bad.py").write_text("from ..scheduling.schedule import plan_week\n")
    (fake / "timescales").mkdir()
    (fake / "timescales" / "ok.py").write_text("from ..errors import PeriplanError\nfrom . import clock\n")
    monkeypatch.setattr(__import__(__name__), "PACKAGE", fake)
    assert violations() == ["planner/sky/bad.py:1 imports planner.scheduling.schedule: "
                            "sky may not import scheduling, a later stage"]


@pytest.mark.parametrize("path", sorted(p for p in PACKAGE.rglob("*.py") if "cli" not in p.parts),
                         ids=lambda p: str(p.relative_to(PACKAGE)))
def test_library_code_names_no_command_line_option(path):
    # option names (--start, --out) belong to the command layer, which adds them to messages
    strings = [n.value for n in ast.walk(ast.parse(path.read_text(encoding="utf-8")))
               if isinstance(n, ast.Constant) and isinstance(n.value, str)]
    assert [s for s in strings if "--" in s and any(f"--{c}" in s for c in "abcdefghijklmnopqrstuvwxyz")] == []


def test_every_stage_is_a_package_with_a_docstring():
    for name in ("timescales", "orbits", "inputs", "sky", "scheduling", "outputs", "cli"):
        init = PACKAGE / name / "__init__.py"
        assert ast.get_docstring(ast.parse(init.read_text(encoding="utf-8"))), name


def test_public_api_names_resolve():
    import planner

    for name in planner.__all__:
        assert getattr(planner, name) is not None, name
