"""The package's layering: cli -> dashboard -> model, no import cycles, every folder installed.

Read from the source with :mod:`ast` (no import runs), so a cycle or a backwards import
fails here even when Python would tolerate it at run time. Imports under
``if TYPE_CHECKING:`` are not counted; imports inside functions are.
"""

from __future__ import annotations

import ast
import tomllib
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
# installed package -> folder in the repository (the package-dir mapping of pyproject.toml)
FOLDERS = {
    "o2transit": ROOT / "o2transit",
    "o2transit.model": ROOT / "model",
    "o2transit.dashboard": ROOT / "dashboard",
}


def _modules() -> dict[str, Path]:
    """Installed dotted name -> source file, for every module of the three packages."""
    out = {}
    for pkg, folder in FOLDERS.items():
        for path in sorted(folder.rglob("*.py")):
            rel = path.relative_to(folder).with_suffix("")
            parts = [p for p in rel.parts if p != "__init__"]
            name = ".".join([pkg, *parts])
            if pkg == "o2transit" and parts and parts[0] in ("model", "dashboard"):
                continue
            out[name] = path
    return out


MODULES = _modules()


def _is_package(name: str) -> bool:
    return MODULES.get(name, Path()).name == "__init__.py"


def _type_checking_lines(tree: ast.Module) -> set[int]:
    lines = set()
    for node in ast.walk(tree):
        if isinstance(node, ast.If) and "TYPE_CHECKING" in ast.unparse(node.test):
            for sub in node.body:
                lines.update(range(sub.lineno, (sub.end_lineno or sub.lineno) + 1))
    return lines


def _imports(name: str) -> set[str]:
    """The project modules that module ``name`` imports (resolved to modules, not names)."""
    tree = ast.parse(MODULES[name].read_text())
    skip = _type_checking_lines(tree)
    package = name if _is_package(name) else name.rpartition(".")[0]
    found = set()
    for node in ast.walk(tree):
        if getattr(node, "lineno", None) in skip:
            continue
        if isinstance(node, ast.Import):
            targets = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[: len(base) - node.level + 1]
                mod = ".".join(base + ([node.module] if node.module else []))
            else:
                mod = node.module or ""
            # "from pkg import sub" imports the submodule when there is one
            targets = [
                f"{mod}.{a.name}" if f"{mod}.{a.name}" in MODULES else mod for a in node.names
            ]
        else:
            continue
        for t in targets:
            while t and t not in MODULES:
                t = t.rpartition(".")[0]
            if t and t != name:
                found.add(t)
    return found


GRAPH = {name: _imports(name) for name in MODULES}


def test_every_module_is_found():
    assert "o2transit.cli" in MODULES and "o2transit.model.transport" in MODULES
    assert "o2transit.dashboard.app" in MODULES


def test_no_import_cycles():
    # Depth-first search; any back edge is a cycle, printed as the path that closes it.
    state: dict[str, int] = {}
    cycles = []

    def visit(node, path):
        state[node] = 1
        for nxt in sorted(GRAPH[node]):
            if state.get(nxt) == 1:
                cycles.append(" -> ".join([*path[path.index(nxt) :], nxt]))
            elif nxt not in state:
                visit(nxt, [*path, nxt])
        state[node] = 2

    for name in sorted(GRAPH):
        if name not in state:
            visit(name, [name])
    assert not cycles, "import cycles:\n" + "\n".join(cycles)


@pytest.mark.parametrize(
    ("layer", "forbidden"),
    [
        ("o2transit.model", ("o2transit.dashboard", "o2transit.cli")),
        ("o2transit.dashboard", ("o2transit.cli",)),
    ],
)
def test_layers_import_only_downwards(layer, forbidden):
    wrong = sorted(
        f"{name} imports {dep}"
        for name, deps in GRAPH.items()
        if name == layer or name.startswith(layer + ".")
        for dep in deps
        if any(dep == f or dep.startswith(f + ".") for f in forbidden)
    )
    assert not wrong, wrong


def test_model_imports_no_panel_or_param():
    # STYLE.md: the model is pure numpy/scipy; Panel, param and Bokeh belong to the dashboard.
    wrong = []
    for name, path in MODULES.items():
        if not name.startswith("o2transit.model"):
            continue
        for node in ast.walk(ast.parse(path.read_text())):
            mods = (
                [a.name for a in node.names]
                if isinstance(node, ast.Import)
                else [node.module or ""]
                if isinstance(node, ast.ImportFrom) and not node.level
                else []
            )
            wrong += [
                f"{name}: {m}" for m in mods if m.split(".")[0] in ("panel", "param", "bokeh")
            ]
    assert not wrong, wrong


def test_every_package_folder_is_installed():
    # A subpackage missing from pyproject's list would be left out of the wheel.
    listed = set(
        tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]["packages"]
    )
    packages = {n for n in MODULES if _is_package(n)}
    assert packages - listed == set(), "add to [tool.setuptools] packages"
