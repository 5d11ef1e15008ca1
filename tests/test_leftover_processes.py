"""The run's own check for processes left behind (tests/leftover_processes.py) finds one and lets an ended
one go (common practice, no source: a test suite must not leave servers or workers running)."""
from __future__ import annotations

import os
import subprocess
import sys

import pytest

from leftover_processes import VARIABLE, carrying, left_behind

pytestmark = pytest.mark.skipif(not os.path.isdir("/proc"), reason="reads /proc (Linux)")


def test_a_marked_process_is_found_until_it_ends():
    marker = os.environ[VARIABLE]          # set by tests/conftest.py for this run
    child = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"])
    try:
        assert child.pid in [pid for pid, _ in carrying(marker)]
        assert child.pid in [pid for pid, _ in left_behind(marker, grace_s=0.5)]
    finally:
        child.kill()
        child.wait()
    assert child.pid not in [pid for pid, _ in carrying(marker)]


def test_a_process_without_the_marker_is_not_ours():
    env = {k: v for k, v in os.environ.items() if k != VARIABLE}
    child = subprocess.Popen([sys.executable, "-c", "import time; time.sleep(60)"], env=env)
    try:
        assert child.pid not in [pid for pid, _ in carrying(os.environ[VARIABLE])]
    finally:
        child.kill()
        child.wait()
