"""The kernel cache (porefill.explorer.jobs.kernels): built once, kept on disk as data, reused, and rebuilt
when a file is damaged or belongs to another spec. Common practice, no source."""
from __future__ import annotations

import gzip
import json

import numpy as np
import pytest

from porefill.explorer.jobs import kernels
from porefill.physics.distribution.kernel import KernelSpec, build_kernel
from porefill.physics.scenario import Scenario

BASE = Scenario(shape="slit", size_angstrom=20.0, adsorbate="argon", temperature_k=87.3, site_model="classical")
SPEC = KernelSpec(BASE, (14.0, 18.0, 22.0), n_points=60)


@pytest.fixture(autouse=True)
def _own_cache(tmp_path, monkeypatch):
    monkeypatch.setenv("POREFILL_CACHE_DIR", str(tmp_path))
    kernels.MEMORY.clear()
    yield
    kernels.MEMORY.clear()


def test_a_built_kernel_is_stored_and_read_back_equal(tmp_path):
    calls = []
    k1 = kernels.kernel_for(SPEC, workers=1, progress=lambda d, t: calls.append((d, t)))
    assert calls[-1] == (3, 3)
    files = list((tmp_path / "kernels").glob("*.json.gz"))
    assert [f.name for f in files] == [f"{SPEC.key()}.json.gz"]
    kernels.MEMORY.clear()
    k2 = kernels.load_kernel(SPEC)
    assert k2 is not None
    x = np.log(np.geomspace(10.0, 1e5, 50))
    for branch in ("adsorption", "desorption", "equilibrium"):
        assert np.array_equal(k1.per_pore_volume(x, branch), k2.per_pore_volume(x, branch))
    # the same spec built in this process gives the same numbers (the cache holds what a build gives)
    fresh = build_kernel(SPEC)
    assert np.array_equal(fresh.per_pore_volume(x, "equilibrium"), k2.per_pore_volume(x, "equilibrium"))


def test_a_damaged_or_foreign_file_is_rebuilt(tmp_path):
    kernels.kernel_for(SPEC, workers=1)
    path = tmp_path / "kernels" / f"{SPEC.key()}.json.gz"
    path.write_bytes(b"not gzip at all")
    kernels.MEMORY.clear()
    assert kernels.load_kernel(SPEC) is None
    k = kernels.kernel_for(SPEC, workers=1)
    assert len(k.columns) == 3 and kernels.load_kernel(SPEC) is not None
    # a file whose spec differs (e.g. copied under this name) is not used
    other = KernelSpec(BASE, (14.0, 18.0, 23.0), n_points=60)
    with gzip.open(path, "wt", encoding="utf-8") as fh:
        json.dump({"spec": other.to_dict(), "columns": []}, fh)
    assert kernels.load_kernel(SPEC) is None


def test_parallel_build_equals_the_serial_one():
    serial = build_kernel(SPEC)
    parallel = kernels.kernel_for(SPEC, workers=2, use_disk=False)
    x = np.log(np.geomspace(10.0, 1e5, 50))
    assert np.allclose(serial.per_pore_volume(x, "adsorption"), parallel.per_pore_volume(x, "adsorption"),
                       rtol=1e-10, atol=0)


def test_a_stopped_build_says_so():
    with pytest.raises(kernels.KernelStopped, match="stopped after 0 of 3"):
        kernels.kernel_for(SPEC, workers=1, stop=lambda: True, use_disk=False)
