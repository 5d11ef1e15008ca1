"""Which model branch a measurement follows, by how the pore's ends are open, and what to say where it matters.

The mean-field solver gives, for a pore infinitely long and without ends, an adsorption branch that stays on
the metastable film up to its spinodal and a desorption branch that stays full down to its spinodal. A real
pore has ends:

- ``open`` (both ends open, the default): the pore fills on the adsorption branch (the film grows until it is
  unstable) but empties through a receding meniscus at its ends, so desorption follows the **equilibrium**
  transition. The desorption spinodal is not a measurable branch; it is drawn only as a limit.
- ``closed-end`` (one end closed): the closed end holds a hemispherical meniscus from the start, so the pore
  fills and empties at the equilibrium transition: no hysteresis (Cohan, J. Am. Chem. Soc. 60, 433 (1938);
  common practice, no source for the lattice version).
- ``infinite`` (no ends): the raw mean-field branches, both spinodals; useful as limits, not as predictions.

These rules are common practice in the interpretation of type IV isotherms (e.g. Thommes et al., Pure Appl.
Chem. 87, 1051 (2015), on hysteresis types H1 and pore blocking).
"""
from __future__ import annotations

__all__ = ["PORE_ENDS", "DEFAULT_PORE_ENDS", "measured_branches", "LOWER_CLOSURE", "branch_notes"]

from porefill.physics.choices import DEFAULT_PORE_ENDS, PORE_ENDS

_MEASURED = {
    "open": {"adsorption": "adsorption", "desorption": "equilibrium"},
    "closed-end": {"adsorption": "equilibrium", "desorption": "equilibrium"},
    "infinite": {"adsorption": "adsorption", "desorption": "desorption"},
}

# Lower closure point of the hysteresis loop: below this p/p0 the liquid in a pore cannot stay metastable
# (cavitation), so no desorption measured at that temperature falls below it. (adsorbate: (T K, p/p0))
LOWER_CLOSURE = {"nitrogen": (77.35, 0.42)}     # nitrogen at 77 K, about 0.42 (value from memory)


def measured_branches(pore_ends: str) -> dict[str, str]:
    """{leg: model branch} a measurement in pores with these ends follows ('adsorption', 'desorption',
    'equilibrium')."""
    try:
        return dict(_MEASURED[pore_ends])
    except KeyError:
        raise ValueError(f"pore_ends must be one of {', '.join(PORE_ENDS)}; got {pore_ends!r}") from None


def branch_notes(iso) -> list[str]:
    """Plain sentences on the branches of an isotherm: what is drawn as measurable, and where the mean field
    predicts hysteresis or a spinodal that a measurement would not show."""
    sc = iso.stage.scenario
    ends = sc.pore_ends
    legs = measured_branches(ends)
    p0 = iso.stage.saturation_pressure_pa
    notes = [f"Pore ends: {ends}. Adsorption follows the model's {legs['adsorption']} branch, desorption its "
             f"{legs['desorption']} branch."]
    loops = [s for s in iso.steps if s.kind == "first-order" and s.desorption_jump_pressure_pa is not None]
    if ends != "infinite" and loops:
        notes.append("The mean-field desorption spinodal (the full pore's limit of stability) is drawn as a limit "
                     "only: a pore with an open end empties at the equilibrium transition.")
    closure = LOWER_CLOSURE.get(sc.adsorbate)
    if closure and abs(iso.stage.temperature_k - closure[0]) < 2.0:
        x_closure = closure[1]
        below = [s for s in loops if s.relative_pressure < x_closure
                 and (s.adsorption_jump_pressure_pa or p0) > s.pressure_pa * (1 + 1e-6)]
        if below and ends != "closed-end":
            s = max(below, key=lambda s: s.added_per_nm)
            up = (s.adsorption_jump_pressure_pa or p0) / p0
            notes.append(f"Mean field predicts a hysteresis loop (adsorption jump at p/p0 {up:.3g}, equilibrium "
                         f"at {s.relative_pressure:.3g}) below the lower closure point (p/p0 ≈ {x_closure:g} for "
                         f"{sc.adsorbate} near {closure[0]:g} K, value from memory): measured isotherms are "
                         "reversible there, so expect the measured adsorption near the equilibrium curve.")
        spinodal = [s for s in loops if s.desorption_jump_pressure_pa / p0 < x_closure]
        if spinodal and ends == "infinite":
            notes.append(f"The desorption spinodal falls below the cavitation bound (p/p0 ≈ {x_closure:g}): it is "
                         "a limit of the model, not a prediction.")
    return notes
