"""A table of cell strings and a complete column map to `porefill.physics.fitting.measured.MeasuredRun` objects.

Rules (each skipped or doubtful cell becomes a problem naming row, column and value):
- a cell that is not a number, an infinity, a negative pressure or amount: the row is skipped;
- an empty pressure (or "nan", "n/a", "-") with an amount: the point is kept with pressure NaN — a dosed
  point below what the gauge reads — and noted once per run;
- a zero pressure: with dosed amounts (mol, cm³(STP)) read as "no usable pressure" (NaN, noted once per
  run); otherwise the row is skipped (an isotherm is compared above zero pressure);
- a row repeating an earlier one (same pressure, amount and leg in the same run): noted, kept once;
- runs: by the run column, then by the temperature column (values within 2 % + 0.01 K of each other are one
  run, named by their median), in order of first appearance;
- legs: by the leg column, else by the direction of pressure. Rows up to the highest pressure are the
  adsorption leg (the turning point belongs to adsorption only, so no point counts twice); the rows after it
  are the desorption leg when there are at least two of them and the pressure falls more often than it
  rises, otherwise they stay in the adsorption leg. A table that lists the adsorption points and then the
  desorption points, each in rising pressure (as papers print them), is found by its one restart of the
  pressure and the second part's higher amounts (hysteresis), and said so. Rows keep file order within a
  leg; pressures going the other way are noted.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from porefill.physics.fitting.measured import DOSED_UNITS, LEGS, MeasuredRun

from porefill.explorer.files.measured.model import ColumnMap, Problems
from porefill.explorer.files.measured.table import Table

__all__ = ["build_runs", "LEG_WORDS"]

_MISSING = {"", "nan", "na", "n/a", "#n/a", "-", "--", "—", "null", "none"}
LEG_WORDS = {
    "adsorption": {"ads", "a", "adsorption", "adsorb", "ad", "up", "u", "1", "+1", "+", "1.0", "+1.0"},
    "desorption": {"des", "d", "desorption", "desorb", "de", "down", "dn", "-1", "-", "-1.0"},
}
_LEG_HINT = "not a leg (expected ads/des, a/d, adsorption/desorption, up/down or 1/-1) — row skipped"


def _rows_text(rows, limit: int = 8) -> str:
    rows = [int(r) for r in rows]
    text = ", ".join(str(r) for r in rows[:limit])
    return text + (f" and {len(rows) - limit} more" if len(rows) > limit else "")


def _numbers(cells: pd.Series, comma: bool) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(values, missing, not a number, cell text): cells as floats, NaN where missing or not a number.

    pandas parses the numbers (correctly rounded); only the cells it cannot read are looked at one by one."""
    text = cells.astype(object)
    number_text, dotted = text, np.zeros(len(text), bool)
    if comma:
        dotted = text.str.contains(".", regex=False).to_numpy(bool)
        number_text = text.str.replace(",", ".", regex=False)
    values = np.array(pd.to_numeric(number_text, errors="coerce"), dtype=float)
    missing = np.zeros(len(text), bool)
    unread = np.isnan(values)
    if unread.any():
        missing[unread] = text[unread].str.strip().str.lower().isin(_MISSING).to_numpy(bool)
    bad = (unread & ~missing) | dotted
    values[missing | bad] = np.nan
    return values, missing, bad, text.to_numpy(object)


class _Column:
    def __init__(self, table: Table, name: str) -> None:
        self.name = name
        self.cells = table.cells(name)[0]


class _Rejects:
    """Skips rows and names each bad cell once: a row bad in two columns gets a problem for each cell."""

    def __init__(self, problems: Problems, rows: np.ndarray) -> None:
        self.problems, self.rows = problems, rows
        self.keep = np.ones(rows.size, bool)
        self.blank = np.zeros(rows.size, bool)      # rows with neither pressure nor amount, named once
        self.seen: dict[str, np.ndarray] = {}

    def __call__(self, mask: np.ndarray, message: str, column: str, text) -> None:
        seen = self.seen.setdefault(column, self.blank.copy())
        mask = mask & ~seen
        if mask.any():
            self.problems.add_many(message, self.rows[mask], column=column, values=text[mask])
            seen |= mask
            self.keep &= ~mask


def _temperature_clusters(values: np.ndarray) -> np.ndarray:
    """Cluster number of each temperature: sorted values split where the gap exceeds 2 % + 0.01 K."""
    order = np.argsort(values, kind="stable")
    ordered = values[order]
    breaks = np.diff(ordered) > 0.02 * ordered[:-1] + 0.01
    labels = np.empty(values.size, int)
    labels[order] = np.concatenate([[0], np.cumsum(breaks)]) if values.size else []
    return labels


def _restart_legs(pressure: np.ndarray, amount: np.ndarray) -> np.ndarray | None:
    """Legs of a table that lists the adsorption points and then the desorption points, each in rising
    pressure (as papers print them): the pressure restarts once — falls to below a fifth of its value, at
    or near the top — and the second part holds more than the first at the pressures both cover (the
    hysteresis a desorption leg shows). None when the table is not of that shape."""
    finite = np.flatnonzero(np.isfinite(pressure))
    if finite.size < 6:
        return None
    p = pressure[finite]
    drops = np.flatnonzero(p[1:] < 0.2 * p[:-1])
    if drops.size != 1:
        return None
    cut = int(drops[0]) + 1
    first, second = finite[:cut], finite[cut:]
    if first.size < 3 or second.size < 3 or p[cut - 1] < 0.5 * p.max():
        return None
    rising = lambda q: (np.diff(q) > 0).sum() >= 0.8 * (q.size - 1)                 # noqa: E731
    if not (rising(pressure[first]) and rising(pressure[second])):
        return None
    order = np.argsort(pressure[first])
    lo, hi = pressure[first].min(), pressure[first].max()
    shared = second[(pressure[second] >= lo) & (pressure[second] <= hi)]
    if shared.size < 2:
        return None
    below = np.interp(np.log(pressure[shared]), np.log(pressure[first][order]), amount[first][order])
    if np.mean(amount[shared] >= below * (1 - 1e-3)) < 0.8:
        return None
    legs = np.zeros(pressure.size, int)
    legs[finite[cut]:] = 1
    return legs


def _direction_legs(pressure: np.ndarray, amount: np.ndarray | None = None) -> np.ndarray:
    """0 (adsorption) or 1 (desorption) per point from the direction of pressure (see the module notes)."""
    legs = np.zeros(pressure.size, int)
    finite = np.flatnonzero(np.isfinite(pressure))
    if finite.size < 3:
        return legs
    if amount is not None:
        restarted = _restart_legs(pressure, amount)
        if restarted is not None:
            return restarted
    top = finite[np.argmax(pressure[finite])]
    after = np.diff(pressure[finite[finite >= top]])
    if after.size >= 2 and (after < 0).sum() > (after > 0).sum():
        legs[top + 1:] = 1
    return legs


def _note_direction(problems: Problems, leg: str, pressure, rows, text, column: str) -> None:
    finite = np.flatnonzero(np.isfinite(pressure))
    steps = np.diff(pressure[finite])
    against = finite[1:][steps < 0] if leg == "adsorption" else finite[1:][steps > 0]
    if against.size:
        way = "falls" if leg == "adsorption" else "rises"
        problems.add(f"pressure {way} within the {leg} leg at rows {_rows_text(rows[against])}; kept in file "
                     "order", row=int(rows[against[0]]), column=column, value=text[against[0]])


def _duplicates(problems: Problems, frame: pd.DataFrame, rows: np.ndarray) -> np.ndarray:
    """Mask of rows repeating an earlier row of ``frame``; each noted with the row it repeats."""
    repeated = frame.duplicated(keep="first").to_numpy()
    if repeated.any():
        first = frame.groupby(list(frame.columns), dropna=False, sort=False).ngroup().to_numpy()
        first_row = {}
        for k in np.flatnonzero(~repeated):
            first_row.setdefault(first[k], rows[k])
        for k in np.flatnonzero(repeated):
            problems.add(f"repeats row {int(first_row[first[k]])} (same pressure, amount and leg) — kept once",
                         row=int(rows[k]))
    return repeated


def build_runs(table: Table, used: ColumnMap, problems: Problems, *, temperature_k: float | None,
               label: str) -> list[MeasuredRun]:
    """The runs of ``table`` under the complete map ``used``; ``label`` starts each run's name."""
    file, rows, comma = problems.file, table.rows, table.decimal_comma
    reject = _Rejects(problems, rows)
    keep = reject.keep
    table.cells(*(c for c in (used.pressure, used.amount, used.column("temperature"), used.column("leg"),
                              used.column("run")) if c))                  # parsed in one pass
    p_col, a_col = _Column(table, used.pressure), _Column(table, used.amount)
    pressure, p_missing, p_bad, p_text = _numbers(p_col.cells, comma)
    amount, a_missing, a_bad, a_text = _numbers(a_col.cells, comma)
    dosed = used.amount_unit in DOSED_UNITS
    reject(p_missing & a_missing, "no pressure and no amount — row skipped", a_col.name, a_text)
    reject.blank |= p_missing & a_missing
    for values, bad, missing, text, column, what in ((pressure, p_bad, p_missing, p_text, p_col.name, "pressure"),
                                                     (amount, a_bad, a_missing, a_text, a_col.name, "amount")):
        reject(bad, "not a number — row skipped", column, text)
        reject(np.isinf(values), "not a finite number — row skipped", column, text)
        reject(values < 0, f"negative {what} — row skipped", column, text)
    reject(a_missing, "no amount — row skipped", a_col.name, a_text)
    zero_pressure = pressure == 0
    if not dosed:
        reject(zero_pressure, "zero pressure — row skipped (an isotherm is compared above zero "
                "pressure)", p_col.name, p_text)
    pressure[zero_pressure] = np.nan
    if used.pressure_unit == "p/p0" and (above := keep & (pressure > 1)).any():
        problems.add(f"relative pressure above 1 at rows {_rows_text(rows[above])}; kept (check the column and "
                     "unit)", row=int(rows[above][0]), column=p_col.name, value=p_text[above][0])

    temperature = np.full(rows.size, np.nan)
    if used.column("temperature"):
        t_col = _Column(table, used.temperature)
        temperature, t_missing, t_bad, t_text = _numbers(t_col.cells, comma)
        reject(t_missing, "no temperature — row skipped", t_col.name, t_text)
        reject(t_bad, "not a number — row skipped", t_col.name, t_text)
        reject(~np.isfinite(temperature) | (temperature <= 0), "not a positive temperature in K — row skipped",
               t_col.name, t_text)
    leg_code = np.full(rows.size, -1)
    if used.column("leg"):
        l_col = _Column(table, used.leg)
        words = l_col.cells.astype(object).astype(str).str.strip().str.lower().to_numpy(object)
        for code, leg in enumerate(LEGS):
            leg_code[np.isin(words, list(LEG_WORDS[leg]))] = code
        reject(leg_code < 0, _LEG_HINT, l_col.name, l_col.cells.to_numpy(object))
    run_label = np.full(rows.size, "", dtype=object)
    if used.column("run"):
        r_col = _Column(table, used.run)
        run_label = r_col.cells.astype(object).astype(str).str.strip().to_numpy(object)
        reject(run_label == "", "no run label — row skipped", r_col.name, run_label)

    if not keep.any():
        raise problems.refuse(f"has no usable rows in columns {p_col.name!r} and {a_col.name!r}")
    index = np.flatnonzero(keep)
    clusters = np.zeros(index.size, int)
    if used.column("temperature"):
        clusters = _temperature_clusters(temperature[index])
    run_codes = pd.factorize(pd.Series(run_label[index]))[0]
    groups = pd.factorize(pd.Series(run_codes * (clusters.max() + 1) + clusters))[0]
    frame = pd.DataFrame({"p": pressure[index], "a": amount[index], "leg": leg_code[index], "g": groups})
    repeated = _duplicates(problems, frame, rows[index])
    index, groups = index[~repeated], groups[~repeated]

    runs = []
    for g in range(groups.max() + 1):
        members = index[groups == g]
        t_run = float(np.median(temperature[members])) if used.column("temperature") else temperature_k
        if used.column("temperature"):
            t_low, t_high = temperature[members].min(), temperature[members].max()
            if t_high - t_low > 0.002 * t_run:
                problems.add(f"temperature varies from {t_low:g} to {t_high:g} K within one run; named by its "
                             f"median, {t_run:.6g} K", row=int(rows[members[0]]), column=used.temperature)
        legs = leg_code[members] if used.column("leg") else _direction_legs(pressure[members], amount[members])
        if not used.column("leg") and _restart_legs(pressure[members], amount[members]) is not None:
            start = members[legs == 1][0]
            problems.add(f"the pressure starts again at row {int(rows[start])} and the points from there hold "
                         "more than those before at equal pressure: read as the desorption leg, listed in rising "
                         "pressure (add a leg column to say otherwise)", row=int(rows[start]), column=p_col.name,
                         value=p_text[start])
        for code, leg in enumerate(LEGS):
            part = members[legs == code]
            if part.size == 0:
                continue
            if not (leg == "desorption" and not used.column("leg")
                    and _restart_legs(pressure[members], amount[members]) is not None):
                _note_direction(problems, leg, pressure[part], rows[part], p_text[part], p_col.name)
            no_p = part[~np.isfinite(pressure[part])]
            zero = no_p[zero_pressure[no_p]]
            if no_p.size > zero.size:
                empty = np.setdiff1d(no_p, zero)
                problems.add(f"{empty.size} point(s) of the {leg} leg have no pressure (rows {_rows_text(rows[empty])})"
                             "; kept as points below what the gauge reads, compared with the model at equal coverage",
                             row=int(rows[empty[0]]), column=p_col.name)
            if zero.size:
                problems.add(f"{zero.size} dosed point(s) of the {leg} leg have zero pressure (rows "
                             f"{_rows_text(rows[zero])}); read as no usable pressure", row=int(rows[zero[0]]),
                             column=p_col.name)
            name_parts = [label] + ([run_label[part[0]]] if used.column("run") else []) \
                + ([f"{t_run:.6g} K"] if t_run is not None else []) + [leg]
            runs.append(MeasuredRun(name=" · ".join(name_parts), source=file, pressure=pressure[part],
                                    pressure_unit=used.pressure_unit, amount=amount[part],
                                    amount_unit=used.amount_unit, leg=leg, temperature_k=t_run, rows=rows[part]))
    return runs
