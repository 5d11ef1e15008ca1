"""Which model branch a measurement follows, by how the pore's ends are open, and what to say where it matters.

The mean-field solver gives, for a pore infinitely long and without ends, an adsorption branch that stays on
the metastable film up to its spinodal and a desorption branch that stays full down to its spinodal. A real
pore has ends:

- ``open`` (both ends open, the default): the pore empties through a receding meniscus at its ends, so
  desorption follows the **equilibrium** transition. How it fills depends on the gas:
  - nitrogen and argon at their boiling points (``FILLS_AT_EQUILIBRIUM``, T/T_c ≈ 0.6): at the **equilibrium**
    transition as well. The mean-field adsorption spinodal is the limit of an infinitely long, perfectly
    smooth pore without fluctuations; this lattice fluid's mean-field T_c (about 200 K for nitrogen with the
    vapour-pressure bond, against 126 K) makes its metastable film far too robust, while in a real sample
    fluctuations and the wall's heterogeneity (`porefill.physics.lattice_gas.wall_spread`) nucleate the
    liquid long before it. The Kelvin-type relation of Kruk, Jaroniec & Sayari (Langmuir 13, 6267 (1997)),
    calibrated on the adsorption branches of MCM-41 silicas, and nitrogen's reversibility in pores below
    about 4 nm are what the equilibrium transition reproduces (tests). Hysteresis loops of wider pores (the
    H1 loops of 6–10 nm silicas) are not predicted by this rule: the spinodal is drawn only as a limit.
  - other gases (helium, hydrogen, neon far below their critical points): on the adsorption branch, the film
    growing until it is unstable.
- ``closed-end`` (one end closed): the closed end holds a hemispherical meniscus from the start, so the pore
  fills and empties at the equilibrium transition: no hysteresis (Cohan, J. Am. Chem. Soc. 60, 433 (1938);
  common practice, no source for the lattice version).
- ``infinite`` (no ends): the raw mean-field branches, both spinodals; useful as limits, not as predictions.

These rules are common practice in the interpretation of type IV isotherms (e.g. Thommes et al., Pure Appl.
Chem. 87, 1051 (2015), on hysteresis types H1 and pore blocking).
"""
from __future__ import annotations

__all__ = ["PORE_ENDS", "DEFAULT_PORE_ENDS", "FILLS_AT_EQUILIBRIUM", "measured_branches", "branch_rule", "LOWER_CLOSURE",
           "branch_notes"]

from porefill.physics.choices import DEFAULT_PORE_ENDS, PORE_ENDS

_MEASURED = {
    "open": {"adsorption": "adsorption", "desorption": "equilibrium"},
    "closed-end": {"adsorption": "equilibrium", "desorption": "equilibrium"},
    "infinite": {"adsorption": "adsorption", "desorption": "desorption"},
}

# Lower closure point of the hysteresis loop: below this p/p0 the liquid in a pore cannot stay metastable
# (cavitation), so no desorption measured at that temperature falls below it. (adsorbate: (T K, p/p0))
LOWER_CLOSURE = {"nitrogen": (77.35, 0.42)}     # nitrogen at 77 K, about 0.42 (value from memory)


# gases whose open pores fill at the equilibrium transition (see the module notes)
FILLS_AT_EQUILIBRIUM = ("nitrogen", "argon")


def measured_branches(pore_ends: str, adsorbate: str | None = None) -> dict[str, str]:
    """{leg: model branch} a measurement of ``adsorbate`` in pores with these ends follows ('adsorption',
    'desorption', 'equilibrium')."""
    try:
        legs = dict(_MEASURED[pore_ends])
    except KeyError:
        raise ValueError(f"pore_ends must be one of {', '.join(PORE_ENDS)}; got {pore_ends!r}") from None
    if pore_ends == "open" and adsorbate in FILLS_AT_EQUILIBRIUM:
        legs["adsorption"] = "equilibrium"
    return legs


def branch_rule(pore_ends: str, adsorbate: str | None = None) -> dict[str, str]:
    """{leg: why} — the rule of the module notes that `measured_branches` applied to each leg, in one plain
    sentence each (what the exports write beside the branch names)."""
    legs = measured_branches(pore_ends, adsorbate)
    if pore_ends == "infinite":
        why = "the raw mean-field branch, up to its spinodal (a limit, not a prediction)"
        return {"adsorption": why, "desorption": why.replace("up to", "down to")}
    if pore_ends == "closed-end":
        why = "the closed end's meniscus makes the pore fill and empty at the equilibrium transition (Cohan 1938)"
        return {"adsorption": why, "desorption": why}
    fills = (f"open pores of {adsorbate} fill at the equilibrium transition (fluctuations and the wall's "
             "heterogeneity nucleate the liquid long before the mean-field spinodal; Kruk, Jaroniec & Sayari 1997)"
             if legs["adsorption"] == "equilibrium" else
             "open pores of this gas fill on the adsorption branch: the film grows until it is unstable")
    return {"adsorption": fills,
            "desorption": "open pores empty through a receding meniscus at their ends: the equilibrium transition"}


def branch_notes(iso) -> list[str]:
    """Plain sentences on the branches of an isotherm: what is drawn as measurable, and where the mean field
    predicts hysteresis or a spinodal that a measurement would not show."""
    sc = iso.stage.scenario
    ends = sc.pore_ends
    legs = measured_branches(ends, sc.adsorbate)
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
