"""The distribution's background work (porefill.explorer.jobs.distribution_job): a stop during the kernel's
build ends in Cancelled, and the inversion handed to an executor gives what it gives in this thread."""
from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import numpy as np
import pytest

from porefill.explorer.files.scenario_file import load_document
from porefill.explorer.jobs.background import Cancelled
from porefill.explorer.jobs.distribution_job import DistributionRequest, distribution_work
from porefill.explorer.views.distribution_drawing import kernel_spec

DEMO = Path(__file__).resolve().parents[1] / "scenarios" / "demo-nitrogen-invented-measured.toml"


@pytest.fixture()
def request_(monkeypatch, tmp_path):
    monkeypatch.setenv("POREFILL_CACHE_DIR", str(tmp_path))
    doc = load_document(DEMO)
    return DistributionRequest(kernel_spec(doc.scenario, 13.0, 25.0, 5), doc.measured, doc.sample, bootstrap=10)


def test_a_stop_during_the_kernel_build_cancels(request_):
    """Common practice, no source: a stop asked before any size is done ends the job as cancelled, and no
    kernel is kept."""
    from porefill.explorer.jobs.kernels import MEMORY, load_kernel

    with pytest.raises(Cancelled):
        distribution_work(request_, progress=lambda *_: None, should_stop=lambda: True)
    assert MEMORY.get(request_.spec.key()) is None and load_kernel(request_.spec) is None


def test_the_inversion_in_an_executor_is_the_same(request_):
    """The same seeded inversion in this thread and in an executor (common practice, no source)."""
    seen = []
    here = distribution_work(request_, progress=lambda f, text: seen.append((f, text)), should_stop=lambda: False)
    with ThreadPoolExecutor(1) as pool:
        there = distribution_work(request_, pool, progress=lambda *_: None, should_stop=lambda: False)
    np.testing.assert_array_equal(here.pore_volume_cm3_g, there.pore_volume_cm3_g)
    np.testing.assert_array_equal(here.stderr_cm3_g, there.stderr_cm3_g)
    fractions = [f for f, _ in seen]
    assert fractions == sorted(fractions) and fractions[-1] < 1.0 and "kernel" in seen[0][1]
