"""Figures for slides and reports, drawn on the server with matplotlib (no browser, no network).

Each ``*_figure`` function takes results the physics layer computed and returns a `matplotlib.figure.Figure`
(built without pyplot, so nothing global is touched and threads or worker processes can draw at once);
`render` turns one into PNG bytes 1920 px wide (a full-HD slide) or SVG text. `figure_job` computes and
renders one of the dashboard's plots by name (``FIGURES``) for a scenario: it runs in a worker.
No Panel here.
"""
from __future__ import annotations

import io

import numpy as np
from porefill.physics.choices import DEFAULT_POINTS
from porefill.physics.caching import memoize
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

__all__ = ["FIGURES", "SLIDE_WIDTH_PX", "render", "figure_job", "potential_map_figure", "line_cuts_figure",
           "isotherm_figure", "compressibility_figure", "occupancy_figure", "quantum_density_figure",
           "site_models_figure", "measured_figure", "sizing_figure", "measured_points", "literal",
           "distribution_figure", "caption", "SITE_FAMILY_COLOURS"]

SLIDE_WIDTH_PX = 1920
ADS, DES, EQ, STEP = "#1b6ca8", "#d1495b", "#333333", "#f4a259"
# one colour per site family, on the page (Sizing tab) and in every figure and report; the wall of a cylinder
# or slit is drawn as a polygon's face is
SITE_FAMILY_COLOURS = {"corner": "#d1495b", "face": "#1b6ca8", "wall": "#1b6ca8", "ring": "#2e8540",
                       "centre": "#e08a00", "spread": "#777777"}
FIGURES = {                        # name -> what the dashboard's menu says
    "potential-map": "Wall potential map",
    "line-cuts": "Line cuts of the wall potential",
    "isotherm": "Isotherm (log pressure)",
    "isotherm-mu": "Isotherm (chemical potential)",
    "isotherm-relative": "Isotherm (p/p₀, linear)",
    "compressibility": "Compressibility dN/dμ",
    "occupancy": "Site occupancy at the picked pressure",
}
_SIZE_IN = (8.0, 5.0)              # inches: 1920 px wide at 240 dpi; text sizes read well on a slide


def literal(text: str) -> str:
    """``text`` as matplotlib draws it letter for letter: every ``$`` escaped, so a name from a file or a
    title ("sample $x_{1$", "$5 and $6") is never read as math text (matplotlib unescapes ``\\$`` when it
    draws a text that is not math)."""
    return str(text).replace("$", r"\$")


def _figure(size=_SIZE_IN) -> Figure:
    fig = Figure(figsize=size, layout="constrained")
    FigureCanvasAgg(fig)
    return fig


def render(fig: Figure, fmt: str, *, width_px: int = SLIDE_WIDTH_PX) -> bytes:
    """PNG bytes ``width_px`` wide, or SVG (UTF-8 bytes; its text stays text, editable in a drawing program,
    in the font family the figure names)."""
    out = io.BytesIO()
    if fmt == "png":
        fig.savefig(out, format="png", dpi=width_px / fig.get_figwidth())
    elif fmt == "svg":
        import matplotlib
        with matplotlib.rc_context({"svg.fonttype": "none", "svg.hashsalt": "porefill"}):
            fig.savefig(out, format="svg", metadata={"Date": None})
    else:
        raise ValueError(f"format must be 'png' or 'svg'; got {fmt!r}")
    return out.getvalue()


def _outline(ax, scenario) -> None:
    for line in scenario.pore().outline():
        ax.plot(line[:, 0], line[:, 1], color="black", lw=1.5)


# the pore page ----------------------------------------------------------------------------------------
def potential_map_figure(scenario, *, n: int = 200) -> Figure:
    """Wall potential V(x, y) with contours and the pore outline (K; grey: solid)."""
    from porefill.physics.pore.wall_potential import deepest_minimum, potential_map

    pore, pair = scenario.pore(), scenario.pair()
    m = potential_map(pore=pore, pair=pair, n=n)
    values = np.where(np.isfinite(m.values), m.values, np.nan)
    finite = values[np.isfinite(values)]
    lo = float(finite.min())
    hi = 0.0 if lo < 0 else float(np.median(finite))
    fig = _figure((6.0, 5.0))
    ax = fig.add_subplot()
    ax.set_facecolor("#dddddd")
    import matplotlib

    cmap = matplotlib.colormaps["viridis"].with_extremes(over="#fdf6d8")     # pale: V > 0 K, as on the page
    img = ax.imshow(np.ma.masked_invalid(values), origin="lower", cmap=cmap, vmin=lo, vmax=hi,
                    extent=(m.x[0], m.x[-1], m.y[0], m.y[-1]), interpolation="nearest")
    ax.contour(m.x, m.y, np.ma.masked_invalid(values), levels=np.linspace(lo, hi, 11)[1:-1], colors="white",
               linewidths=0.6, alpha=0.75)
    _outline(ax, scenario)
    low = deepest_minimum(pore=pore, pair=pair)
    ax.plot([low.x_angstrom], [low.y_angstrom], marker="x", color="#d1495b", ms=8)
    ax.set(xlabel="x (Å)", ylabel="y (Å)", aspect="equal",
           title=f"Wall potential, deepest {low.depth_k:.1f} K (×); pale: V > 0 K, grey: solid")
    fig.colorbar(img, ax=ax, label="V (K)", shrink=0.85, extend="max")
    return fig


def line_cuts_figure(scenario, *, points: int = 300) -> Figure:
    """The wall potential along the pore's line cuts from the centre."""
    from porefill.physics.pore.line_cuts import line_cuts

    fig = _figure()
    ax = fig.add_subplot()
    low = 0.0
    for cut in line_cuts(pore=scenario.pore(), pair=scenario.pair(), points=points):
        low = min(low, cut.minimum_k)
        ax.plot(cut.r_angstrom, cut.potential_k, lw=2, label=cut.label)
    ax.set_ylim(low * 1.08 if low < 0 else -1.0, abs(low) * 0.4 if low < 0 else 1.0)
    ax.set(xlabel="distance from the pore centre (Å)", ylabel="V (K)", title="Line cuts")
    ax.legend(loc="lower left")
    return fig


def _amount_label(iso) -> str:
    return "coverage (per nm²)" if iso.setup.scenario.shape == "slit" else "coverage (per nm of pore)"


def isotherm_figure(iso, *, axis: str = "pressure", pick_pa: float | None = None, title: str = "") -> Figure:
    """Both branches against log pressure (``axis`` "pressure"), linear p/p₀ ("relative-pressure") or μ
    ("chemical-potential"), steps numbered as in the step table, p₀ dashed, the picked pressure (if any) in
    orange."""
    fig = _figure()
    ax = fig.add_subplot()
    log = axis == "pressure"
    relative = axis == "relative-pressure"
    x = iso.pressure_pa if log else (iso.relative_pressure if relative else iso.mu)
    ads, des = iso.per_nm(iso.measured_branch("adsorption")), iso.per_nm(iso.measured_branch("desorption"))
    ax.plot(x, ads, color=ADS, lw=2, label="adsorption")
    ax.plot(x, des, color=DES, lw=2, ls="--", label="desorption (as measured)")
    if iso.measured_branch("desorption") != "desorption":
        ax.plot(x, iso.per_nm("desorption"), color="#9a9a9a", lw=1.2, ls=":", label="mean-field desorption limit")
    p0 = iso.setup.saturation_pressure_pa
    for i, s in enumerate(iso.steps, 1):
        sx = s.pressure_pa if log else (s.pressure_pa / p0 if relative else s.mu_k)
        sy = float(np.interp(s.mu_k, iso.mu, 0.5 * (ads + des)))
        ax.plot([sx], [sy], "o", color=STEP, mec="black", ms=7, zorder=5)
        ax.annotate(str(i), (sx, sy), xytext=(6, -12), textcoords="offset points", fontsize=10)
    ax.axvline(p0 if log else (1.0 if relative else iso.setup.mu_coexistence_k), color="#888888", ls="--",
               lw=1, label="p₀")
    if pick_pa is not None:
        ax.axvline(pick_pa if log else (pick_pa / p0 if relative else float(iso.setup.scale.mu_k(pick_pa))),
                   color=STEP, lw=2)
    if log:
        ax.set_xscale("log")
    if relative:
        ax.set_xlim(0.0, 1.0)
    xlabel = ("pressure p (Pa)" if log else "relative pressure p/p₀" if relative else "chemical potential μ (K)")
    ax.set(xlabel=xlabel, ylabel=_amount_label(iso),
           title=literal(title) if title else "Isotherm (mean-field lattice gas)")
    ax.legend(loc="upper left")
    return fig


def compressibility_figure(iso) -> Figure:
    fig = _figure()
    ax = fig.add_subplot()
    ax.plot(iso.mu, iso.compressibility_per_nm(iso.adsorption), color=ADS, lw=1.5, label="adsorption")
    ax.plot(iso.mu, iso.compressibility_per_nm(iso.desorption), color=DES, lw=1.5, ls="--", label="desorption")
    ax.set(xlabel="chemical potential μ (K)", ylabel="dN/dμ (per nm per K)", title="Compressibility dN/dμ")
    ax.legend(loc="upper left")
    return fig


def occupancy_figure(iso, *, pressure_pa: float, branch: str = "equilibrium") -> Figure:
    """Occupancy of every site at the grid pressure nearest ``pressure_pa`` on ``branch``."""
    from porefill.physics.sites.lattice import slit_row_sites

    k = int(np.argmin(np.abs(np.log(iso.pressure_pa) - np.log(pressure_pa))))
    occ = iso.site_occupancy(k, branch)
    lat, sc = iso.setup.lattice, iso.setup.scenario
    x, y = lat.x, lat.y
    if lat.shape == "slit":
        x, y, site = slit_row_sites(lat, sc.size_angstrom)
        occ = occ[site]
    fig = _figure((6.0, 5.0))
    ax = fig.add_subplot()
    dots = ax.scatter(x, y, c=occ, cmap="cividis", vmin=0.0, vmax=1.0, s=60, edgecolors="#444444")
    _outline(ax, sc)
    ax.set(xlabel="x (Å)", ylabel="y (Å)", aspect="equal",
           title=f"Site occupancy ({branch}) at p = {iso.pressure_pa[k]:.3g} Pa")
    fig.colorbar(dots, ax=ax, label="occupancy", shrink=0.85)
    return fig


# quantum, measured, sizing ---------------------------------------------------------------------------------
def quantum_density_figure(summary, scenario) -> Figure:
    """The thermal one-atom probability density (`porefill.explorer.views.model_comparison.ComparisonSummary`)."""
    img = summary.images["thermal density"]
    x0, x1, y0, y1 = summary.extent
    fig = _figure((6.0, 5.0))
    ax = fig.add_subplot()
    shown = ax.imshow(np.ma.masked_invalid(img), origin="lower", extent=(x0, x1, y0, y1), cmap="cividis")
    _outline(ax, scenario)
    ax.set(xlabel="x (Å)", ylabel="y (Å)", aspect="equal", title="One-atom thermal probability density")
    fig.colorbar(shown, ax=ax, label="density (Å⁻²)", shrink=0.85)
    return fig


def site_models_figure(summary) -> Figure:
    """Equilibrium isotherms with the classical and the quantum site model."""
    fig = _figure()
    ax = fig.add_subplot()
    for model, colour in (("classical", DES), ("quantum", ADS)):
        curve = summary.curves[model]
        ax.plot(curve["p"], curve["n"], color=colour, lw=2, label=f"{model} sites")
    ax.set_xscale("log")
    ax.set(xlabel="pressure p (Pa)", ylabel="coverage (per nm of pore)", title="Site models compared")
    ax.legend(loc="upper left")
    return fig


def measured_points(iso, run, sample) -> tuple[np.ndarray, np.ndarray]:
    """(pressure in Pa, amount per nm) of a measured run's points that have a pressure, on the model's axes
    (`porefill.physics.fitting.measured.amount_to_model`; p/p₀ data with the model's p₀)."""
    from porefill.physics.fitting.measured import amount_to_model

    p = run.pressure_pa(iso.setup.saturation_pressure_pa)
    n = amount_to_model(run, iso.basis, sample) * 10.0
    keep = np.isfinite(p)
    return p[keep], n[keep]


def measured_figure(iso, runs, sample, *, fitted=None) -> Figure:
    """Measured runs (points) over the model's branches (lines), and the fitted model's (dotted) if given."""
    fig = _figure()
    ax = fig.add_subplot()
    ax.plot(iso.pressure_pa, iso.per_nm(iso.measured_branch("adsorption")), color=ADS, lw=1.5,
            label="model, adsorption")
    ax.plot(iso.pressure_pa, iso.per_nm(iso.measured_branch("desorption")), color=DES, lw=1.5, ls="--",
            label="model, desorption (as measured)")
    if fitted is not None:
        ax.plot(fitted.pressure_pa, fitted.per_nm("adsorption"), color="#2e8540", lw=2, ls=":",
                label="fitted model, adsorption")
    for run in runs:
        try:
            p, n = measured_points(iso, run, sample)
        except ValueError:
            continue                       # the report's table says why (a missing sample value)
        ax.plot(p, n, "o" if run.leg == "adsorption" else "s", ms=5, mfc="none",
                color=ADS if run.leg == "adsorption" else DES, label=literal(run.name))
    ax.set_xscale("log")
    ax.set(xlabel="pressure p (Pa)", ylabel=_amount_label(iso), title="Measured over the model")
    ax.legend(loc="upper left", fontsize=8)
    return fig


def sizing_figure(points: list[dict], *, window_pa: tuple[float, float] | None = None) -> Figure:
    """Pressure of every layer step against pore size (`porefill.physics.sweep.sweep_point` results), coloured by
    what fills; the apparatus's pressure window shaded when given."""
    colours = SITE_FAMILY_COLOURS
    fig = _figure()
    ax = fig.add_subplot()
    seen = set()
    for pt in points:
        for step, fill in zip(pt["steps"], pt["step_fills"]):
            label = None if fill in seen else fill
            seen.add(fill)
            ax.plot([pt["size_angstrom"]], [step["pressure_pa"]], "o", color=colours.get(fill, "#555555"),
                    ms=6, label=label)
    if window_pa is not None:
        ax.axhspan(*window_pa, color="#cccccc", alpha=0.4, label="pressure window")
    ax.set_yscale("log")
    ax.set(xlabel="pore size (Å)", ylabel="step pressure (Pa)", title="Layer steps against pore size")
    if seen:
        ax.legend(loc="best")
    return fig


def distribution_figure(saved) -> Figure:
    """A pore-size distribution (`porefill.explorer.files.saved_distribution.SavedDistribution`): pore volume
    per Å of size as bars with their bootstrap errors, and the cumulative pore volume on the right axis."""
    from porefill.physics.choices import SIZE_NAMES
    from porefill.physics.distribution.inversion import bin_edges
    from porefill.physics.distribution.kernel import pore_diameter_angstrom

    s = np.asarray(saved.sizes_angstrom, float)
    w = np.asarray(saved.pore_volume_cm3_g, float)
    edges = bin_edges(s)
    width = np.diff(edges)
    err = np.asarray(saved.stderr_cm3_g, float) / width if saved.stderr_cm3_g else None
    fig = _figure()
    ax = fig.add_subplot()
    ax.bar(s, w / width, width=width * 0.9, color=ADS, alpha=0.75, label="pore volume per Å",
           yerr=None if err is None else np.nan_to_num(err), ecolor="#555555", capsize=2)
    right = ax.twinx()
    right.step(edges, np.concatenate([[0.0], np.cumsum(w)]), where="post", color=EQ, lw=1.5,
               label="cumulative pore volume")
    shape = saved.kernel.shape
    per = float(pore_diameter_angstrom(shape, 1.0))
    top = ax.secondary_xaxis("top", functions=(lambda x: x * per / 10.0, lambda d: d * 10.0 / per))
    top.set_xlabel("equivalent diameter (nm)")
    ax.set(xlabel=f"pore {SIZE_NAMES.get(shape, 'size')} (Å)", ylabel="dV/ds (cm³/g per Å)",
           title=literal(f"Pore-size distribution ({saved.kernel.adsorbate}, {saved.kernel.temperature_k:g} K)"))
    right.set_ylabel("cumulative pore volume (cm³/g)")
    right.set_ylim(bottom=0)
    ax.set_ylim(bottom=0)
    lines = ax.get_legend_handles_labels()
    more = right.get_legend_handles_labels()
    ax.legend(lines[0] + more[0], lines[1] + more[1], loc="upper left", fontsize=8)
    return fig


# the dashboard's downloads ------------------------------------------------------------------------------
@memoize(maxsize=8)
def model_isotherm(scenario, n_points: int = DEFAULT_POINTS):
    """The isotherm the dashboard shows for ``scenario`` (title and notes dropped)."""
    from porefill.physics.lattice_gas.adsorption import compute_isotherm

    return compute_isotherm(scenario.model_key(), n_points=n_points)


def figure_job(scenario, name: str, fmt: str, *, pick_pa: float | None = None, branch: str = "equilibrium") -> bytes:
    """One of ``FIGURES`` for ``scenario`` as PNG (1920 px wide) or SVG bytes (runs in a worker)."""
    if name not in FIGURES:
        raise ValueError(f"figure must be one of {', '.join(FIGURES)}; got {name!r}")
    if name == "potential-map":
        fig = potential_map_figure(scenario)
    elif name == "line-cuts":
        fig = line_cuts_figure(scenario)
    else:
        iso = model_isotherm(scenario)
        if name in ("isotherm", "isotherm-mu", "isotherm-relative"):
            axis = {"isotherm": "pressure", "isotherm-mu": "chemical-potential"}.get(name, "relative-pressure")
            fig = isotherm_figure(iso, axis=axis, pick_pa=pick_pa)
        elif name == "compressibility":
            fig = compressibility_figure(iso)
        else:
            p = pick_pa if pick_pa is not None else float(np.sqrt(iso.pressure_pa[0] * iso.pressure_pa[-1]))
            fig = occupancy_figure(iso, pressure_pa=p, branch=branch)
    fig.supxlabel(literal(caption(scenario)), fontsize=8, color="#555555")
    return render(fig, fmt)


def caption(scenario) -> str:
    """What a slide figure shows, in one line: gas, pore, temperature, site model, pore ends."""
    from porefill.physics.choices import SIZE_NAMES

    wall = scenario.effective_wall_angstrom
    where = "isolated" if wall is None else f"{wall:g} Å walls"
    if scenario.plating is not None:
        where += f", {scenario.plating}-plated ×{scenario.plating_layers or 1}"
    return (f"{scenario.adsorbate} at {scenario.temperature_k:g} K in a {scenario.shape} pore, "
            f"{SIZE_NAMES[scenario.shape]} {scenario.size_angstrom:g} Å ({where}), {scenario.solid}; "
            f"{scenario.site_model_used} sites, pore ends {scenario.pore_ends}")
