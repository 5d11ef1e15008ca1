"""The last session out gives the caches back (porefill.explorer.server.session_memory); earlier ones leave them alone."""
from __future__ import annotations

from porefill.explorer.server import session_memory
from porefill.explorer.jobs.compute import _pools, isotherm_pool
from porefill.explorer.views.potential import cached_map
from porefill.physics.scenario import Scenario
from porefill.physics.lattice_gas.stages import _geometry_stage, geometry_stage


def test_caches_are_cleared_only_when_the_last_session_closes(monkeypatch):
    monkeypatch.setenv("POREFILL_ISOTHERM_WORKERS", "thread")     # no processes to start in a unit test
    _pools.clear()
    sc = Scenario(size_angstrom=12.0, wall_angstrom=6.0, site_model="classical")
    geometry_stage(sc)
    cached_map(sc.model_key())
    isotherm_pool()
    session_memory.session_opened()
    session_memory.session_opened()
    session_memory.session_closed(None)
    assert _geometry_stage.cache_info().currsize >= 1 and cached_map.cache_info().currsize >= 1
    assert "isotherm" in _pools
    session_memory.session_closed(None)
    assert session_memory.open_sessions() == 0
    assert _geometry_stage.cache_info().currsize == 0 and cached_map.cache_info().currsize == 0
    assert "isotherm" not in _pools                                 # retired; the next request starts one
    geometry_stage(sc)                                              # and the caches fill again
    assert _geometry_stage.cache_info().currsize == 1
