"""What the reader hands back: problems named for a person, the column choices, the result, the refusal."""
from __future__ import annotations

import unicodedata
from collections import Counter
from dataclasses import dataclass, fields

from porefill.physics.fitting.measured import MEASURED_AMOUNT_UNITS, MeasuredRun
from porefill.physics.substances.units import PRESSURE_UNITS

__all__ = ["FileProblem", "ColumnMap", "ReadResult", "MeasuredFileError", "LIMITS"]

# What one file may hold. Beyond these the reader refuses at once with the limit named (no hangs).
LIMITS = {
    "max_rows": 200_000,        # data rows (comment and blank lines not counted)
    "max_columns": 100,
    "max_problems": 200,        # listed one by one; the rest are counted in one summary problem
    "max_unzipped_bytes": 256 * 2**20,   # total unpacked size of an .xlsx (a zip): guards against zip bombs
    "max_workbook_cells": 1_000_000,     # rows × columns a sheet says it has (openpyxl: ~30–60 µs a cell)
    # a line of the table (comment lines are not counted: only their first few hundred characters are read)
    "max_line_chars": 65_536,
    # a header name or a cell of a column that is read: no number, unit or label needs more, and every
    # per-cell step (number and unit patterns) then costs a bounded time
    "max_cell_chars": 256,
}

_SHOWN_VALUE_CHARS = 60


def shown(text: str, limit: int = _SHOWN_VALUE_CHARS) -> str:
    """``text`` fit for a one-line message: control characters escaped, long text cut with an ellipsis."""
    text = str(text)
    cut = len(text) > limit
    text = text[:limit]
    if any(unicodedata.category(ch)[0] == "C" for ch in text):
        text = "".join(ch if unicodedata.category(ch)[0] != "C" else ascii(ch)[1:-1] for ch in text)
    return text + ("…" if cut else "")


@dataclass(frozen=True)
class FileProblem:
    """One problem in one file, for a person: where (row as the user sees it, column name, cell value) and what.

    ``row`` is the 1-based line number in a text file or the row number in a workbook sheet; None when the
    problem is not about one row (the header, the file as a whole).
    """

    file: str
    row: int | None
    column: str | None
    value: str | None
    message: str

    def __str__(self) -> str:
        where = [shown(self.file, 200)]
        if self.row is not None:
            where.append(f"row {self.row}")
        if self.column is not None:
            where.append(f"column '{shown(self.column)}'")
        if self.value is not None:
            where.append(f"value '{shown(self.value)}'")
        return f"{', '.join(where)}: {self.message}"


def _check_unit(name: str, value, known) -> None:
    if value is not None and value not in known:
        raise ValueError(f"{name} must be one of {', '.join(known)} (or None); got {value!r}")


@dataclass(frozen=True)
class ColumnMap:
    """What the user chose (or the reader guessed) for one file: column names and units.

    None means "not chosen" (a guess may fill it); for ``leg``, ``temperature`` and ``run`` an empty string
    means "the file has no such column" (a guess is then not used). ``pressure_unit`` is a key of
    `porefill.physics.substances.units.PRESSURE_UNITS`, ``amount_unit`` one of `porefill.physics.fitting.measured.MEASURED_AMOUNT_UNITS`.
    ``leg`` names a column telling adsorption from desorption (ads/des, a/d, adsorption/desorption,
    up/down, 1/-1); without it the legs follow the direction of pressure. ``temperature`` names a column of
    temperatures in K, ``run`` a column of run labels (several runs in one file).
    """

    pressure: str | None = None
    amount: str | None = None
    pressure_unit: str | None = None
    amount_unit: str | None = None
    leg: str | None = None
    temperature: str | None = None
    run: str | None = None

    def __post_init__(self) -> None:
        for f in fields(self):
            value = getattr(self, f.name)
            if value is not None and not isinstance(value, str):
                raise ValueError(f"ColumnMap.{f.name} must be a column name or unit (text) or None; got {value!r}")
        _check_unit("pressure_unit", self.pressure_unit, tuple(PRESSURE_UNITS))
        _check_unit("amount_unit", self.amount_unit, MEASURED_AMOUNT_UNITS)

    def overlaid(self, choices: "ColumnMap | None") -> "ColumnMap":
        """This map with every field the user chose (not None) in ``choices`` taking precedence."""
        if choices is None:
            return self
        merged = {f.name: getattr(choices, f.name) if getattr(choices, f.name) is not None else getattr(self, f.name)
                  for f in fields(self)}
        return ColumnMap(**merged)

    def column(self, name: str) -> str | None:
        """The column chosen for ``name`` ("pressure", "leg", ...), None when none (empty string included)."""
        value = getattr(self, name)
        return value or None


@dataclass(frozen=True)
class ReadResult:
    """One file as read: its header, the guessed and the used column map, the runs, and every problem.

    ``runs`` are split by the temperature and run columns, then by leg; ``problems`` names everything that
    was skipped or is doubtful. ``ok`` is False when no run could be made (``to_choose`` then says which
    columns or units the user must pick).
    """

    file: str
    columns: tuple[str, ...]
    guessed: ColumnMap
    used: ColumnMap
    runs: tuple[MeasuredRun, ...]
    problems: tuple[FileProblem, ...]
    sheets: tuple[str, ...] = ()

    @property
    def ok(self) -> bool:
        """At least one usable run."""
        return len(self.runs) > 0

    @property
    def to_choose(self) -> tuple[str, ...]:
        """ColumnMap fields still missing before runs can be made: "pressure", "amount", "pressure_unit",
        "amount_unit" (empty when complete)."""
        return tuple(name for name in ("pressure", "amount", "pressure_unit", "amount_unit")
                     if not getattr(self.used, name))


class MeasuredFileError(ValueError):
    """A file that cannot be used at all. ``str()`` is one or a few plain lines naming the file;
    ``problems`` holds each problem found (possibly more than the message shows)."""

    def __init__(self, message: str, problems: tuple[FileProblem, ...] = ()) -> None:
        super().__init__(message)
        self.problems = tuple(problems)


class Problems:
    """Collects the problems of one file; past ``LIMITS['max_problems']`` it counts them by message."""

    def __init__(self, file: str) -> None:
        self.file = file
        self.items: list[FileProblem] = []
        self.more: Counter = Counter()

    def add(self, message: str, *, row: int | None = None, column: str | None = None,
            value: str | None = None) -> None:
        if len(self.items) < LIMITS["max_problems"]:
            self.items.append(FileProblem(self.file, None if row is None else int(row), column,
                                          None if value is None else str(value), message))
        else:
            self.more[message] += 1

    def add_many(self, message: str, rows, *, column: str | None = None, values=None) -> None:
        """The same problem at several rows (``values`` the cells, one per row); past the cap only counted."""
        rows = list(rows)
        room = max(0, LIMITS["max_problems"] - len(self.items))
        for k, row in enumerate(rows[:room]):
            self.add(message, row=int(row), column=column, value=None if values is None else values[k])
        if len(rows) > room:
            self.more[message] += len(rows) - room

    def __len__(self) -> int:
        return len(self.items) + sum(self.more.values())

    def result(self) -> tuple[FileProblem, ...]:
        items = sorted(self.items, key=lambda p: -1 if p.row is None else p.row)   # file order; stable
        if not self.more:
            return tuple(items)
        counts = "; ".join(f"{n} × {message}" for message, n in self.more.most_common(5))
        summary = FileProblem(self.file, None, None, None,
                              f"{sum(self.more.values())} more problems not listed one by one ({counts})")
        return tuple(items) + (summary,)

    def refuse(self, message: str, *, shown_problems: int = 3) -> MeasuredFileError:
        """A MeasuredFileError: ``message`` after the file name, then the first few problems, one a line."""
        problems = self.result()
        lines = [f"{shown(self.file, 200)}: {message}"]
        lines += [f"  {p}" for p in problems[:shown_problems]]
        if len(problems) > shown_problems:
            lines.append(f"  … and {len(self) - shown_problems} more problem(s)")
        return MeasuredFileError("\n".join(lines), problems)
