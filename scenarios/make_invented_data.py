"""Write the two INVENTED demonstration isotherms in this folder, made by porefill's own model plus seeded noise.

    .venv/bin/python scenarios/make_invented_data.py

(it also copies the nitrogen runs into ``demo-nitrogen-invented-measured.toml``)

- ``invented-nitrogen-77K.csv``: nitrogen at 77.35 K in a hexagonal silica pore array, p/p0 and cm³(STP)/g,
  an adsorption and a desorption leg (a ``leg`` column).
- ``invented-helium-dosing.csv``: helium-4 at 1.5 K in the same sample, dosed amounts in mol for a sample
  of 0.0500 g; the pressure is left blank where it is below 1e-3 Pa (what a capacitance gauge reads).

Both are made with parameters the dashboard's defaults do not know (side 17.3 Å, wall 8 Å, wall strength
1.08 × the catalog ε, pore volume 0.62 cm³/g) and the classical site model, so a fit should find them
again. Noise (seed 20240817): amounts × (1 + 1.5 % Gaussian) plus 0.005 % of the largest amount; recorded
pressures × (1 + 0.2 % Gaussian). Each file says in its first lines that it is invented and how.
"""
from __future__ import annotations

import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

from porefill.physics.lattice_gas.adsorption import compute_isotherm  # noqa: E402
from porefill.physics.fitting.model import simulated_run  # noqa: E402
from porefill.physics.substances.materials import pair_parameters  # noqa: E402
from porefill.physics.scenario import Scenario  # noqa: E402
from porefill.physics.substances.units import STP_CM3_PER_MMOL  # noqa: E402

SEED = 20240817
SIDE, WALL, STRENGTH, PORE_VOLUME, MASS_G = 17.3, 8.0, 1.08, 0.62, 0.0500
GAUGE_FLOOR_PA = 1e-3


def _scenario(adsorbate: str, temperature_k: float) -> Scenario:
    eps = pair_parameters(adsorbate, "silica").epsilon_k * STRENGTH
    return Scenario(shape="hexagon", size_angstrom=SIDE, wall_angstrom=WALL, adsorbate=adsorbate,
                    temperature_k=temperature_k, pair_epsilon_k=eps, pore_volume_cm3_g=PORE_VOLUME,
                    site_model="classical")


def _header(what: str, scenario: Scenario, extra: list[str]) -> list[str]:
    return [f"# INVENTED DATA for demonstration: {what}, computed by porefill's own model "
            "(scenarios/make_invented_data.py), NOT a measurement.",
            f"# Model parameters used: hexagon side {SIDE} Å, wall {WALL} Å, wall strength {STRENGTH} x the catalog "
            f"pair epsilon (epsilon = {scenario.pair_epsilon_k:.4f} K), pore volume {PORE_VOLUME} cm3/g, "
            "site model classical, bond and lattice by porefill's defaults.",
            f"# Noise (seed {SEED}): amounts x (1 + 1.5 % Gaussian) + 0.005 % of the largest amount; "
            "pressures x (1 + 0.2 % Gaussian).",
            *extra]


def _noisy(rng, amount, pressure):
    amount = amount * (1 + 0.015 * rng.standard_normal(amount.size)) + 5e-5 * amount.max() * \
        rng.standard_normal(amount.size)
    return amount, pressure * (1 + 0.002 * rng.standard_normal(pressure.size))


def nitrogen(rng) -> str:
    s = _scenario("nitrogen", 77.35)
    p0 = compute_isotherm(s, n_points=3).stage.saturation_pressure_pa
    legs = (("adsorption", np.r_[np.geomspace(3e-3, 0.1, 10), np.linspace(0.15, 0.99, 18)]),
            ("desorption", np.linspace(0.99, 0.05, 20)))
    lines = _header("nitrogen at 77.35 K on a hexagonal silica pore array", s,
                    ["# T = 77.35 K", f"# p0 = {p0:.1f} Pa (porefill's saturated vapour pressure of nitrogen)"])
    lines.append("p/p0,V (cm3 STP/g),leg")
    for leg, rel in legs:
        run = simulated_run(s, pressure_pa=rel * p0, leg=leg, pressure_unit="p/p0", amount_unit="cm3(STP)/g")
        amount, rel_noisy = _noisy(rng, run.amount, rel)
        lines += [f"{p:.6g},{a:.5g},{leg}" for p, a in zip(np.minimum(rel_noisy, 0.999), amount)]
    return "\n".join(lines) + "\n"


def helium(rng) -> str:
    s = _scenario("helium-4", 1.5)
    iso = compute_isotherm(s, n_points=3000)
    n = iso.amount("adsorption", "mmol/g") * 1e-3 * MASS_G                     # mol in the sample
    doses = np.linspace(0.03, 0.985, 40) * n[-1]
    pressure = np.exp(np.interp(doses, np.maximum.accumulate(n), np.log(iso.pressure_pa)))
    amount, pressure = _noisy(rng, doses, pressure)
    lines = _header("helium-4 dosed at 1.5 K into the same invented sample", s,
                    ["# T = 1.5 K", f"# sample mass = {MASS_G:.4f} g (give it to porefill: --mass {MASS_G:.4f})",
                     f"# amounts: total helium dosed into the sample cell, mol (ideal gas; 1 mmol = "
                     f"{STP_CM3_PER_MMOL:.3f} cm3 STP)",
                     f"# pressure left blank below {GAUGE_FLOOR_PA:g} Pa, where the gauge reads nothing"])
    lines.append("pressure (Pa),amount (mol)")
    lines += [("" if p < GAUGE_FLOOR_PA else f"{p:.5g}") + f",{a:.6g}" for p, a in zip(pressure, amount)]
    return "\n".join(lines) + "\n"


def refresh_demo_scenario() -> None:
    """Copy the nitrogen runs into demo-nitrogen-invented-measured.toml (the rest of that file is kept)."""
    from porefill.explorer.files.measured.reader import read_measured
    from porefill.explorer.files.scenario_file import dump_document, load_document

    path = HERE / "demo-nitrogen-invented-measured.toml"
    first = path.read_text(encoding="utf-8").splitlines()[0]
    name = "invented-nitrogen-77K.csv"
    runs = read_measured(name, (HERE / name).read_bytes()).runs
    text = dump_document(load_document(path).replace(measured=tuple(runs)))
    path.write_text(first + "\n" + text, encoding="utf-8")


def main() -> None:
    rng = np.random.default_rng(SEED)
    (HERE / "invented-nitrogen-77K.csv").write_text(nitrogen(rng), encoding="utf-8")
    (HERE / "invented-helium-dosing.csv").write_text(helium(rng), encoding="utf-8")
    refresh_demo_scenario()


if __name__ == "__main__":
    main()
