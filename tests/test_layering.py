"""The house rules (STYLE.md): physics imports no GUI library, one installable package named porefill, every
subpackage on disk is one the wheel ships, and no room imports another in a circle."""
from __future__ import annotations

import ast
import subprocess
import sys
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _modules(folder: str) -> list[str]:
    base = ROOT / folder
    out = []
    for p in sorted(base.rglob("*.py")):
        rel = p.relative_to(base).with_suffix("")
        parts = [x for x in rel.parts if x != "__init__"]
        out.append(".".join(["porefill", folder, *parts]))
    return out


def test_no_physics_module_imports_the_dashboard():
    modules = _modules("physics")
    assert len(modules) >= 28                        # every module of the floor, not a hand-picked few
    code = (f"import sys, importlib; [importlib.import_module(m) for m in {modules!r}]; "
            "print(sorted(m for m in ('panel', 'holoviews', 'bokeh', 'porefill.explorer', 'param', 'tornado') "
            "if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"


def test_every_package_folder_is_shipped_under_porefill():
    config = tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]
    shipped = set(config["packages"])
    on_disk = {m for folder in ("physics", "explorer") for m in _modules(folder)
               if (ROOT / Path(*m.split(".")[1:]) / "__init__.py").exists()}
    assert on_disk | {"porefill.scenarios"} == shipped         # scenarios/: data files only
    assert all(name.startswith("porefill.") for name in shipped)      # nothing generic at the top of site-packages


def _imports(path: Path, module: str) -> set[str]:
    """porefill modules that ``path`` imports at module level (function-level imports are deferred)."""
    out = set()
    for node in ast.parse(path.read_text()).body:
        if isinstance(node, ast.ImportFrom) and node.module and node.module.startswith("porefill."):
            out.add(node.module)
            out.update(f"{node.module}.{a.name}" for a in node.names)
        elif isinstance(node, ast.Import):
            out.update(a.name for a in node.names if a.name.startswith("porefill."))
    return out


def test_no_import_circles_between_modules():
    graph = {}
    for folder in ("physics", "explorer"):
        for module in _modules(folder):
            rel = Path(*module.split(".")[1:])
            path = ROOT / rel / "__init__.py" if (ROOT / rel).is_dir() else (ROOT / rel).with_suffix(".py")
            graph[module] = _imports(path, module) & set(_modules("physics") + _modules("explorer"))
    state: dict[str, int] = {}

    def visit(node, trail):
        state[node] = 1
        for nxt in graph.get(node, ()):
            if state.get(nxt) == 1:
                raise AssertionError("import circle: " + " -> ".join(trail + [node, nxt]))
            if nxt not in state:
                visit(nxt, trail + [node])
        state[node] = 2

    for node in graph:
        if node not in state:
            visit(node, [])


def test_physics_modules_stay_small():
    # STYLE.md: a module that passes ~500 lines is asking to be split (common practice, no source)
    big = {str(p.relative_to(ROOT)): n for p in (ROOT / "physics").rglob("*.py")
           if (n := len(p.read_text().splitlines())) > 500}
    assert not big
