"""What the pore-size distribution panel shows, as plain data and HTML (no Panel, no Bokeh): the kernel's sizes
from the page's inputs, the distribution's bars with their errors and its cumulative volume, the summary, the
fitted isotherm over the measured points with its residuals, and the carried prediction's layer bands.

A distribution on show is always a `porefill.explorer.files.saved_distribution.SavedDistribution` (what a
scenario file keeps), so one computed on the page and one reopened from a file are drawn the same way; only
a distribution computed in this session also has its fitted isotherm (`porefill.physics.distribution.inversion.
Distribution.fitted`), which a file does not keep.
"""
from __future__ import annotations

import html
import math

import numpy as np

from porefill.explorer.files.page_choices import KERNEL_COUNT_RANGE
from porefill.physics.choices import SIZE_NAMES
from porefill.physics.distribution.kernel import (DEFAULT_KERNEL_POINTS, DEFAULT_KERNEL_SIZES, KernelSpec,
                                                  default_sizes, pore_diameter_angstrom)

__all__ = ["KERNEL_COUNT_BOUNDS", "default_kernel_inputs", "kernel_spec", "size_word", "diameter_factor",
           "bar_columns", "summary_rows", "summary_html", "notes_html", "fitted_series", "model_at", "layer_rows",
           "layers_html", "evenly_spaced_inputs"]

KERNEL_COUNT_BOUNDS = KERNEL_COUNT_RANGE       # sizes per kernel the page builds (each is one isotherm)


def size_word(shape: str) -> str:
    """The shape's own size in words (hexagon: side length; cylinder: radius; slit: width)."""
    return SIZE_NAMES.get(shape, "size")


def diameter_factor(shape: str) -> float:
    """Equivalent diameter per Å of the shape's size (`porefill.physics.distribution.kernel.pore_diameter_angstrom`)."""
    return float(pore_diameter_angstrom(shape, 1.0))


def default_kernel_inputs(shape: str) -> tuple[float, float, int]:
    """(first size Å, last size Å, count) of the default kernel (`default_sizes`: diameters 2–10 nm)."""
    sizes = default_sizes(shape, DEFAULT_KERNEL_SIZES)
    return round(sizes[0], 2), round(sizes[-1], 2), DEFAULT_KERNEL_SIZES


def evenly_spaced_inputs(sizes) -> tuple[float, float, int] | None:
    """(first, last, count) when ``sizes`` are evenly spaced (to 1e-6 Å), else None."""
    s = np.asarray(sizes, float)
    if s.size < 2 or not np.allclose(np.linspace(s[0], s[-1], s.size), s, rtol=0, atol=1e-6):
        return None
    return float(s[0]), float(s[-1]), int(s.size)


def kernel_spec(base, first, last, count) -> KernelSpec:
    """The kernel the page's inputs ask for: ``count`` evenly spaced sizes from ``first`` to ``last`` (Å, the
    shape's own size) on ``base`` (title and notes dropped). ValueError in one line naming the input."""
    word = size_word(base.shape)
    for name, v in ((f"first {word}", first), (f"last {word}", last)):
        if v is None or isinstance(v, bool) or not math.isfinite(float(v)) or float(v) <= 0:
            raise ValueError(f"kernel {name} must be a positive number of Å; got {v!r}")
    lo, hi = KERNEL_COUNT_BOUNDS
    if count is None or isinstance(count, bool) or int(count) != count or not lo <= int(count) <= hi:
        raise ValueError(f"kernel sizes must be a whole number from {lo} to {hi}; got {count!r}")
    if float(last) <= float(first):
        raise ValueError(f"kernel last {word} ({float(last):g} Å) must be larger than the first ({float(first):g} Å)")
    sizes = tuple(float(round(v, 6)) for v in np.linspace(float(first), float(last), int(count)))
    try:
        return KernelSpec(base.replace(title="", notes=""), sizes, n_points=DEFAULT_KERNEL_POINTS)
    except ValueError as exc:
        raise ValueError(f"kernel sizes: {str(exc).splitlines()[0]}") from None


def _edges(s: np.ndarray) -> np.ndarray:
    from porefill.physics.distribution.inversion import bin_edges

    return bin_edges(s)


def bar_columns(saved) -> dict[str, np.ndarray]:
    """Columns of the distribution plot: ``size`` (Å), ``width`` (bin width, Å), ``density`` (cm³/g per Å of
    size), ``lower``/``upper`` (density ∓ its bootstrap error, NaN where none), ``volume`` and ``stderr``
    (cm³/g per bin), ``diameter`` (Å), ``edge`` (each bin's upper edge, Å) and ``cumulative`` (cm³/g up to it)."""
    s = np.asarray(saved.sizes_angstrom, float)
    w = np.asarray(saved.pore_volume_cm3_g, float)
    err = np.asarray(saved.stderr_cm3_g, float) if saved.stderr_cm3_g else np.full(s.size, np.nan)
    edges = _edges(s)
    width = np.diff(edges)
    density = w / width
    e = err / width
    return {"size": s, "width": width, "density": density, "lower": np.maximum(density - e, 0.0),
            "upper": density + e, "volume": w, "stderr": err,
            "diameter": pore_diameter_angstrom(saved.kernel.shape, s), "edge": edges[1:], "cumulative": np.cumsum(w)}


def _value(v, digits=4) -> str:
    return "—" if v is None or not math.isfinite(v) else f"{v:.{digits}g}"


def summary_rows(saved) -> list[tuple[str, str, str, str]]:
    """(what, value, ± error, unit) of the summary: total pore volume, mode, mean, median (each size also as
    its equivalent diameter) and width."""
    summary, err = dict(saved.summary), dict(saved.summary_stderr)
    word = size_word(saved.kernel.shape)
    f = diameter_factor(saved.kernel.shape)
    rows = [("total pore volume", _value(summary.get("total_cm3_g")), _value(err.get("total_cm3_g"), 2), "cm³/g")]
    for key, what in (("mode", "most pore volume at"), ("mean", "mean"), ("median", "median")):
        v = summary.get(key)
        shown = _value(v) + ("" if v is None or not math.isfinite(v) else f" (diameter {v * f:.3g} Å)")
        rows.append((f"{what} {word}", shown, _value(err.get(key), 2), "Å"))
    rows.append((f"width (standard deviation of the {word})", _value(summary.get("width")),
                 _value(err.get("width"), 2), "Å"))
    return rows


def summary_html(saved, *, source: str) -> str:
    """The summary table, the reduced χ² of the distribution beside the best single size's, and ``source``
    (where the distribution came from)."""
    rows = "".join(f"<tr><td>{html.escape(a)}</td><td class='porefill-psd-value'>{html.escape(b)}</td>"
                   f"<td>{'± ' + html.escape(c) if c != '—' else '—'}</td><td>{html.escape(d)}</td></tr>"
                   for a, b, c, d in summary_rows(saved))
    k = saved.kernel
    one = dict(saved.single_size)
    red = _value(saved.reduced_chi2, 3)
    compare = f"<p>Reduced χ²: distribution <b>{red}</b>"
    if one:
        compare += (f"; one {html.escape(size_word(k.shape))} alone ({_value(one.get('size_angstrom'), 4)} Å, "
                    f"{_value(one.get('pore_volume_cm3_g'), 3)} cm³/g): <b>{_value(one.get('reduced_chi2'), 3)}</b>")
    compare += (". Errors: standard deviations over bootstrap resamples of the residuals"
                + (f"; smoothing strength λ = {saved.lam:.3g} (generalised cross-validation)" if saved.lam else "")
                + ".</p>")
    return (f"<p>{html.escape(source)} Kernel: {html.escape(k.adsorbate)} at {k.temperature_k:g} K, "
            f"{html.escape(k.shape)} pores, {len(saved.sizes_angstrom)} {html.escape(size_word(k.shape))}s "
            f"{saved.sizes_angstrom[0]:g}–{saved.sizes_angstrom[-1]:g} Å, {html.escape(k.site_model_used)} sites.</p>"
            "<table class='porefill-psd-table'><tr><th>quantity</th><th>value</th><th>error</th><th>unit</th></tr>"
            f"{rows}</table>{compare}")


def notes_html(notes) -> str:
    """The inversion's notes, warnings first and marked."""
    notes = list(notes)
    warn = [n for n in notes if n.startswith("warning:")]
    plain = [n for n in notes if not n.startswith("warning:")]
    items = ([f"<li class='porefill-psd-warning'><b>Warning:</b> {html.escape(n[len('warning:'):].strip())}</li>"
              for n in warn] + [f"<li>{html.escape(n)}</li>" for n in plain])
    return f"<ul>{''.join(items)}</ul>" if items else ""


def fitted_series(dist, axis: str, *, n_points: int = 300) -> list[dict]:
    """Per run of a computed `Distribution`: its measured points and weighted residuals, and the
    distribution's isotherm through them, on ``axis`` ('pressure': Pa; 'relative-pressure': p/p0). Each
    dict: ``name``, ``short`` (for a legend), ``unit``, ``x``/``measured``/``residual`` at the points, ``curve_x``/``curve_y``."""
    kernel = dist.kernel
    p0 = kernel.saturation_pressure_pa
    lo, hi = kernel.pressure_span_pa()
    scale = 1.0 if axis == "pressure" else 1.0 / p0
    out = []
    for i, f in enumerate(dist.fitted):
        run = f["run"]
        p = run.pressure_pa(p0)[f["points"]]
        if p.size:
            grid = np.linspace(math.log(max(p.min() / 1.5, lo)), math.log(min(p.max() * 1.5, hi)), n_points)
        else:
            grid = np.linspace(math.log(lo), math.log(hi), n_points)
        curve = model_at(dist, i, grid)
        out.append({"name": f"{run.name} ({f['branch']} branch)", "short": f"run {i + 1}: {run.leg or 'measured'}",
                    "unit": run.amount_unit, "x": p * scale,
                    "measured": np.asarray(f["measured"], float), "residual": np.asarray(f["residual"], float),
                    "curve_x": np.exp(grid) * scale, "curve_y": curve})
    return out


def model_at(dist, i: int, log_p) -> np.ndarray:
    """The distribution's amount for run ``i`` of ``dist.fitted`` at ln p (Pa), in the run's unit: Σ_j w_j ×
    (the kernel's atoms per Å³ of pore of size j on the run's branch) × (the run's unit per atom per Å³ of
    1 cm³/g) — the inversion's own matrix (`porefill.physics.distribution.inversion.kernel_matrix`)."""
    from porefill.physics.distribution.inversion import per_volume_factor

    f = dist.fitted[i]
    w = np.asarray(dist.pore_volume_cm3_g, float)
    density = dist.kernel.per_pore_volume(np.asarray(log_p, float), f["branch"])
    return density @ w * per_volume_factor(f["run"], dist.sample)


def layer_rows(carried) -> list[dict]:
    """Per layer of a `CarriedPrediction`: ``name``, ``fraction`` (of the pore volume forming it below p0) and
    ``p10``/``median``/``p90`` (Pa, None where it does not form)."""
    return [{"name": layer["name"], "fraction": layer["volume_fraction"], "p10": layer.get("p10_pa"),
             "median": layer.get("median_pa"), "p90": layer.get("p90_pa")} for layer in carried.layers]


def _fraction(v: float) -> str:
    return "< 1 %" if 0 < v < 0.01 else f"{100 * v:.0f} %"


def layers_html(carried) -> str:
    """The table of where each layer forms in the carried gas (volume-weighted 10/50/90 % pressures)."""
    base = carried.kernel.spec.base
    p0 = carried.saturation_pressure_pa
    rows, groups = [], []
    for r in layer_rows(carried):
        key = (None if r["median"] is None else tuple(f"{r[k]:.3g}" for k in ("p10", "median", "p90")),
               _fraction(r["fraction"]))
        if groups and groups[-1][1] == key and r["name"].startswith("layer") and groups[-1][0][-1].startswith("layer"):
            groups[-1][0].append(r["name"])          # layers that form together: one row
        else:
            groups.append(([r["name"]], key, r))
    for names, key, r in groups:
        name = names[0] if len(names) == 1 else f"layers {names[0].removeprefix('layer ')} to {names[-1].removeprefix('layer ')}"
        if r["median"] is None:
            cells = "<td colspan='4'>does not form below p₀</td>"
        else:
            cells = "".join(f"<td>{r[k]:.3g}</td>" for k in ("p10", "median", "p90")) + f"<td>{r['median'] / p0:.3g}</td>"
        rows.append(f"<tr><td>{html.escape(name)}</td>{cells}<td>{key[1]}</td></tr>")
    return (f"<p><b>{html.escape(base.adsorbate)} at {base.temperature_k:g} K</b> in the same sample "
            f"({html.escape(base.site_model_used)} sites, p₀ = {p0:.4g} Pa): the pressures (Pa) over which each "
            "layer forms, weighted by the pore volume of the sizes that form it.</p>"
            "<table class='porefill-psd-layers-table' style='border-spacing: 12px 2px'><tr><th>layer</th>"
            "<th>10 % (Pa)</th><th>median (Pa)</th><th>90 % (Pa)</th><th>median p/p₀</th>"
            f"<th>of the pore volume</th></tr>{''.join(rows)}</table>")
