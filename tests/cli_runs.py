"""``porefill ARGS`` run in this process: the command line's ``main`` with its outputs captured."""
from __future__ import annotations

import contextlib
import io
from types import SimpleNamespace


def in_process(*args) -> SimpleNamespace:
    """``returncode``, ``stdout`` and ``stderr`` of ``porefill ARGS`` run by its ``main`` here (argparse's own
    refusals leave through ``sys.exit(2)``)."""
    from porefill.explorer.cli.main import main

    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            code = main([str(a) for a in args])
        except SystemExit as stop:
            code = stop.code if isinstance(stop.code, int) else 1
    return SimpleNamespace(returncode=code, stdout=out.getvalue(), stderr=err.getvalue())
