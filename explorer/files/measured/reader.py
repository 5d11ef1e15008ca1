"""`read_measured`: bytes in memory → columns, guessed and used column maps, runs, problems."""
from __future__ import annotations

import math
import os
from dataclasses import replace
from pathlib import Path

from porefill.explorer.files.measured.decode import classify
from porefill.explorer.files.measured.headers import guess_columns, parse_unit_from_header, unit_advice
from porefill.explorer.files.measured.model import ColumnMap, MeasuredFileError, Problems, ReadResult, shown
from porefill.explorer.files.measured.runs import build_runs
from porefill.explorer.files.measured.table import Table, table_from_text, table_from_workbook

__all__ = ["read_measured", "read_measured_path"]

_DEFAULT_MAX_BYTES = 64 * 2**20


def _without_empty_columns(table: Table) -> Table:
    """Drop columns that have neither a header name nor any value (an unused column A of a sheet)."""
    numbered = [i for i, name in enumerate(table.columns) if name == f"column {i + 1}"]
    if not numbered:
        return table
    cells = table.cells(*(table.columns[i] for i in numbered))
    empty = {i for i, c in zip(numbered, cells) if not (c.astype(str).str.strip() != "").any()}
    return table.keeping([i for i in range(len(table.columns)) if i not in empty]) if empty else table


def _check_choices(choices: ColumnMap | None, columns: tuple[str, ...], problems: Problems) -> None:
    if choices is None:
        return
    listed = ", ".join(repr(c) for c in columns)
    for role in ("pressure", "amount", "leg", "temperature", "run"):
        chosen = choices.column(role)
        if chosen is not None and chosen not in columns:
            raise problems.refuse(f"has no column {chosen!r} (chosen for {role}); its columns are {listed}")


def _note_units(used: ColumnMap, choices: ColumnMap | None, problems: Problems, columns: tuple[str, ...],
                has_header: bool) -> None:
    listed = ", ".join(repr(c) for c in columns)
    for kind in ("pressure", "amount"):
        column, unit = used.column(kind), getattr(used, f"{kind}_unit")
        if column is None:
            problems.add(f"no column looks like the {kind}; choose one of {listed}")
            continue
        header_kind, header_unit = parse_unit_from_header(column)
        if unit is None:
            problems.add(f"the file has no header; choose the {kind} unit" if not has_header else
                         unit_advice(kind, column) if header_kind in (kind, "other") else
                         f"the header reads as a {header_kind}, not as the {kind}; choose the {kind} unit", column=column)
        elif choices is not None and getattr(choices, f"{kind}_unit") and header_unit and header_unit != unit:
            problems.add(f"the header says {header_unit}; using the chosen {unit}", column=column)
    if used.column("pressure") and used.column("pressure") == used.column("amount"):
        raise problems.refuse(f"the same column {used.pressure!r} is chosen for both pressure and amount")


def _temperature(table: Table, used: ColumnMap, temperature_k: float | None, problems: Problems) -> float | None:
    header = table.header_temperature_k
    if used.column("temperature"):
        if temperature_k is not None:
            problems.add(f"temperature_k = {temperature_k:g} K was given, but the temperatures come from column "
                         f"{used.temperature!r}", column=used.temperature)
        return None
    if temperature_k is not None:
        if header is not None and not math.isclose(header, temperature_k, rel_tol=1e-9):
            problems.add(f"the file's comments say {header:g} K; using the given {temperature_k:g} K")
        return temperature_k
    return header


def read_measured(name: str, data: bytes, *, columns: ColumnMap | None = None, sheet: str | None = None,
                  temperature_k: float | None = None, max_bytes: int = _DEFAULT_MAX_BYTES) -> ReadResult:
    """Read one lab isotherm file from bytes in memory (never written to disk, nothing in it executed).

    Parameters
    ----------
    name : str
        The file's name as the user knows it (used in every message; its ending helps tell the type).
    data : bytes
        The whole file.
    columns : ColumnMap, optional
        The user's choices of columns and units; each field given overrides the guess from the header.
    sheet : str, optional
        For a workbook, the sheet to read (default: the first).
    temperature_k : float, optional
        Temperature (K) of the runs when the file has no temperature column; it takes precedence over a
        temperature written in the file's comments ("# T = 77.35 K").
    max_bytes : int
        Larger files are refused before they are read.

    Returns
    -------
    ReadResult
        ``ok`` is False when columns or units are still to be chosen (``to_choose``, ``problems`` say which).

    Raises
    ------
    MeasuredFileError
        When the file cannot be used at all (empty, binary, too large, no numbers, a missing sheet, no usable
        row); its message names the file and the problem in a few plain lines.
    """
    if not isinstance(data, (bytes, bytearray, memoryview)):
        raise TypeError(f"data must be the file's bytes; got {type(data).__name__}")
    if columns is not None and not isinstance(columns, ColumnMap):
        raise TypeError(f"columns must be a ColumnMap or None; got {type(columns).__name__}")
    if temperature_k is not None and (isinstance(temperature_k, bool) or not isinstance(temperature_k, (int, float))
                                      or not math.isfinite(temperature_k) or temperature_k <= 0):
        raise ValueError(f"temperature_k must be a positive number of kelvin or None; got {temperature_k!r}")
    file = str(name)
    data = bytes(data)
    problems = Problems(file)
    kind, payload = classify(file, data, problems, max_bytes=max_bytes)
    sheets: tuple[str, ...] = ()
    label = file
    if kind == "xlsx":
        table, sheets = table_from_workbook(payload, sheet, problems)
        if len(sheets) > 1:
            label = f"{file} · {sheet if sheet is not None else sheets[0]}"
    else:
        if sheet is not None:
            problems.add(f"sheet {sheet!r} was asked for, but a text file has no sheets; read the whole file")
        table = table_from_text(payload, problems)
    table = _without_empty_columns(table)
    guessed, notes = guess_columns(table.columns, has_header=table.has_header)
    for column, message in notes:
        problems.add(message, column=column)
    _check_choices(columns, table.columns, problems)
    used = guessed.overlaid(columns)
    for kind in ("pressure", "amount"):     # a column chosen without its unit brings the unit of its own header
        if columns is not None and columns.column(kind) and getattr(columns, f"{kind}_unit") is None:
            header_kind, unit = parse_unit_from_header(columns.column(kind))
            used = replace(used, **{f"{kind}_unit": unit if header_kind == kind else None})
    _note_units(used, columns, problems, table.columns, table.has_header)
    runs = []
    if used.column("pressure") and used.column("amount") and used.pressure_unit and used.amount_unit:
        runs = build_runs(table, used, problems, temperature_k=_temperature(table, used, temperature_k, problems),
                          label=label)
    return ReadResult(file=file, columns=table.columns, guessed=guessed, used=used, runs=tuple(runs),
                      problems=problems.result(), sheets=sheets)


def read_measured_path(path: str | os.PathLike, **kw) -> ReadResult:
    """`read_measured` on a file on disk, a pipe or a device (for the command line): at most ``max_bytes``
    (plus one) are read, whatever `stat` says, so ``/dev/zero`` or an endless pipe is refused after the limit."""
    from porefill.explorer.files.bounded import FileTooLarge, read_bounded

    path = Path(path)
    problems = Problems(str(path))
    max_bytes = kw.get("max_bytes", _DEFAULT_MAX_BYTES)
    try:
        data = read_bounded(path, max_bytes)
    except FileTooLarge:
        raise problems.refuse(f"larger than the {max_bytes / 2**20:.0f} MB porefill reads") from None
    except IsADirectoryError:
        raise problems.refuse("is a directory, not a file") from None
    except FileNotFoundError:
        raise problems.refuse("no such file") from None
    except PermissionError:
        raise problems.refuse("cannot be read (permission denied)") from None
    except OSError as exc:
        raise problems.refuse(f"cannot be read ({shown(exc.strerror or exc)})") from None
    return read_measured(str(path), data, **kw)
