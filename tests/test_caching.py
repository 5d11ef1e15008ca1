"""The one cache policy (physics/caching.py) and the public face of porefill.physics."""
from __future__ import annotations

import subprocess
import sys

import numpy as np
import pytest

from porefill.physics import caching


def test_memoize_caches_and_clear_caches_empties_it():
    calls = []

    @caching.memoize(maxsize=4)
    def square(x):
        calls.append(x)
        return x * x

    assert square(3) == 9 and square(3) == 9 and calls == [3]
    assert square in caching.registered()
    caching.clear_caches()
    assert square(3) == 9 and calls == [3, 3]


def test_bounded_cache_drops_the_least_recently_used():
    cache = caching.BoundedCache(2)
    cache.put("a", 1)
    cache.put("b", 2)
    assert cache.get("a") == 1          # "a" now the most recent
    cache.put("c", 3)
    assert "b" not in cache and cache.get("a") == 1 and cache.get("c") == 3 and len(cache) == 2
    caching.clear_caches()
    assert len(cache) == 0
    with pytest.raises(ValueError, match="maxsize"):
        caching.BoundedCache(0)


def test_the_stage_and_potential_caches_are_under_the_policy():
    from porefill.physics.lattice_gas import stages
    from porefill.physics.pore import wall_potential
    from porefill.physics.sites import quantum

    held = caching.registered()
    assert stages._geometry_stage in held and wall_potential._array_fields in held   # noqa: SLF001
    assert quantum._STATES in held                                                      # noqa: SLF001


def test_the_public_face_loads_lazily_and_names_what_it_exports():
    import porefill.physics as physics

    for name in physics.__all__:
        assert getattr(physics, name) is not None
    with pytest.raises(AttributeError):
        physics.no_such_name  # noqa: B018
    # importing the face loads none of the rooms (and no scipy) until a name is asked for
    code = "import sys, porefill.physics; print(sorted(m for m in sys.modules if m.startswith(('porefill.physics.', 'scipy'))))"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == "[]"


def test_line_cuts_are_the_wall_potential_along_each_cut():
    from porefill.physics import Scenario, line_cuts, wall_potential

    sc = Scenario(size_angstrom=12.0, wall_angstrom=8.0)
    pore, pair = sc.pore(), sc.pair()
    cuts = line_cuts(pore=pore, pair=pair, points=50)
    assert [c.label for c in cuts] == [label for label, _, _ in pore.line_cuts()]
    for cut in cuts:
        x, y = cut.r_angstrom * np.cos(cut.angle_rad), cut.r_angstrom * np.sin(cut.angle_rad)
        # the same function at the same points (common practice, no source): exact
        np.testing.assert_array_equal(cut.potential_k, wall_potential(x, y, pore=pore, pair=pair))
        assert cut.r_angstrom[-1] < cut.length_angstrom and cut.minimum_k == np.nanmin(cut.potential_k)
