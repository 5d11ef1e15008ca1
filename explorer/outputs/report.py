"""A self-contained HTML report of one scenario file: opens offline, with no link to anything outside it.

Sections (each a ``<section id=...>``, ``SECTIONS``): the inputs with where each parameter comes from, the
wall potential map and line cuts, the isotherm with its step table, the quantum states (light gases), the
measured runs over the model and a saved fit, a saved pore-size distribution, the sizing map (layer steps against pore size), the model's
assumptions and the safety cautions. Figures are SVG drawn on the server (`porefill.explorer.outputs.figures`) and embedded
as data URIs; the page has no script at all. Everything that came from a file is HTML-escaped.
No Panel here: `porefill report` and the dashboard's button (in a worker) both call `build_report`.
"""
from __future__ import annotations

import base64
import datetime as _dt
import html
from typing import Callable

import numpy as np

from porefill.physics.choices import DEFAULT_POINTS
from porefill.explorer.outputs import figures as fg
from porefill.explorer.outputs.fit_export import STATISTIC_LABELS, statistic_label

__all__ = ["SECTIONS", "build_report", "default_sizes"]

SECTIONS = {"inputs": "Inputs and where they come from", "potential": "Wall potential",
            "isotherm": "Isotherm and layer steps", "quantum": "Quantum states", "measured": "Measured data and fit",
            "distribution": "Pore-size distribution", "sizing": "Sizing map", "assumptions": "The model and its assumptions", "safety": "Safety"}
_CSS = """
body { font-family: system-ui, sans-serif; max-width: 1000px; margin: 1.5em auto; padding: 0 1em; color: #222; }
h1 { font-size: 1.6em; } h2 { border-bottom: 1px solid #ccc; padding-bottom: 0.2em; margin-top: 1.6em; }
table { border-collapse: collapse; margin: 0.6em 0; font-size: 0.92em; }
th, td { border: 1px solid #ccc; padding: 0.25em 0.6em; text-align: left; vertical-align: top; }
th { background: #f3f3f3; } img.figure { max-width: 100%; height: auto; display: block; margin: 0.6em 0; }
.note { color: #555; font-size: 0.92em; } .warning { color: #8a4b00; font-weight: bold; }
nav a { margin-right: 0.8em; }
"""


def _e(value) -> str:
    return html.escape(str(value))


def _img(fig, alt: str) -> str:
    data = base64.b64encode(fg.render(fig, "svg")).decode("ascii")
    return f"<img class='figure' alt='{_e(alt)}' src='data:image/svg+xml;base64,{data}'>"


def _table(head: list[str], rows: list[list], *, raw: bool = False) -> str:
    cells = "".join(f"<th>{_e(h)}</th>" for h in head)
    body = "".join("<tr>" + "".join(f"<td>{c if raw else _e(c)}</td>" for c in row) + "</tr>" for row in rows)
    return f"<table><tr>{cells}</tr>{body}</table>"


def _section(key: str, body: str) -> str:
    return f"<section id='{key}' class='porefill-report-section'><h2>{_e(SECTIONS[key])}</h2>{body}</section>"


def _g(v, digits: int = 6) -> str:
    return "—" if v is None else f"{v:.{digits}g}"


# sections ---------------------------------------------------------------------------------------------
def _inputs(doc, iso) -> str:
    from porefill.physics.substances.vapour_pressure import temperature_range

    sc, setup = doc.scenario, iso.setup
    pair = sc.pair()
    given = "given in the scenario file"
    rows = [["pore", f"{sc.shape}, size {sc.size_angstrom:g} Å", given],
            ["wall", "isolated pore (unbounded solid)" if sc.effective_wall_angstrom is None
             else f"{sc.effective_wall_angstrom:g} Å between neighbouring pores", given],
            ["adsorbate, solid", f"{sc.adsorbate} on {sc.solid}", given],
            ["temperature", f"{sc.temperature_k:g} K", given],
            ["pair ε", f"{pair.epsilon_k:.4g} K", pair.origin],
            ["pair σ", f"{pair.sigma_angstrom:.4g} Å", pair.origin],
            ["solid density ρ", f"{pair.density_per_a3:.4g} Å⁻³", pair.origin],
            ["saturated vapour pressure p₀", f"{setup.saturation_pressure_pa:.6g} Pa",
             temperature_range(sc.adsorbate)[2]],
            ["bond energy ε_b", setup.bond_note, "given" if sc.bond_energy_k is not None else "porefill's rule"],
            ["lattice spacing", f"{setup.spacing_angstrom:.4f} Å", setup.geometry.spacing_note],
            ["rows of sites", f"{setup.geometry.row_fraction:.3f} row steps", iso.row_note],
            ["site model", sc.site_model_used, given if sc.site_model else "porefill's default for the gas"],
            ["pore volume", "—" if sc.pore_volume_cm3_g is None else f"{sc.pore_volume_cm3_g:g} cm³/g",
             given if sc.pore_volume_cm3_g is not None else "not given"]]
    if pair.plating is not None:
        pl = pair.plating
        rows.insert(3, ["wall plating", f"{pl.layers} layer(s) of {pl.gas} at "
                        + ", ".join(f"{z:.3g}" for z in pl.distances_angstrom) + f" Å from the solid, "
                        f"{pl.areal_density_per_a2:.4g} Å⁻² each; {sc.adsorbate}–{pl.gas} ε {pl.epsilon_k:.4g} K, "
                        f"σ {pl.sigma_angstrom:.4g} Å", pl.source])
    out = _table(["quantity", "value", "source"], rows)
    if doc.sample is not None:
        names = {"mass_g": "mass (g)", "pore_volume_cm3_g": "pore volume (cm³/g)",
                 "surface_area_m2_g": "surface area (m²/g)", "d100_angstrom": "d₁₀₀ (Å)"}
        srows = [[label, _g(getattr(doc.sample, n)), doc.sample.source_of(n) or "not given"]
                 for n, label in names.items()]
        out += "<h3>Sample</h3>" + _table(["quantity", "value", "source"], srows)
    if sc.notes:
        out += f"<p class='note'>Notes: {_e(sc.notes)}</p>"
    return out


def _potential(sc) -> str:
    from porefill.physics.pore.wall_potential import deepest_minimum

    from porefill.explorer.outputs.formatting import format_minimum

    low = deepest_minimum(pore=sc.pore(), pair=sc.pair())
    return (f"<p>{_e(format_minimum(low))}.</p>" + _img(fg.potential_map_figure(sc), "wall potential map")
            + _img(fg.line_cuts_figure(sc), "line cuts"))


def _steps_table(iso) -> str:
    rows = []
    for i, s in enumerate(iso.steps, 1):
        where = s.where
        loop = ""
        if s.kind == "first-order":
            loop = f"{_g(s.desorption_jump_pressure_pa, 3)} – {_g(s.adsorption_jump_pressure_pa, 3)}"
        rows.append([i, where, s.kind, f"{s.pressure_pa:.4g}", f"{s.relative_pressure:.4g}", f"{s.mu_k:.3f}",
                     f"{s.added_per_nm:.3f}", loop])
    if not rows:
        return "<p>No steps in this pressure range.</p>"
    return "<div class='porefill-step-table'>" + _table(
        ["#", "sites that fill", "kind", "p (Pa)", "p/p₀", "μ (K)", "adds (per nm)", "hysteresis (Pa)"],
        rows) + "</div>"


def _isotherm(iso, view) -> str:
    from porefill.physics.lattice_gas.branches import branch_notes

    from porefill.explorer.outputs.isotherm_export import calibration_note

    pick = None if view.pick_log10_pa is None else 10.0 ** view.pick_log10_pa
    return (_img(fg.isotherm_figure(iso, axis="pressure", pick_pa=pick), "isotherm")
            + _img(fg.compressibility_figure(iso), "compressibility") + _steps_table(iso)
            + "<p class='note'>First-order steps are placed where the branches' grand potentials cross; the "
              "hysteresis column gives the pressures where the desorption and adsorption branches jump.</p>"
            + "<ul class='note'>" + "".join(f"<li>{_e(n)}</li>" for n in branch_notes(iso)) + "</ul>"
            + calibration_note(iso))


def _quantum(sc) -> str:
    from porefill.physics.sites.site_models import QUANTUM_BY_DEFAULT

    from porefill.explorer.views.model_comparison import comparison_job

    if sc.adsorbate not in QUANTUM_BY_DEFAULT and sc.site_model_used != "quantum":
        return (f"<p>Not computed: {_e(sc.adsorbate)} is treated with classical sites (its one-atom states are "
                "many and its cell averages already good; see the assumptions below).</p>")
    s = sc.model_key()
    summary = comparison_job(s)
    st = summary.states
    rows = [["ground state", f"{st['ground_state_k']:.4f} K"], ["potential minimum", f"{st['potential_minimum_k']:.4f} K"],
            ["zero-point energy", f"{st['zero_point_energy_k']:.4f} K"],
            ["states used", f"{st['states_used']}{' (capped)' if st['states_capped'] else ''}"],
            ["Boltzmann sum above the states (semiclassical)", f"{st['boltzmann_tail_fraction']:.2g}"],
            ["grid", f"{st['grid']['spacing_angstrom']:g} Å, {st['grid']['points']} points, energies good to "
                     f"about {st['grid']['energy_error_estimate_k']:.2g} K"],
            ["Henry constant", f"quantum {st['henry_quantum']:.4g}, classical {st['henry_classical']:.4g} "
                               "atoms per nm per Pa"]]
    bands = [[f"+{b.excitation_k:.3f}", b.degeneracy, b.where, f"{b.weight:.3g}"] for b in summary.bands[:10]]
    shifts = [[x.where, f"{x.pressure_reference_pa:.4g}", f"{x.pressure_other_pa:.4g}", f"{x.shift_mu_k:+.3f}"]
              for x in summary.shifts]
    return ("<p>Exact one-atom states of the cross-section; the site model in use is "
            f"<b>{_e(summary.model_in_use)}</b>.</p>" + _table(["", "value"], rows)
            + "<h3>Lowest bands</h3>" + _table(["excitation (K)", "degeneracy", "sites", "Boltzmann weight"], bands)
            + _img(fg.quantum_density_figure(summary, s), "one-atom probability density")
            + _img(fg.site_models_figure(summary), "site models compared")
            + "<h3>Step shifts, quantum against classical</h3>"
            + (_table(["step", "p classical (Pa)", "p quantum (Pa)", "shift in μ (K)"], shifts) if shifts
               else "<p>No step found in both.</p>"))


def _measured(doc, iso) -> str:
    from porefill.physics.lattice_gas.adsorption import compute_isotherm

    if not doc.measured and doc.fit is None:
        return "<p>The scenario holds no measured runs.</p>"
    sample = doc.sample
    if sample is None:
        from porefill.physics.fitting.measured import Sample
        sample = Sample()
    rows = []
    for run in doc.measured:
        try:
            fg.measured_points(iso, run, sample)
            note = ""
        except ValueError as exc:
            note = str(exc)
        rows.append([run.name, run.source, run.leg, _g(run.temperature_k), run.amount.size,
                     f"{run.pressure_unit}; {run.amount_unit}", note])
    out = ("<p class='note'>The measured numbers are copied into the scenario file from the source files named; "
           "amounts are shown per nm of pore through the sample description.</p>"
           + _table(["run", "source", "leg", "T (K)", "points", "units", "note"], rows)) if rows else \
        "<p>The scenario holds no measured runs, only a saved fit.</p>"
    fitted = None
    if doc.fit is not None:
        fit = doc.fit
        prows = [[p.name, _g(p.value), _g(p.stderr, 3), p.unit, f"{_g(p.low, 4)} – {_g(p.high, 4)}",
                  "free" if p.name in fit.free else "solved"] for p in fit.parameters]
        out += "<h3>Saved fit</h3>" + _table(["parameter", "value", "standard error", "unit", "bounds", ""], prows)
        out += _table(["statistic", "value", "meaning"],
                      [[statistic_label(k), _g(v), STATISTIC_LABELS.get(k, ("", ""))[1]] for k, v in fit.statistics])
        out += "".join(f"<p class='warning'>{_e(w)}</p>" for w in fit.warnings)
        if fit.scenario is not None:
            fitted = compute_isotherm(fit.scenario.model_key(), n_points=200)
    if not doc.measured:
        return out
    return out + _img(fg.measured_figure(iso, doc.measured, sample, fitted=fitted), "measured over the model")


def _distribution(doc) -> str:
    saved = doc.distribution
    if saved is None:
        return "<p>The scenario holds no pore-size distribution.</p>"
    from porefill.physics.choices import SIZE_NAMES
    from porefill.physics.distribution.kernel import pore_diameter_angstrom

    k = saved.kernel
    summary = dict(saved.summary)
    word = SIZE_NAMES.get(k.shape, "size")
    rows = [["total pore volume", _g(summary.get("total_cm3_g"), 4), "cm³/g"]]
    rows += [[f"{name} {word}", _g(summary.get(name), 4), "Å"] for name in ("mode", "mean", "median")
             if name in summary]
    if "width" in summary:
        rows.append([f"width (standard deviation of the {word})", _g(summary["width"], 3), "Å"])
    if saved.reduced_chi2 is not None:
        rows.append(["reduced χ²", _g(saved.reduced_chi2, 3), ""])
    diam = pore_diameter_angstrom(k.shape, saved.sizes_angstrom)
    err = saved.stderr_cm3_g or (None,) * len(saved.sizes_angstrom)
    table = [[_g(s, 5), _g(d / 10.0, 4), _g(w, 4), _g(e, 2)]
             for s, d, w, e in zip(saved.sizes_angstrom, diam, saved.pore_volume_cm3_g, err) if w > 0]
    notes = "".join(f"<p class='{'warning' if n.startswith('warning:') else 'note'}'>{_e(n)}</p>" for n in saved.notes)
    return (f"<p>Pore volume over pore size, found from the measured runs with a kernel of {k.adsorbate} "
            f"isotherms at {k.temperature_k:g} K ({len(saved.sizes_angstrom)} sizes, {saved.parts} pores averaged "
            f"per size, {k.site_model_used} sites): a non-negative combination, smoothed with its strength chosen "
            "by generalised cross-validation; errors from a residual bootstrap.</p>"
            + _table(["quantity", "value", "unit"], rows) + notes
            + _img(fg.distribution_figure(saved), "pore-size distribution")
            + _table([f"{word} (Å)", "equivalent diameter (nm)", "pore volume (cm³/g)", "± (cm³/g)"], table))


def default_sizes(scenario, count: int = 5) -> tuple[float, ...]:
    """Sizes for the report's sizing map: ``count`` from 0.8 to 1.2 × the scenario's, within the limits
    (five helium-4 pores with quantum sites take about half a minute on two cores)."""
    from porefill.physics.limits import SIZE_RANGE_ANGSTROM

    lo, hi = SIZE_RANGE_ANGSTROM[scenario.shape]
    sizes = np.linspace(max(lo, 0.8 * scenario.size_angstrom), min(hi, 1.2 * scenario.size_angstrom), count)
    return tuple(float(round(s, 2)) for s in sizes)


def _sizing(sc, sizes, progress) -> str:
    try:
        from porefill.physics.sweep import SweepSpec, sweep_point
    except ImportError:
        return "<p>Not available in this version of porefill.</p>"
    if not sizes:
        return "<p>Not computed (asked for no sizes).</p>"
    spec = SweepSpec(sc.model_key(), sizes_angstrom=tuple(sizes), n_points=150)
    points = []
    for k, s in enumerate(spec.scenarios()):
        if progress is not None:
            progress(f"sizing map: pore {k + 1} of {spec.size}")
        points.append(sweep_point(s, spec.n_points))
    rows = [[f"{pt['size_angstrom']:g}", len(pt["steps"]),
             ", ".join(f"{st['pressure_pa']:.3g} Pa ({fill})" for st, fill in zip(pt["steps"], pt["step_fills"]))]
            for pt in points]
    return (f"<p>Every layer step of {len(points)} pores at {sc.temperature_k:g} K (150 chemical potentials each), "
            "coloured by what fills.</p>" + _img(fg.sizing_figure(points), "sizing map")
            + _table(["size (Å)", "steps", "step pressures (what fills)"], rows))


def _markdown(text: str) -> str:
    import markdown
    return markdown.markdown(text)


# the report -------------------------------------------------------------------------------------------
def build_report(doc, *, sizes: tuple[float, ...] | None = None,
                 progress: Callable[[str], None] | None = None) -> str:
    """The HTML text of the report of ``doc`` (an `porefill.explorer.files.scenario_file.ScenarioDocument`).

    ``sizes`` are the pore sizes of the sizing map (Å; default `default_sizes`; empty: leave it out);
    ``progress(message)`` is told what is being computed. Raises ValueError when the scenario cannot be
    computed (the message says why)."""
    from porefill.physics.lattice_gas.adsorption import compute_isotherm

    from porefill.explorer.views.about import ABOUT, SAFETY

    sc = doc.scenario

    def say(message):
        if progress is not None:
            progress(message)

    say("isotherm")
    iso = compute_isotherm(sc.model_key(), n_points=DEFAULT_POINTS)
    parts = {"inputs": _inputs(doc, iso)}
    say("wall potential")
    parts["potential"] = _potential(sc)
    parts["isotherm"] = _isotherm(iso, doc.view)
    say("quantum states")
    parts["quantum"] = _quantum(sc)
    say("measured data")
    parts["measured"] = _measured(doc, iso)
    parts["distribution"] = _distribution(doc)
    parts["sizing"] = _sizing(sc, default_sizes(sc) if sizes is None else sizes, progress)
    parts["assumptions"] = _markdown(ABOUT.removesuffix(SAFETY).replace("## About porefill", "", 1))
    parts["safety"] = _markdown(SAFETY.replace("### Safety", "", 1))
    title = sc.title or "porefill scenario"
    made = _dt.datetime.now().strftime("%Y-%m-%d %H:%M")
    nav = "".join(f"<a href='#{k}'>{_e(v)}</a>" for k, v in SECTIONS.items())
    body = "".join(_section(k, parts[k]) for k in SECTIONS)
    return (f"<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'><title>{_e(title)} — porefill report"
            f"</title><style>{_CSS}</style></head><body><h1>porefill report: {_e(title)}</h1>"
            f"<p class='note'>Made on {made}. Model predictions, not measurements and not safety figures. "
            f"This file needs no network.</p><nav>{nav}</nav>{body}</body></html>\n")
