"""Step shifts between two treatments of one pore (quantum against classical site model)."""
from __future__ import annotations

import numpy as np
import pytest

from porefill.physics.lattice_gas.adsorption import compute_isotherm
from porefill.physics.lattice_gas.model_shift import step_shifts
from porefill.physics.scenario import Scenario

HELIUM = Scenario(size_angstrom=15.0, wall_angstrom=8.0, temperature_k=1.5)


@pytest.fixture(scope="module")
def both():
    return (compute_isotherm(HELIUM.replace(site_model="classical"), n_points=200),
            compute_isotherm(HELIUM.replace(site_model="quantum"), n_points=200))


def test_a_model_against_itself_moves_nothing(both):
    classical, _ = both
    shifts, only_ref, only_other = step_shifts(classical, classical)
    assert len(shifts) == len(classical.steps) and not only_ref and not only_other
    assert all(s.shift_mu_k == 0.0 and s.shift_decades == 0.0 for s in shifts)


def test_shifts_are_antisymmetric_and_agree_with_the_pressure_scale(both):
    classical, quantum = both
    forward, *_ = step_shifts(classical, quantum)
    backward, *_ = step_shifts(quantum, classical)
    back = {s.where: s for s in backward}
    for s in forward:
        assert back[s.where].shift_mu_k == pytest.approx(-s.shift_mu_k, abs=1e-12)
        # ideal-gas reservoir: p ∝ exp(μ/kT), so a shift Δμ is Δμ/(kT ln 10) decades (common practice, no source)
        assert s.shift_decades == pytest.approx(s.shift_mu_k / (1.5 * np.log(10.0)), rel=1e-9)


def test_zero_point_energy_lifts_the_first_layer(both):
    # the independent check: the classical model puts the first-layer steps 10–31 K too deep in μ
    # (3–9 decades in pressure) for helium-4 at 1.5 K in this pore
    classical, quantum = both
    shifts, *_ = step_shifts(classical, quantum)
    first = shifts[0]
    assert "corner" in first.where
    assert 10.0 <= first.shift_mu_k <= 31.0 and 3.0 <= first.shift_decades <= 9.0
    # the step of the corner sites moves with their site free energy: the same sites, the same bonds
    fc = classical.stage.site_free_energy.min()
    fq = quantum.stage.site_free_energy.min()
    assert first.shift_mu_k == pytest.approx(fq - fc, abs=1.5)
