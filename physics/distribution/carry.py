"""A pore-size distribution carried to another gas or temperature in the same sample.

The sample's pores do not change with the gas: a distribution w_i (cm³/g per kernel size, found with one gas,
`porefill.physics.distribution.inversion`) predicts the amount of any other gas as Σ_i w_i·ρ_i(p), ρ_i the
density that gas's model gives in a pore of size i (a kernel of that gas over the same sizes, with its own
site model: quantum for helium by default). Each layer forms over a band of pressures instead of at one: the
pressures where it forms in each size, weighted by the volume of those sizes, give its median and its 10–90 %
spread.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from porefill.physics.distribution.kernel import Kernel
from porefill.physics.substances.units import amount_mmol_per_g

__all__ = ["CarriedPrediction", "carry", "carried_base", "weighted_quantiles", "layer_name"]


def carried_base(base, *, adsorbate: str, temperature_k: float, site_model: str | None = None):
    """The kernel scenario of another gas in the same sample: ``base``'s pores (shape, wall, pore ends) with
    ``adsorbate`` at ``temperature_k`` (K), that gas's own pair, bond and lattice spacing, and ``site_model``
    (None: the gas's default, quantum for helium). ValueError (the scenario's own message) when the gas or
    temperature is not one the model takes."""
    return base.replace(adsorbate=adsorbate, temperature_k=float(temperature_k), pair_epsilon_k=None,
                        pair_sigma_angstrom=None, bond_energy_k=None, lattice_spacing_angstrom=None,
                        site_model=site_model, title="", notes="")


def weighted_quantiles(values, weights, quantiles) -> np.ndarray:
    """Quantiles of ``values`` weighted by ``weights`` (the midpoint rule on the sorted cumulative weight:
    a single value is every quantile of itself)."""
    v, w = np.asarray(values, float), np.asarray(weights, float)
    order = np.argsort(v)
    v, w = v[order], w[order]
    c = (np.cumsum(w) - 0.5 * w) / w.sum()
    return np.interp(np.asarray(quantiles, float), c, v)


def layer_name(k: int, count: int) -> str:
    """Layer k (1-based) of a list of ``count`` entries whose last is the pore full."""
    if k == count:
        return "pore full"
    return "layer 1 (against the wall)" if k == 1 else f"layer {k}"


def _span(kernel: Kernel, used: np.ndarray) -> tuple[float, float]:
    """From the lowest to the highest pressure any used part reaches (each pore's own default range)."""
    lows, highs = [], []
    for i in np.flatnonzero(used):
        for part in kernel.parts(int(i)):
            lows.append(part["equilibrium"]["log_p"][0])
            highs.append(part["equilibrium"]["log_p"][-1])
    return float(np.exp(min(lows))), float(np.exp(max(highs)))


@dataclass(frozen=True, eq=False)
class CarriedPrediction:
    """The carried isotherm: ``pressure_pa`` (n,), ``amount_mmol_g`` per branch name (n,), and ``layers``:
    per layer from the wall, the volume fraction of pores that form it below p0 and the weighted 10/50/90 %
    pressures (Pa) where it forms."""

    kernel: Kernel
    weights_cm3_g: np.ndarray
    pressure_pa: np.ndarray
    amount_mmol_g: dict
    layers: tuple

    @property
    def saturation_pressure_pa(self) -> float:
        return self.kernel.saturation_pressure_pa


def carry(sizes_angstrom, weights_cm3_g, kernel: Kernel, *, n_points: int = 400) -> CarriedPrediction:
    """The isotherm and layer bands of ``kernel``'s gas in a sample whose pore volume is ``weights_cm3_g``
    (cm³/g) at ``sizes_angstrom`` — the kernel's own sizes (ValueError otherwise: build the kernel on the
    distribution's sizes)."""
    sizes = np.asarray(sizes_angstrom, float)
    w = np.asarray(weights_cm3_g, float)
    if sizes.shape != w.shape or sizes.shape != kernel.sizes_angstrom.shape \
            or not np.allclose(sizes, kernel.sizes_angstrom, rtol=0, atol=1e-9):
        raise ValueError("the carried kernel must be built on the distribution's own sizes")
    if np.any(w < 0) or not np.all(np.isfinite(w)) or w.sum() <= 0:
        raise ValueError("pore volumes must be finite, non-negative and not all zero")
    used = kernel.usable & (w > 0)
    if not used.any():
        raise ValueError("no size holding pore volume could be computed for the carried gas: "
                         + "; ".join(kernel.errors()[:2]))
    lo, hi = _span(kernel, used)
    log_p = np.linspace(np.log(lo), np.log(hi), n_points)
    amounts = {}
    for branch in ("adsorption", "desorption", "equilibrium"):
        density = kernel.per_pore_volume(log_p, branch)          # atoms per Å³ of pore
        amounts[branch] = amount_mmol_per_g(density[:, used] @ w[used], cross_section_angstrom2=1.0,
                                            pore_volume_cm3_g=1.0)
    # every part of a column holds an equal share of its volume; layers counted from the wall, the last
    # entry of every part the pore full
    shares = [(part.get("layers_pa", ()), w[i] / len(kernel.parts(i)))
              for i in np.flatnonzero(used) for part in kernel.parts(int(i))]
    count = max(len(lp) for lp, _ in shares)
    layers = []
    for k in range(count):
        last = k == count - 1
        vals, wts = [], []
        for lp, share in shares:
            idx = len(lp) - 1 if last else k
            if (last or idx < len(lp) - 1) and lp and lp[idx] is not None:
                vals.append(lp[idx])
                wts.append(share)
        entry = {"layer": k + 1, "name": layer_name(k + 1, count),
                 "volume_fraction": float(sum(wts) / w[used].sum())}
        if vals:
            q10, q50, q90 = weighted_quantiles(vals, wts, (0.1, 0.5, 0.9))
            entry.update(p10_pa=float(q10), median_pa=float(q50), p90_pa=float(q90))
        layers.append(entry)
    return CarriedPrediction(kernel, w, np.exp(log_p), amounts, tuple(layers))
