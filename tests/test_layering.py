"""The house rule: physics imports no GUI library (STYLE.md)."""
from __future__ import annotations

import subprocess
import sys
from pathlib import Path

PHYSICS = Path(__file__).resolve().parents[1] / "physics"


def test_no_physics_module_imports_the_dashboard():
    modules = sorted(f"physics.{p.stem}" for p in PHYSICS.glob("*.py") if p.stem != "__init__")
    assert len(modules) >= 14                        # every module of the floor, not a hand-picked few
    code = (f"import sys, importlib; [importlib.import_module(m) for m in {modules!r}]; "
            "print(sorted(m for m in ('panel', 'holoviews', 'bokeh', 'explorer', 'param', 'tornado') "
            "if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"
