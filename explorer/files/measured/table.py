"""Text or a workbook sheet to a table of cell strings with the row numbers a person sees.

Where the table starts is found from its numbers: the first row of at least two fields, half of them numbers;
the row above it is the header (two rows — names, then units — are joined as "name (unit)"); lines above
that are a preamble, skipped with a note (a temperature written there, as in "# T = 77.35 K", is kept).
The delimiter (tab, ';', ',', '|', whitespace) and the decimal mark ('.' or ',') are the pair under which
the first few hundred lines read as the most numbers.
"""
from __future__ import annotations

import csv
import io
import math
import operator
import re
from collections import Counter
from dataclasses import dataclass, field
from typing import Callable
from datetime import date, datetime, time

import numpy as np
import pandas as pd

from porefill.explorer.files.measured.headers import unit_of
from porefill.explorer.files.measured.model import LIMITS, Problems

__all__ = ["Table", "table_from_text", "table_from_workbook", "is_number"]

_SAMPLE_LINES = 500
_SAMPLE_CHARS = 65536     # of each sampled line: enough for any header, no time lost on a single giant line
# possessive: a run of digits is never given back, so a long cell that is not a number fails in one pass (the
# plain "\d+\.?\d*" tried every split of the run: 16 000 digits and a letter took 11 s)
_NUMBER = re.compile(r"[+-]?+(?:\d++(?:\.\d*+)?+|\.\d++)(?:[eE][+-]?+\d++)?+")
_NON_FINITE = {"nan", "inf", "+inf", "-inf", "infinity", "+infinity", "-infinity"}
_CANDIDATES = (("\t", False), ("\t", True), (";", False), (";", True), (",", False), ("|", False), ("|", True),
               (" ", False), (" ", True))
_ASCII_ODD_SPACES = "\x0b\x0c\x1c\x1d\x1e\x1f"     # what str.split() splits on besides space, tab, newline


def _odd_spaces(text: str) -> bool:
    """Whether ``text`` may hold blanks other than space and tab (str.split sees them, pandas does not)."""
    return not text.isascii() or any(ch in text for ch in _ASCII_ODD_SPACES)


_DELIMITER_NAMES = {"\t": "tab", ";": "';'", ",": "','", "|": "'|'", " ": "spaces"}
# possessive quantifiers (no backtracking into a run of spaces): linear in the line's length; a long comment
# line of spaces once took seconds per 16 000 characters and froze every session
_TEMPERATURE = re.compile(r"(?i)(?:^|[^a-z])(?:t|temp\.?|temperature)\s*+(?:\(k\)|\[k\])?\s*+[=:]\s*+"
                          r"([+-]?\d++(?:[.,]\d++)?(?:[eE][+-]?\d++)?)\s*+(k\b|kelvin)?")
_TEMPERATURE_SCAN = 400        # characters of a comment line searched for a temperature


@dataclass
class Table:
    """The column names, 1-based row numbers as seen, and the cells (as text) of the columns asked for.

    ``load(positions)`` gives {position: cells} for columns at those positions of the file; only the
    columns a run needs are ever parsed (a 13-column export of 50 MB reads three of them).
    """

    columns: tuple[str, ...]
    rows: np.ndarray
    decimal_comma: bool
    has_header: bool
    header_temperature_k: float | None
    load: Callable[[list[int]], dict[int, pd.Series]]
    positions: tuple[int, ...] = ()
    _cache: dict = field(default_factory=dict)
    problems: Problems | None = None      # when given, cells past LIMITS["max_cell_chars"] are cut and named

    def __post_init__(self) -> None:
        self.positions = self.positions or tuple(range(len(self.columns)))

    def cells(self, *names: str) -> list[pd.Series]:
        """The cells (object array of str) of the named columns, parsed at once on first use."""
        wanted = [self.positions[self.columns.index(n)] for n in names]
        missing = sorted({p for p in wanted if p not in self._cache})
        if missing:
            loaded = self.load(missing)
            if self.problems is not None:
                self._cut_long_cells(loaded)
            self._cache.update(loaded)
        return [self._cache[p] for p in wanted]

    def _cut_long_cells(self, loaded: dict[int, pd.Series]) -> None:
        """Cells past ``LIMITS["max_cell_chars"]`` are cut there (with "…"): read as text, so the row is
        skipped as not a number, and the first such cell of each column is named."""
        cap = LIMITS["max_cell_chars"]
        for position, cells in loaded.items():
            lengths = cells.str.len().to_numpy(dtype=float, na_value=0.0)
            over = lengths > cap
            if over.any():
                k = int(np.flatnonzero(over)[0])
                name = self.columns[self.positions.index(position)] if position in self.positions else None
                self.problems.add(f"a cell of {int(lengths[k])} characters, more than the {cap} porefill reads in "
                                  f"one cell; read as text", row=int(self.rows[k]), column=name, value=cells.iat[k])
                loaded[position] = cells.where(~over, cells.str.slice(0, cap) + "…")

    def keeping(self, indices: list[int]) -> "Table":
        """The same table with only the columns at ``indices``."""
        return Table(tuple(self.columns[i] for i in indices), self.rows, self.decimal_comma, self.has_header,
                     self.header_temperature_k, self.load, tuple(self.positions[i] for i in indices), self._cache,
                     self.problems)


def is_number(cell: str, comma: bool) -> bool:
    """A cell that reads as a number (NaN and infinities included) under the decimal mark."""
    s = cell.strip()
    if comma:
        if "." in s:
            return False
        s = s.replace(",", ".")
    return bool(_NUMBER.fullmatch(s)) or s.lower() in _NON_FINITE


def _trimmed(fields: list[str]) -> list[str]:
    while fields and not fields[-1].strip():
        fields.pop()
    return fields


def _split(line: str, delim: str, quoted: bool) -> list[str]:
    if quoted and '"' in line:
        try:
            if delim == " ":
                return _trimmed(next(csv.reader([line.replace("\t", " ").strip()], delimiter=" ",
                                                skipinitialspace=True)))
            return _trimmed(next(csv.reader([line], delimiter=delim, skipinitialspace=True)))
        except csv.Error:
            return [line]
    return line.split() if delim == " " else _trimmed(line.split(delim))


def _without_last_quote(line: str) -> str:
    """``line`` less its last quote: the one left open (quotes pair up from the left)."""
    k = line.rfind('"')
    return line[:k] + line[k + 1:]


def _score(sample: list[str], delim: str, comma: bool, quoted: bool) -> tuple[int, float]:
    score, widths = 0, Counter()
    for line in sample:
        fields = _split(line, delim, quoted)
        if len(fields) < 2:
            continue
        numbers = sum(is_number(f, comma) for f in fields)
        texts = sum(1 for f in fields if f.strip()) - numbers
        if numbers:          # text-only lines (headers, notes) say nothing about the delimiter
            widths[len(fields)] += 1
            score += numbers - texts
    consistency = widths.most_common(1)[0][1] / sum(widths.values()) if widths else 0.0
    return score, consistency


def _sniff(sample: list[str], quoted: bool) -> tuple[str, bool]:
    best, best_key = ("", False), (0, 0.0)
    for delim, comma in _CANDIDATES:
        key = _score(sample, delim, comma, quoted)
        if key > best_key:
            best, best_key = (delim, comma), key
    return best


def _numeric_row(fields: list[str], comma: bool) -> bool:
    filled = [f for f in fields if f.strip()]
    numbers = sum(is_number(f, comma) for f in filled)
    return len(fields) >= 2 and numbers >= 1 and 2 * numbers >= len(filled)


def _clean_names(names: list[str], width: int, problems: Problems) -> tuple[str, ...]:
    out, seen = [], Counter()
    for i in range(width):
        name = names[i].strip().strip('"').strip() if i < len(names) else ""
        name = name or f"column {i + 1}"
        seen[name] += 1
        if seen[name] > 1:
            problems.add(f"the header repeats the name {name!r}; this one is called {name + f' ({seen[name]})'!r}",
                         column=name)
            name = f"{name} ({seen[name]})"
        out.append(name)
    return tuple(out)


def _temperature_in(lines: list[tuple[int, str]], problems: Problems) -> float | None:
    """A temperature in K written in comment or preamble lines ("# T = 77.35 K"); the first if several."""
    found: list[tuple[int, float]] = []
    for row, line in lines:
        line = line[:_TEMPERATURE_SCAN]
        m = _TEMPERATURE.search(line)
        if m and (m.group(2) or "(k)" in line.lower() or "[k]" in line.lower()):
            value = float(m.group(1).replace(",", "."))
            if math.isfinite(value) and value > 0:
                found.append((row, value))
    if len({v for _, v in found}) > 1:
        problems.add(f"the comments give several temperatures ({', '.join(f'{v:g} K' for _, v in found[:5])}); "
                     f"using the first, {found[0][1]:g} K", row=found[0][0])
    return found[0][1] if found else None


def _bracket_words(words: list[str]) -> list[str]:
    """Whitespace-split header words with each bracketed unit joined to the name before it ("P", "(Pa)")."""
    out: list[str] = []
    for word in words:
        if out and word[:1] in "([{":
            out[-1] += " " + word
        else:
            out.append(word)
    return out


def _header_from_comment(layout, lines: list[str], first_data: int, delim: str, comma: bool,
                         problems: Problems) -> None:
    """A table without a header row whose last comment line above the data names one field per column
    ("# P/P0 nsorb [mmol/g]", as digitised and exported data often are) takes its names from that line."""
    above = [i for i in range(first_data) if lines[i].lstrip()[:1] in ("#", "%")]
    if not above:
        return
    k = above[-1]
    text = lines[k].strip().lstrip("#%").strip()
    if not text or len(text) > LIMITS["max_cell_chars"] * layout.width:
        return
    if delim != " ":
        fields = _trimmed(_split(text, delim, True))
    else:
        fields = [f for f in re.split(r"\t|\s{2,}", text) if f]
        if len(fields) != layout.width:
            fields = _bracket_words(text.split())
    if len(fields) != layout.width or any(is_number(f, comma) or not f for f in fields):
        return
    from porefill.explorer.files.measured.headers import parse_unit_from_header

    if not any(parse_unit_from_header(f)[1] for f in fields):      # "# sample A, batch 3" names no column
        return
    layout.names = fields
    problems.add(f"the table has no header row; its column names were read from the comment line {k + 1}",
                 row=k + 1, value=lines[k].strip())


@dataclass
class _Layout:
    start: int            # index in the sample of the first data row
    names: list[str] | None
    header_from: int      # index of the first header row (== start without a header)
    width: int


def _layout(sample: list[list[str]], comma: bool, problems: Problems, rows: list[int],
            header_split=None, where: str = "", others: str = "", fixed_width: bool = False) -> _Layout:
    """Where the table starts in ``sample`` (rows split into fields), its header and width.

    ``where`` ("sheet 'A' ") and ``others`` ("; other sheets: B") frame the refusals of a workbook sheet."""
    numeric = [_numeric_row(f, comma) for f in sample]
    if not any(numeric):
        if any(is_number(c, comma) for f in sample for c in f):
            raise problems.refuse(f"{where}has only one column of numbers; porefill needs a pressure and an "
                                  f"amount column{others}")
        if len(sample) == 1:
            raise problems.refuse(f"{where}has a header line but no rows of numbers{others}")
        raise problems.refuse(f"{where}has no rows of numbers: every row is text{others}")
    start = numeric.index(True)
    widths = Counter(len(f) for f, n in zip(sample, numeric) if n)
    width = widths.most_common(1)[0][0]
    names, header_from = None, start
    if start >= 1 and not numeric[start - 1] and len(sample[start - 1]) >= 2:
        names, header_from = list(sample[start - 1]), start - 1
        above = sample[start - 2] if start >= 2 else None
        if above and not numeric[start - 2] and len(above) == len(names) \
                and any(unit_of(u.strip("[]() ")) for u in names):
            names = [f"{n.strip()} ({u.strip().strip('[]()')})" if u.strip() else n for n, u in zip(above, names)]
            header_from = start - 2
    elif start >= 1 and header_split is not None:
        names = header_split(start - 1, width)
        if names and len(names) >= 2:
            header_from = start - 1
        else:
            names = None
    if names is not None and len(names) != width and header_split is not None:
        alt = header_split(header_from, width)
        if alt and len(alt) == width:
            names = alt
        elif fixed_width:
            problems.add(f"the header has {len(names)} names for {width} columns of numbers; the columns are "
                         "numbered — choose them", row=rows[header_from])
            names = None
    if names is not None:
        longest = max(range(len(names)), key=lambda i: len(names[i]))
        if len(names[longest]) > LIMITS["max_cell_chars"]:
            raise problems.refuse(f"{where}row {rows[header_from]}: header name {longest + 1} has "
                                  f"{len(names[longest])} characters, more than the {LIMITS['max_cell_chars']} "
                                  "porefill reads in one cell")
        if len(names) < width:
            problems.add(f"the header has {len(names)} names for {width} columns; the rest are numbered",
                         row=rows[header_from])
        width = max(width, len(names))
    if header_from > 0:
        problems.add(f"{header_from} line(s) above the table are not part of it (rows {rows[0]}–"
                     f"{rows[header_from - 1]}); skipped", row=rows[0])
    if width > LIMITS["max_columns"]:
        raise problems.refuse(f"has at least {width} columns, more than the {LIMITS['max_columns']} porefill reads")
    return _Layout(start, names, header_from, width)


def _refuse_rows(n: int, problems: Problems) -> None:
    if n > LIMITS["max_rows"]:
        raise problems.refuse(f"has {n} rows of data, more than the {LIMITS['max_rows']} porefill reads — "
                              "split the file")


def table_from_text(text: str, problems: Problems) -> Table:
    """The table in delimited text (comment lines start with # or %)."""
    lines = text.replace("\r\n", "\n").replace("\r", "\n").split("\n")
    if len(lines) > 5 * LIMITS["max_rows"]:      # hopeless at a glance: refuse before looking at every line
        raise problems.refuse(f"has {len(lines)} lines, far more than the {LIMITS['max_rows']} rows of data "
                              "porefill reads — split the file")
    starts = [line.lstrip()[:1] for line in lines]
    data_at = [i for i, c in enumerate(starts) if c and c not in "#%"]
    comments = [(i + 1, lines[i].strip()) for i, c in enumerate(starts) if c == "#" or c == "%"]
    if not data_at:
        raise problems.refuse("has only comment lines, no table" if comments else "the file is empty")
    cap = LIMITS["max_line_chars"]
    long_line = next((i for i in data_at if len(lines[i]) > cap), None)
    if long_line is not None:
        raise problems.refuse(f"row {long_line + 1} has {len(lines[long_line])} characters, more than the {cap} "
                              "porefill reads in one line of a table")
    quoted = '"' in text
    # a line with an odd number of quotes opens a quote it never closes (doubled quotes inside one count two)
    unclosed = [i for i in data_at if lines[i].count('"') % 2] if quoted else []
    opened = set(unclosed)
    sample_lines = [_without_last_quote(lines[i]) if i in opened else lines[i] for i in data_at[:_SAMPLE_LINES]]
    sample_lines = [line[:_SAMPLE_CHARS] for line in sample_lines]                # a 50 MB line is no header
    delim, comma = _sniff(sample_lines, quoted)
    delim = delim or ","
    sample = [_split(line, delim, quoted) for line in sample_lines]
    sample_rows = [i + 1 for i in data_at[:_SAMPLE_LINES]]

    def header_split(k: int, width: int) -> list[str]:
        line = sample_lines[k].strip()
        if delim != " ":
            return _split(line, delim, True)
        wide = [f for f in re.split(r"\t|\s{2,}", line) if f]
        return wide if len(wide) == width else _bracket_words(line.split())

    layout = _layout(sample, comma, problems, sample_rows, header_split, fixed_width=delim == " ")
    if layout.names is None and layout.start == 0:
        _header_from_comment(layout, lines, data_at[0], delim, comma, problems)
    temperature = _temperature_in(comments + [(sample_rows[k], sample_lines[k]) for k in range(layout.header_from)],
                                  problems)
    body_at = data_at[layout.start:]
    _refuse_rows(len(body_at), problems)
    for i in unclosed[:LIMITS["max_problems"]]:
        if i < body_at[0]:
            problems.add('an unterminated quote (") — read as if it were not there', row=i + 1,
                         value=lines[i].strip())
    width = layout.width
    if quoted:
        body = [_split(lines[i], delim, True) for i in body_at]
        counts = np.fromiter((len(f) for f in body), int, len(body))
    else:
        contiguous = body_at[-1] - body_at[0] + 1 == len(body_at)
        body = lines[body_at[0]:body_at[-1] + 1] if contiguous else [lines[i] for i in body_at]
        if delim == " ":
            if _odd_spaces("\n".join(body)):     # pandas splits on spaces and tabs only: other blanks become spaces
                body = [" ".join(line.split()) for line in body]
            counts = np.fromiter(map(len, map(str.split, body)), int, len(body))
        else:
            counts = np.fromiter(map(operator.methodcaller("count", delim), body), int, len(body)) + 1
            for k in np.flatnonzero(counts > width):       # trailing delimiters and spaces are no fields
                body[k] = body[k].rstrip(" \t" + delim)
                counts[k] = body[k].count(delim) + 1
    keep = np.ones(len(body), bool)
    open_rows = np.searchsorted(body_at, [i for i in unclosed if i >= body_at[0]])
    if open_rows.size:
        keep[open_rows] = False
        problems.add_many('an unterminated quote (") — row skipped', np.asarray(body_at)[open_rows] + 1,
                          values=[lines[body_at[k]].strip() for k in open_rows[:LIMITS["max_problems"]]])
    for k in np.flatnonzero(((counts > width) | ((counts == 1) & (width > 1))) & keep):
        row, line = body_at[k] + 1, lines[body_at[k]]
        other = next((d for d in "\t;,|" if d != delim and len(_split(line, d, quoted)) >= 2), None)
        if counts[k] > width:
            problems.add(f"has {counts[k]} fields; the table has {width} columns — row skipped", row=row)
        elif other is not None:
            problems.add(f"fields separated by {_DELIMITER_NAMES[other]}, but the table uses "
                         f"{_DELIMITER_NAMES[delim]} — row skipped", row=row, value=line.strip())
        else:
            continue
        keep[k] = False
    if not keep.any():
        raise problems.refuse("has no rows that fit the table")
    kept = [b for b, k in zip(body, keep) if k] if not keep.all() else body
    rows = np.asarray(body_at, int)[keep] + 1
    if quoted:
        def load(positions):
            return {p: pd.Series([f[p] if p < len(f) else "" for f in kept], dtype=object) for p in positions}
    else:
        joined = "\n".join(kept).encode("utf-8")    # pandas reads bytes faster than a str buffer

        def load(positions):
            try:
                frame = pd.read_csv(io.BytesIO(joined), encoding="utf-8", sep=r"\s+" if delim == " " else delim, header=None,
                                    names=range(width), usecols=positions, dtype=str, na_filter=False,
                                    quoting=csv.QUOTE_NONE, engine="c", skip_blank_lines=False)
            except (pd.errors.ParserError, ValueError):
                frame = None
            if frame is None or len(frame) != len(kept):
                raise problems.refuse("could not be split into rows consistently (a stray line break?)")
            return {p: frame[p].astype(object) for p in positions}
    names = _clean_names(layout.names or [], width, problems)
    return Table(names, rows, comma, layout.names is not None, temperature, load, problems=problems)


def _cell_text(value) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    if isinstance(value, bool):
        return "TRUE" if value else "FALSE"
    if isinstance(value, float):
        return repr(value)
    if isinstance(value, (datetime, date, time)):
        return value.isoformat()
    return str(value)


def _workbook_failure(exc: Exception, otherwise: str) -> str:
    try:
        from defusedxml import DefusedXmlException   # openpyxl parses with defusedxml when it is installed
    except ImportError:  # pragma: no cover
        return otherwise
    seen = 0
    while exc is not None and seen < 10:                 # openpyxl wraps the parser's exception
        if isinstance(exc, DefusedXmlException):
            return "declares XML entities inside the workbook, as XML bombs do; refused"
        exc, seen = exc.__cause__ or exc.__context__, seen + 1
    return otherwise


def table_from_workbook(data: bytes, sheet: str | None, problems: Problems) -> tuple[Table, tuple[str, ...]]:
    """The table in one sheet of an .xlsx workbook (the first when ``sheet`` is None), and the sheet names.

    openpyxl opens the workbook read-only with ``data_only=True``: a formula cell gives the value the
    spreadsheet program cached when it saved, and nothing is ever evaluated; a formula without a cached
    value is an empty cell. Links to other files are not followed.
    """
    import openpyxl  # the workbook reader, imported only for workbooks

    try:
        book = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=True, keep_links=False)
    except Exception as exc:   # noqa: BLE001 — any failure of the parser on a damaged or hostile file is a refusal
        raise problems.refuse(_workbook_failure(exc, "cannot be opened as an Excel workbook (damaged, or not "
                                                     "really .xlsx)")) from None
    sheets = tuple(book.sheetnames)
    name = sheets[0] if sheet is None and sheets else sheet
    if name not in sheets:
        raise problems.refuse(f"has no sheet {name!r}; its sheets are {', '.join(repr(s) for s in sheets)}")
    worksheet = book[name]
    if not hasattr(worksheet, "iter_rows"):
        raise problems.refuse(f"sheet {name!r} is a chart, not cells; its sheets are {', '.join(sheets)}")
    if (worksheet.max_column or 0) > LIMITS["max_columns"]:
        raise problems.refuse(f"sheet {name!r} has {worksheet.max_column} columns, more than the "
                              f"{LIMITS['max_columns']} porefill reads")
    cells_said = (worksheet.max_row or 0) * (worksheet.max_column or 0)
    if cells_said > LIMITS["max_workbook_cells"]:
        raise problems.refuse(f"sheet {name!r} has {worksheet.max_row} rows × {worksheet.max_column} columns, more "
                              f"than the {LIMITS['max_workbook_cells']} cells porefill reads from a workbook — "
                              "save the columns needed as CSV")
    if (worksheet.max_row or 0) > LIMITS["max_rows"] + _SAMPLE_LINES:
        raise problems.refuse(f"sheet {name!r} has {worksheet.max_row} rows, more than the {LIMITS['max_rows']} "
                              "rows of data porefill reads — split the sheet")
    try:
        frame = pd.read_excel(book, sheet_name=name, header=None, dtype=object,
                              nrows=LIMITS["max_rows"] + _SAMPLE_LINES + 1)
    except Exception as exc:   # noqa: BLE001 — as above
        raise problems.refuse(_workbook_failure(exc, f"sheet {name!r} cannot be read (damaged workbook)")) from None
    others = [s for s in sheets if s != name]
    if frame.empty:
        raise problems.refuse(f"sheet {name!r} is empty" + (f"; other sheets: {', '.join(others)}" if others else ""))
    if frame.shape[1] > LIMITS["max_columns"]:
        raise problems.refuse(f"sheet {name!r} has {frame.shape[1]} columns, more than the "
                              f"{LIMITS['max_columns']} porefill reads")
    text = frame.map(_cell_text)
    filled = (text != "").to_numpy()
    first = np.array([row[0].lstrip()[:1] if len(row) else "" for row in text.to_numpy()], dtype=object)
    comment = np.isin(first, ["#", "%"]) & (filled.sum(axis=1) == 1)
    keep = filled.any(axis=1) & ~comment
    positions = np.flatnonzero(keep)
    rows = positions + 1
    sample = [_trimmed(list(text.iloc[p])) for p in positions[:_SAMPLE_LINES]]
    layout = _layout(sample, False, problems, list(rows[:_SAMPLE_LINES]), where=f"sheet {name!r} ",
                     others=f"; other sheets: {', '.join(others)}" if others else "")
    comment_lines = [(int(p) + 1, text.iat[int(p), 0]) for p in np.flatnonzero(comment)]
    preamble = [(int(rows[k]), " ".join(sample[k])) for k in range(layout.header_from)]
    temperature = _temperature_in(comment_lines + preamble, problems)
    body = positions[layout.start:]
    _refuse_rows(len(body), problems)
    cells = text.iloc[body].reset_index(drop=True)

    def load(positions):
        return {p: cells[p].astype(object) if p < cells.shape[1] else pd.Series([""] * len(cells), dtype=object)
                for p in positions}
    names = _clean_names(layout.names or [], layout.width, problems)
    return Table(names, rows[layout.start:].astype(int), False, layout.names is not None, temperature, load,
                 problems=problems), sheets
