"""Every choice list and default that more than one edge shows, stated once.

The command line (`choices=`), scenario files (what a key may hold), the dashboard's widgets (options and
labels) and the report all read these; each edge may add its own words, never its own list. Numeric limits
are in `porefill.physics.limits`; unit factors in `porefill.physics.substances.units`.
"""
from __future__ import annotations

__all__ = ["SHAPES", "SIZE_NAMES", "size_label", "PORE_ENDS", "DEFAULT_PORE_ENDS", "SITE_MODELS", "LEGS",
           "BRANCHES", "AXES", "ISOTHERM_AXES", "AXIS_LABELS", "TABS", "DEFAULT_POINTS", "FREE_PARAMETERS",
           "MEASURED_AMOUNT_UNITS", "TARGET_KINDS", "WINDOW_UNITS", "BOND_RULES", "PLATING_GASES",
           "MAX_PLATING_LAYERS"]

# pore cross-sections, and what the one size number of each means
SHAPES = ("hexagon", "cylinder", "slit")
SIZE_NAMES = {"hexagon": "side length", "cylinder": "radius", "slit": "width"}

# how a pore's ends are open decides the branch a measurement follows (porefill.physics.lattice_gas.branches)
PORE_ENDS = ("open", "closed-end", "infinite")
DEFAULT_PORE_ENDS = "open"

# how a site's free energy is found (porefill.physics.sites.site_models)
SITE_MODELS = ("classical", "quantum")

# a measured run's legs, and the model branches a leg can be compared with
LEGS = ("adsorption", "desorption")
BRANCHES = ("adsorption", "desorption", "equilibrium")

# x axes of the isotherm (the first three) and of the measured-data overlay (all four); one key each,
# one label each, everywhere
AXES = ("pressure", "relative-pressure", "chemical-potential", "coverage")
ISOTHERM_AXES = AXES[:3]
AXIS_LABELS = {"pressure": "pressure (log)", "relative-pressure": "p/p₀ (linear)",
               "chemical-potential": "chemical potential", "coverage": "coverage"}

# the dashboard's tabs a scenario file can reopen on, in the page's order
TABS = ("pore", "quantum", "measured", "sizing", "about")

# chemical potentials along an isotherm when nobody asks for another number
DEFAULT_POINTS = 300

# the parameters a fit may free (porefill.physics.fitting.params), and the amount units a measured run may
# be in (porefill.physics.fitting.measured)
FREE_PARAMETERS = ("wall-strength", "size", "wall", "a0", "pore-volume")
MEASURED_AMOUNT_UNITS = ("mmol/g", "mol/g", "cm3(STP)/g", "mmol/m2", "umol/m2", "per nm2 wall", "per nm", "mol",
                         "cm3(STP)")

# gases whose adsorbed layers may cover the wall first (porefill.physics.pore.plating), and how many layers
PLATING_GASES = ("argon", "krypton", "neon", "hydrogen")
MAX_PLATING_LAYERS = 3

# how the fluid bond ε_b is calibrated (porefill.physics.lattice_gas.bond)
BOND_RULES = ("vapour-pressure", "critical-temperature", "binding-energy")

# what a pore size can be chosen for (porefill.physics.sweep.Target)
TARGET_KINDS = {
    "walls-full-centre-empty": "walls full (first layer), central channel still empty",
    "single-channel": "central channel occupied, next ring empty",
    "first-layer": "complete first layer (every wall-contact site filled)",
    "layer": "a given layer complete (layer 1: against the wall; the centre is the last)",
    "full-pore": "pore filled (every site)",
}
# the units a target's pressure window may be given in
WINDOW_UNITS = {"pa": "Pa", "relative": "p/p₀"}


def size_label(shape: str) -> str:
    """What the size number of ``shape`` is ('side length', 'radius', 'width')."""
    return SIZE_NAMES[shape]
