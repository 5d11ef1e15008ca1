"""The house rule: physics imports no GUI library (STYLE.md)."""
from __future__ import annotations

import subprocess
import sys


def test_physics_does_not_import_the_dashboard():
    code = ("import sys, physics.wall_potential, physics.scenario, physics.materials, physics.geometry; "
            "print(sorted(m for m in ('panel', 'holoviews', 'bokeh', 'explorer') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"
