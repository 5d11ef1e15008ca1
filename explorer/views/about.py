"""Text of the dashboard's About page, including the safety cautions."""

SAFETY = """\
### Safety

porefill is a planning and analysis aid. Its numbers are **model predictions, not safety figures**:
never size a vessel, a relief valve, a fill or a vent from them.

Work with cryogens and compressed gases carries real hazards:
- **Asphyxiation.** Helium, nitrogen, neon and argon displace oxygen without warning; evaporating cryogen
  expands several hundred-fold. Work in ventilated spaces and use oxygen monitors where required.
- **Cold burns.** Cryogenic liquids, cold gas and cold surfaces freeze skin and eyes. Wear face protection
  and suitable gloves; never touch cold lines.
- **Pressure build-up.** Boil-off in a closed volume (a sample cell, a trapped line, a dewar with a blocked
  neck) raises the pressure until something fails. Every cold volume needs a relief path.
- Hydrogen is also flammable.

Follow your institution's safety rules, your local regulations and the advice of qualified staff; they take
precedence over anything porefill shows.
"""

ABOUT = """\
## About porefill

porefill computes the potential an adsorbed atom feels inside the pores of an ordered nanoporous solid
(straight hexagonal, cylindrical or slit pores in a continuum Lennard-Jones solid) and the adsorption it
causes, from a mean-field lattice-gas model. Conventions: lengths in Å, energies and temperatures in K, the pore centre at
the origin, one corner of the hexagon on the +x axis.

The adsorbate–solid pair parameters come from a published pair where one is known (argon, nitrogen); otherwise
they are **derived** with the Lorentz–Berthelot rules, and the page says so. Nitrogen's published ε carries one
wall-strength factor (1.08) and argon's another (1.45) for this lattice, calibrated once against the Kelvin equation
with a statistical film (Kruk, Jaroniec & Sayari 1997) in 3–8 nm silica cylinders and then held fixed for every size
and temperature. Real silica is rough and carries silanol groups, so on silica nitrogen and argon also get a
**spread of site energies** on the three rows next to the wall (Gaussian, wider and deeper at contact; calibrated
once against the KJS film and the BET C of silicas): their first layer forms continuously with a knee, as a
sample's does, and open pores fill at the equilibrium transition, where KJS puts measured adsorption (condensation
within 0.04 of it at 3.4–7.4 nm; hysteresis loops of wide pores are not predicted). Helium, hydrogen and neon keep
the smooth wall. Fits to measured isotherms are where such parameters get pinned.

### The adsorption model

A lattice gas fills the pore cross-section and is solved in mean field (lattice density functional theory).
Its sites sit in rows that follow the wall: the first row in the wall potential's well at every size (corners
included), the inner rows at the liquid's spacing to within a few per cent, the centre taking what is left;
each site has 8 neighbours (6 in the cross-section, 2 along the axis) and each cell holds the liquid's volume
per atom. The rows fit a pore unstrained only where the room between the first row and the centre is a whole
number of row spacings; a pore in between is computed as the mixture of the two lattices either side (m rows
stretched and m + 1 compressed, weighted by where the size lies between them: a lever rule), so the isotherm and
its steps move smoothly with pore size. Each listed step names the pressures of its two lattices; a step that
only one of them has says the part of the pore it stands for; maps show the heavier lattice. Each site's free energy is the wall potential's
Boltzmann factor integrated over its cell (converged at every temperature, so the low-pressure limit equals the
exact Henry constant); sites that can never fill are left out. The adsorption branch is followed up from an empty
pore, the desorption branch down from a full one; first-order steps sit where their grand potentials cross.

Pressures: p = p₀(T)·exp[(μ − μ<sub>coex</sub>)/kT], where μ<sub>coex</sub> is the chemical potential of bulk liquid–vapour coexistence; p₀ comes from ITS-90 for helium-4 (extrapolated below 1.25 K) and
from CoolProp for the other gases. By default the bond energy ε<sub>b</sub> is calibrated so that the lattice's bulk
condensation falls at p₀ *and* the low-pressure (Henry) limit is exact; the steps table says which
calibration is in force, and a line under it which bulk facts that calibration keeps and by how much it
misses the others (nitrogen's mean-field critical temperature is 201 K against 126.2 K, so its loops are wide).

**Branches and pore ends.** In a pore open at both ends (the default) desorption happens at the equilibrium
transition, through a receding meniscus: that is the desorption curve drawn, overlaid on data and fitted. The
mean-field desorption branch of an infinite pore is drawn dotted, as a limit only. A pore closed at one end fills
and empties at equilibrium (no loop); "infinite" keeps both mean-field spinodals. Where mean field predicts a loop
below nitrogen's lower closure point (p/p₀ ≈ 0.42 at 77 K), the page says that measurements there are reversible. Helium's first layers
form at pressures far below what gauges read: compare amounts, not pressures, there.

### Quantum states (site model "quantum")

Helium-4 at 1–2 K is a quantum fluid: its thermal wavelength (7 Å at 1.5 K) is larger than a lattice cell.
With the quantum site model, porefill solves the Schrödinger equation of one atom in the pore's
cross-section exactly (free motion along the axis): a fourth-order finite-difference Laplacian on a
triangular grid that keeps the hexagon's symmetry, and a sparse eigensolver for as many of the lowest
states as the temperature needs. The grid is chosen for a stated accuracy of the energies, which is
reported. The one-atom partition function then gives the low-pressure (Henry) limit exactly.

The lattice needs a free energy per site. Spreading the thermal one-atom density over the cells would
count the tails of wall-bound states as binding in the next row, so porefill gives the states bound in the
first layer to the wall sites only, each shared among them by its probability on their cells (a tail holding
under a tenth of a state counts nothing, so the corners' deep states do not bind the faces beside them). The
rows inside fill on a full first row, so their sites take the states of the region the first
row's cells leave (the wavefunction vanishes outside it), each state shared among them by its probability on
their cells: the thermal density matrix over each cell. Every row takes its free energy from states, the
low-pressure limit is the exact quantum Henry constant, and as ħ → 0 each site's value becomes its classical
cell integral. An inner site can come out below its own classical cell value, because states spread over
several rows. **Limits:** where the number of states is capped (very large pores, hydrogen and neon), the
sites no computed state reaches keep their semiclassical or classical cell integral, and the readout says so;
the first row is taken as full when the inner rows' states are computed; the fluid–fluid bond stays
classical; states are those of one atom.

The quantum model is the default for helium-4, hydrogen and neon; the classical one for argon and
nitrogen (their states are many and their cell averages already good). The **Quantum states** tab computes,
for the current pore, the lowest states (their bands, degeneracies, splittings and where they live), maps of
each band's probability and of the thermal density, the isotherm with both site models and the shift of
every layer step in μ and in pressure, and the mean-field energy per adsorbed atom along the isotherm: the
wall potential and kinetic energy of the states (or cells) each site holds, and the fluid–fluid bonds,
−(ε<sub>b</sub>/2)Σ n<sub>i</sub>n<sub>j</sub> per atom. States are solved once per pore and reused for lower
temperatures and for warmer ones while the highest state held stays negligible; much warmer helium needs
more states and takes seconds.

""" + SAFETY
