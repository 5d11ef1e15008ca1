"""Scenario files (TOML): everything a view depends on, read with the standard library, written by
`porefill.explorer.files.toml_writer`.

Layout, ``format = 1`` (every table but ``[scenario]`` optional; a file without ``format`` is format 1)::

    format = 1
    [scenario]        # porefill.physics.scenario.Scenario.to_dict: shape, size_angstrom, adsorbate, temperature_k, ...
    [sample]          # porefill.physics.fitting.measured.Sample: mass_g, pore_volume_cm3_g, surface_area_m2_g, d100_angstrom
    [sample.sources]  #   where each came from: "typed", "fitted", "default" or "file"
    [[measured]]      # one porefill.physics.fitting.measured.MeasuredRun each: name, source, leg, temperature_k, pressure_unit,
                      #   amount_unit, pressure = [...] (nan: no usable pressure), amount = [...], rows = [...]
    [fit]             # porefill.explorer.files.saved_fit.SavedFit: free, warnings, correlation
    [fit.statistics]  #   chi2, reduced_chi2, r_squared, points, ...
    [fit.scenario]    #   the fitted scenario
    [[fit.parameters]]  # name, value, stderr, unit, low, high
    [distribution]    # porefill.explorer.files.saved_distribution.SavedDistribution: sizes_angstrom,
                      #   pore_volume_cm3_g, stderr_cm3_g, n_points, summary, lam, reduced_chi2, notes
    [distribution.kernel]  # the scenario the kernel varied the size of
    [view]            # dashboard choices: axis, branch, pick_log10_pa, tab (see ViewChoices)
    [view.measured]   #   the Measured data tab's inputs (porefill.explorer.files.page_choices.MeasuredChoices)
    [view.sizing]     #   the Sizing tab's inputs (porefill.explorer.files.page_choices.SizingChoices)

A file is parsed, never executed. A malformed file raises `ScenarioFileError` naming the file, the line
and the key: TOML syntax errors with tomllib's line and column, other problems (unknown key, wrong type,
value out of range) at the line where the key is written.
"""
from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass, field, fields
from pathlib import Path

from porefill.explorer.files.page_choices import MeasuredChoices, SizingChoices
from porefill.explorer.files.toml_writer import dump_table
from porefill.physics.choices import BRANCHES, TABS
from porefill.physics.choices import ISOTHERM_AXES as AXES

__all__ = ["FORMAT", "MAX_SCENARIO_BYTES", "ScenarioFileError", "ScenarioDocument", "ViewChoices", "load_scenario", "dump_scenario",
           "load_document", "parse_document", "dump_document", "DEMO_DIR", "demo_names", "resolve_scenario"]

FORMAT = 1
MAX_SCENARIO_BYTES = 4 * 1024 * 1024      # a scenario with many measured runs is well under 1 MB
# the repository's scenarios/ folder: beside porefill's physics/ and explorer/ in a checkout (editable install)
# and installed as porefill/scenarios/ by the wheel (pyproject.toml), two folders up from here in both
DEMO_DIR = Path(__file__).resolve().parents[2] / "scenarios"
TABLES = ("format", "scenario", "sample", "measured", "fit", "distribution", "view")


class ScenarioFileError(ValueError):
    """A scenario file that cannot be read; the message names the file, the line and the key."""

    def __init__(self, message: str, *, path: str = "", line: int | None = None, key: str | None = None):
        super().__init__(message)
        self.path, self.line, self.key = path, line, key


@dataclass(frozen=True)
class ViewChoices:
    """Dashboard choices a saved file reopens with: the isotherm's x axis ("pressure" or
    "chemical-potential"), the branch of the occupancy map, the picked pressure as log10(p / Pa) (None:
    the view's own choice), the tab on show, and the Measured data and Sizing tabs' inputs (None: the page's
    own)."""

    axis: str = "pressure"
    branch: str = "equilibrium"
    pick_log10_pa: float | None = None
    tab: str = "pore"
    measured: MeasuredChoices | None = None
    sizing: SizingChoices | None = None

    def __post_init__(self) -> None:
        for name, known in (("axis", AXES), ("branch", BRANCHES), ("tab", TABS)):
            if getattr(self, name) not in known:
                raise ValueError(f"{name} must be one of {', '.join(known)}; got {getattr(self, name)!r}")
        if self.pick_log10_pa is not None:
            from porefill.physics.limits import check_number
            object.__setattr__(self, "pick_log10_pa",
                               check_number("pick_log10_pa", self.pick_log10_pa, low=-40.0, high=10.0))

    def to_dict(self) -> dict:
        out = {}
        for f in fields(self):
            value = getattr(self, f.name)
            if isinstance(value, (MeasuredChoices, SizingChoices)):
                value = value.to_dict() or None
            if value is not None:
                out[f.name] = value
        return out

    @classmethod
    def from_dict(cls, data: dict) -> "ViewChoices":
        known = {f.name for f in fields(cls)}
        unknown = sorted(set(data) - known)
        if unknown:
            raise ValueError(f"unknown view key(s) {', '.join(unknown)}; known: {', '.join(sorted(known))}")
        data = dict(data)
        for name, kind in _TAB_CHOICES.items():
            if name in data and not isinstance(data[name], kind):
                if not isinstance(data[name], dict):
                    raise ValueError(f"{name} must be a table [view.{name}]; got {data[name]!r}"[:300])
                data[name] = kind.from_dict(data[name])
        return cls(**data)


_TAB_CHOICES = {"measured": MeasuredChoices, "sizing": SizingChoices}     # [view.measured], [view.sizing]


@dataclass(frozen=True, eq=False)
class ScenarioDocument:
    """Everything one scenario file holds: the scenario, and optionally the sample, measured runs, a saved
    fit, a saved pore-size distribution and the dashboard's view choices."""

    scenario: object                      # porefill.physics.scenario.Scenario
    sample: object = None                 # porefill.physics.fitting.measured.Sample or None
    measured: tuple = ()                  # porefill.physics.fitting.measured.MeasuredRun, ...
    fit: object = None                    # porefill.explorer.files.saved_fit.SavedFit or None
    view: ViewChoices = field(default_factory=ViewChoices)
    distribution: object = None           # porefill.explorer.files.saved_distribution.SavedDistribution or None

    def replace(self, **changes) -> "ScenarioDocument":
        from dataclasses import replace
        return replace(self, **changes)


# reading ---------------------------------------------------------------------------------------------
# possessive and without a lazy name: one pass per line (the lazy "([^\]#]+?)\s*\]" tried every end of the
# name against every run of spaces: a 2 kB file with a line "[" and spaces took seconds, 8 000 spaces minutes)
_HEADER = re.compile(r"^\s*+(\[\[?+)\s*+([^\]#\s][^\]#]*+)\]\]?+\s*+(#.*)?$")


def _key_pattern(key: str) -> re.Pattern:
    return re.compile(r"^\s*(?:" + re.escape(key) + r"|\"" + re.escape(key) + r"\")\s*=")


def line_of(text: str, section: str, key: str | None = None, index: int = 0) -> int | None:
    """1-based line of ``key`` in table ``section`` (the ``index``-th one for an array of tables; a
    dotted name for a sub-table), or of the table's header when the key is not written there; None when
    neither is found (e.g. a top-level key: ``section`` "")."""
    current, counts, header_line = ("", 0), {}, None
    pattern = _key_pattern(key) if key else None
    for number, line in enumerate(text.splitlines(), 1):
        m = _HEADER.match(line)
        if m:
            table = "".join(m.group(2).split()).replace('"', "")
            if m.group(1) == "[[":
                counts[table] = counts.get(table, -1) + 1
            current = (table, counts.get(table, 0) if m.group(1) == "[[" else 0)
            if current == (section, index) and header_line is None:
                header_line = number
        elif pattern is not None and current == (section, index) and pattern.match(line):
            return number
    return header_line


def _blame(message: str, keys) -> str | None:
    """The key a validation message is about: the longest key named in it (as written, or with spaces)."""
    low = re.split(r"; (?:known|expected)", message.lower())[0]      # not the list of accepted keys
    for key in sorted(keys, key=len, reverse=True):
        if key.lower() in low or key.replace("_", " ").lower() in low:
            return key
    return None


def _fail(path: str, text: str, section: str, message: str, keys=(), index: int = 0, key: str | None = None):
    key = key or _blame(message, keys)
    line = line_of(text, section, key, index)
    where = f"[{section}]" if section else "top level"
    if section in ("measured", "fit.parameters"):
        where = f"[[{section}]] number {index + 1}"
    name = f"{where} {key}" if key else where
    at = f", line {line}" if line else ""
    raise ScenarioFileError(f"{path}{at}: {name}: {message}", path=path, line=line, key=key) from None


def _table(path, text, data, name) -> dict:
    value = data.get(name, {})
    if not isinstance(value, dict):
        _fail(path, text, "", f"{name} must be a table [{name}]", key=name)
    return dict(value)


_RUN_TEXT_KEYS = ("name", "source", "leg", "pressure_unit", "amount_unit")
_MAX_ROW = 10**9          # a row number a file can have


def _check_numbers(path, text, index, run: dict) -> None:
    for key in _RUN_TEXT_KEYS:
        if key in run and not isinstance(run[key], str):
            _fail(path, text, "measured", f"must be text; got {run[key]!r}"[:200], index=index, key=key)
    rows = run.get("rows", [])
    if isinstance(rows, list) and any(isinstance(r, int) and not isinstance(r, bool) and not 0 <= r <= _MAX_ROW
                                      for r in rows):
        _fail(path, text, "measured", f"must hold row numbers from 0 to {_MAX_ROW:,}", index=index, key="rows")
    for key, kinds in (("pressure", (int, float)), ("amount", (int, float)), ("rows", (int,))):
        values = run.get(key, [])
        if not isinstance(values, list):
            _fail(path, text, "measured", "must be an array of numbers", index=index, key=key)
        for i, v in enumerate(values):
            if isinstance(v, bool) or not isinstance(v, kinds):
                word = "whole numbers" if key == "rows" else "numbers"
                _fail(path, text, "measured", f"must hold {word} only; item {i + 1} is {v!r}", index=index,
                      key=key)


def parse_document(text: str, *, name: str = "scenario.toml") -> ScenarioDocument:
    """The `ScenarioDocument` in TOML ``text`` (``name``: the file, for messages). Raises ScenarioFileError.

    A byte-order mark at the start (some Windows editors write one) is dropped: TOML forbids it, and the
    text after it is the file."""
    text = text.removeprefix("\ufeff")
    try:
        data = tomllib.loads(text)
    except RecursionError:
        raise ScenarioFileError(f"{name}: arrays or tables are nested too deeply for a scenario file",
                                path=name) from None
    except tomllib.TOMLDecodeError as exc:
        # "... (at line 3, column 7)": tomllib's position (a `lineno` attribute only from Python 3.14)
        m = re.search(r"\(at line (\d+), column (\d+)\)", str(exc))
        line = int(m.group(1)) if m else getattr(exc, "lineno", None)
        at = f", line {line}, column {m.group(2)}" if m else ""
        if m is None and "at end of document" in str(exc):
            line = max(len(text.splitlines()), 1)
            at = f", line {line} (the end of the file)"
        what = re.sub(r"\s*\(at (line \d+, column \d+|end of document)\)", "", str(exc))
        raise ScenarioFileError(f"{name}{at}: not valid TOML ({what})", path=name, line=line) from None
    except ValueError as exc:             # e.g. an integer past Python's digit limit
        raise ScenarioFileError(f"{name}: a value cannot be read ({str(exc).splitlines()[0][:120]})",
                                path=name) from None
    try:
        return _document(name, text, data)
    except ScenarioFileError:
        raise
    except (TypeError, ValueError, AttributeError, KeyError, OverflowError, RecursionError) as exc:
        # a value of a type no check above foresaw: one line, never a traceback
        raise ScenarioFileError(f"{name}: a table or value has the wrong type or size "
                                f"({type(exc).__name__}: {str(exc).splitlines()[0][:160] if str(exc) else ''})",
                                path=name) from None


def _document(name: str, text: str, data: dict) -> ScenarioDocument:
    unknown = sorted(set(data) - set(TABLES))
    if unknown:
        _fail(name, text, "", f"unknown table(s) or key(s) {', '.join(unknown)}; expected {', '.join(TABLES)}",
              key=unknown[0])
    fmt = data.get("format", FORMAT)
    if fmt != FORMAT or isinstance(fmt, bool):
        _fail(name, text, "", f"this porefill reads scenario files of format {FORMAT}; got {fmt!r}", key="format")
    if "scenario" not in data:
        raise ScenarioFileError(f"{name}: no [scenario] table", path=name)
    from porefill.physics.fitting.measured import MeasuredRun, Sample
    from porefill.physics.scenario import Scenario

    from porefill.explorer.files.saved_fit import SavedFit

    body = _table(name, text, data, "scenario")
    try:
        scenario = Scenario.from_dict(body)
    except (TypeError, ValueError) as exc:
        _fail(name, text, "scenario", str(exc), body)
    sample = None
    if "sample" in data:
        body = _table(name, text, data, "sample")
        try:
            sample = Sample.from_dict(body)
        except (TypeError, ValueError) as exc:
            section = "sample.sources" if "source" in str(exc) else "sample"
            _fail(name, text, section, str(exc), list(body) + list(dict(body.get("sources", {}))))
    runs = data.get("measured", [])
    if not isinstance(runs, list):
        _fail(name, text, "", "measured must be an array of tables [[measured]]", key="measured")
    measured = []
    for i, run in enumerate(runs):
        if not isinstance(run, dict):
            _fail(name, text, "", "measured must be an array of tables [[measured]]", key="measured")
        _check_numbers(name, text, i, run)
        try:
            measured.append(MeasuredRun.from_dict(run))
        except TypeError as exc:
            _fail(name, text, "measured", f"{exc}".replace("MeasuredRun.__init__() ", ""), run, index=i)
        except ValueError as exc:
            _fail(name, text, "measured", str(exc), run, index=i)
    fit = None
    if "fit" in data:
        body = _table(name, text, data, "fit")
        try:
            fit = SavedFit.from_dict(body)
        except (TypeError, ValueError) as exc:
            message = str(exc)
            section, keys, index = "fit", list(body), 0
            for sub in ("scenario", "statistics"):
                if isinstance(body.get(sub), dict) and _blame(message, body[sub]):
                    section, keys = f"fit.{sub}", list(body[sub])
            for k, row in enumerate(body.get("parameters", []) if isinstance(body.get("parameters"), list) else []):
                if isinstance(row, dict) and _blame(message, row) and section == "fit":
                    section, keys, index = "fit.parameters", list(row), k
                    break
            _fail(name, text, section, message, keys, index=index)
    distribution = None
    if "distribution" in data:
        from porefill.explorer.files.saved_distribution import SavedDistribution

        body = _table(name, text, data, "distribution")
        try:
            distribution = SavedDistribution.from_dict(body)
        except (TypeError, ValueError) as exc:
            kernel = body.get("kernel") if isinstance(body.get("kernel"), dict) else {}
            blamed = _blame(str(exc), kernel)
            _fail(name, text, "distribution.kernel" if blamed else "distribution", str(exc),
                  list(kernel) if blamed else list(body))
    view = ViewChoices()
    if "view" in data:
        body = _table(name, text, data, "view")
        for sub, kind in _TAB_CHOICES.items():      # each tab's table checked on its own, blamed at its line
            if isinstance(body.get(sub), dict):
                try:
                    body[sub] = kind.from_dict(body[sub])
                except (TypeError, ValueError) as exc:
                    _fail(name, text, f"view.{sub}", str(exc), body[sub])
        try:
            view = ViewChoices.from_dict(body)
        except (TypeError, ValueError) as exc:
            _fail(name, text, "view", str(exc), body)
    return ScenarioDocument(scenario, sample, tuple(measured), fit, view, distribution)


def load_document(path: str | Path) -> ScenarioDocument:
    """The `ScenarioDocument` in a TOML file; ScenarioFileError names the file, the line and the key.

    The physics (numpy, scipy) is imported only once the file has been read, so a missing file is
    reported at once."""
    from porefill.explorer.files.bounded import FileTooLarge, read_bounded, size_text

    path = Path(path)
    try:
        text = read_bounded(path, MAX_SCENARIO_BYTES).decode("utf-8")
    except FileNotFoundError:
        raise ScenarioFileError(f"{path}: no such scenario file", path=str(path)) from None
    except IsADirectoryError:
        raise ScenarioFileError(f"{path}: is a directory, not a scenario file", path=str(path)) from None
    except FileTooLarge:
        raise ScenarioFileError(f"{path}: more than the {size_text(MAX_SCENARIO_BYTES)} a scenario file holds",
                                path=str(path)) from None
    except UnicodeDecodeError as exc:
        raise ScenarioFileError(f"{path}: not UTF-8 text ({exc.reason} at byte {exc.start})",
                                path=str(path)) from None
    return parse_document(text, name=str(path))


def load_scenario(path: str | Path):
    """The `porefill.physics.scenario.Scenario` of a scenario file (the other tables are checked, then dropped)."""
    return load_document(path).scenario


# writing ---------------------------------------------------------------------------------------------
_FILE_COMMENT = """\
porefill scenario file, format 1 (TOML). Read by porefill, never executed: the tables are
[scenario] (the inputs), and optionally [sample], [[measured]] runs, [fit] (a saved fit's numbers),
[distribution] (a saved pore-size distribution) and [view] (dashboard choices). Lengths in Å, temperatures
in K, energies in K."""


def dump_scenario(scenario) -> str:
    """TOML text of a scenario alone (``format`` and one [scenario] table)."""
    return dump_document(ScenarioDocument(scenario))


def dump_document(doc: ScenarioDocument) -> str:
    """TOML text of everything in ``doc``; `parse_document` reads it back to equal values, float for float."""
    lines = [f"# {line}" for line in _FILE_COMMENT.splitlines()]
    lines += [f"format = {FORMAT}", ""]
    lines += dump_table("scenario", doc.scenario.to_dict())
    if doc.sample is not None:
        lines += [""] + dump_table("sample", doc.sample.to_dict())
    for run in doc.measured:
        body = run.to_dict()
        body["pressure"] = [float("nan") if v is None else v for v in body["pressure"]]
        comment = (f"Data copied from the file {run.source!r} (run {run.name!r}): the numbers as porefill read them from that "
                   "file.\nPressures in pressure_unit (nan: no usable pressure), amounts in amount_unit, rows "
                   "as in the file.")
        lines += [""] + dump_table("measured", body, array=True, comment=comment)
    if doc.fit is not None:
        lines += [""] + dump_table("fit", doc.fit.to_dict(), comment=(
            "A saved fit: the numbers it found (values in the units given, stderr absent where the data do not "
            "determine a parameter).\nReopening the file shows them; it does not fit again."))
    if doc.distribution is not None:
        lines += [""] + dump_table("distribution", doc.distribution.to_dict(), comment=(
            "A saved pore-size distribution: pore volume (cm³/g) per kernel size (Å, the shape's own size), "
            "found from the measured runs\nwith a kernel of model isotherms built on [distribution.kernel]. "
            "Reopening the file shows it; it does not invert again."))
    if doc.view != ViewChoices():
        lines += [""] + dump_table("view", doc.view.to_dict())
    return "\n".join(lines) + "\n"


# names -----------------------------------------------------------------------------------------------
def demo_names() -> list[str]:
    """The scenarios shipped in ``scenarios/`` by name (file name without ``.toml``)."""
    return sorted(p.stem for p in DEMO_DIR.glob("*.toml"))


def resolve_scenario(text: str) -> Path:
    """A scenario given as a path, or by the name of a shipped one (``demo-hexagon-helium``). Raises
    ScenarioFileError naming the shipped ones when it is neither."""
    path = Path(text)
    if path.exists():
        if path.is_dir():
            raise ScenarioFileError(f"{text}: is a directory, not a scenario file", path=text)
        return path
    if path.name == text and not path.suffix:
        shipped = DEMO_DIR / f"{text}.toml"
        if shipped.is_file():
            return shipped
    raise ScenarioFileError(f"{text}: no such scenario file, and no shipped scenario of that name "
                            f"(shipped: {', '.join(demo_names())})", path=text)

