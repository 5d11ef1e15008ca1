"""Column headers: what a column holds and in which unit, read from its name — never guessed beyond it.

``parse_unit_from_header("P [mbar]") == ("pressure", "mbar")``. A header splits into a name and a unit
part: the last bracketed group (``(...)``, ``[...]``, ``{...}``), the quantity/unit form ``pressure / kPa``,
``pressure, kPa``, ``pressure in kPa``, or a last word that is itself a unit (``P_Pa``, ``P mbar``). Spelling
is taken generously (case, spaces, ², ³, ·, ^-1, g-1, "per", molecules/atoms) but a column whose header
names no unit gets None: the user must choose it.
"""
from __future__ import annotations

import re
import unicodedata

from porefill.physics.fitting.measured import MEASURED_AMOUNT_UNITS
from porefill.physics.substances.units import PRESSURE_UNITS

from porefill.explorer.files.measured.model import ColumnMap

__all__ = ["parse_unit_from_header", "split_header", "unit_of", "guess_columns", "unit_advice", "KINDS"]

KINDS = ("pressure", "amount", "temperature", "leg", "other")

# unit spellings after `_unit_key` (lower case, no spaces, separators and counted things removed)
_PRESSURE_KEYS = {
    "pa": "Pa", "pascal": "Pa", "pascals": "Pa", "kpa": "kPa", "kilopascal": "kPa", "kilopascals": "kPa",
    "mbar": "mbar", "millibar": "mbar", "hpa": "mbar",          # 1 hPa = 1 mbar = 100 Pa exactly
    "bar": "bar", "torr": "Torr", "p/p0": "p/p0", "p/po": "p/p0", "p/p°": "p/p0", "p/ps": "p/p0",
    "p/psat": "p/p0", "p/p_0": "p/p0",
}
_AMOUNT_KEYS = {
    "mmol/g": "mmol/g", "mol/g": "mol/g", "cm3/g+stp": "cm3(STP)/g", "cm3+stp": "cm3(STP)",
    "/nm2": "per nm2 wall", "/nm": "per nm", "mol": "mol",
    "mmol/m2": "mmol/m2", "μmol/m2": "umol/m2", "umol/m2": "umol/m2", "µmol/m2": "umol/m2",
}
_TEMPERATURE_KEYS = {"k": "K", "kelvin": "K"}

_RELATIVE = re.compile(r"(^|[^a-z])p\s*/\s*p\s*(0|o|°|_0|s|sat)($|[^a-z])|relative\s+pressure|rel\.?\s*pressure"
                       r"|(^|[^a-z])p_?rel($|[^a-z])")
_COUNTED = re.compile(r"molecules?|atoms?|particles?|#|wall|of")


def _plain(text: str) -> str:
    """NFKC (² → 2, ⁻¹ → −1, ₀ → 0), one kind of minus, · and × as spaces."""
    text = unicodedata.normalize("NFKC", str(text))
    return text.replace("\u2212", "-").replace("\u2013", "-").replace("·", " ").replace("\u22c5", " ") \
        .replace("×", " ").replace("*", " ").strip()


def _unit_key(unit: str) -> str:
    key = _plain(unit).lower()
    key = key.replace("^", "").replace("**", "")
    key = re.sub(r"\bper\b", "/", key)
    stp = bool(re.search(r"stp", key))
    key = re.sub(r"\(?\s*stp\s*\)?", " ", key)
    key = _COUNTED.sub(" ", key)
    key = re.sub(r"\b(cc|ml|cm3|cm\s*3)\b", "cm3", key)
    key = re.sub(r"[\s.\[\]\(\)]+", "", key)
    key = key.replace("g-1", "/g").replace("nm-2", "/nm2").replace("nm-1", "/nm").replace("1/", "/")
    key = re.sub(r"(?<![n/])m-2", "/m2", key)
    key = key.replace("//", "/").replace("gram", "g")
    if stp and key in ("cm3/g", "cm3"):
        key += "+stp"
    return key


def unit_of(unit_text: str | None) -> tuple[str, str] | None:
    """(kind, unit) for a unit text ("kPa" → ("pressure", "kPa")), None when porefill does not read it."""
    if not unit_text:
        return None
    raw = _plain(unit_text)
    if raw in ("MPa", "mPa", "µbar", "μbar", "Mbar"):          # prefixes that lower-casing would confuse
        return None
    key = _unit_key(raw)
    for kind, table in (("pressure", _PRESSURE_KEYS), ("amount", _AMOUNT_KEYS), ("temperature", _TEMPERATURE_KEYS)):
        if key in table:
            return kind, table[key]
    return None


def _closing_group(text: str) -> tuple[str, str] | None:
    """(name, inside) when ``text`` ends with a bracketed group (nested brackets allowed)."""
    pairs = {")": "(", "]": "[", "}": "{"}
    if not text or text[-1] not in pairs:
        return None
    depth = 0
    for i in range(len(text) - 1, -1, -1):
        ch = text[i]
        if ch in pairs:
            depth += 1
        elif ch in pairs.values():
            depth -= 1
            if depth == 0:
                return text[:i].strip(), text[i + 1:-1].strip()
    return None


def split_header(header: str) -> tuple[str, str | None]:
    """(name, unit text or None): where the header puts its unit, if anywhere."""
    text = _plain(header)
    group = _closing_group(text)
    if group and group[0]:
        return group
    for pattern in (r"^(.+?)\s+/\s+(.+)$", r"^(.+?),\s*(.+)$", r"^(.+?)\s+in\s+(.+)$"):
        m = re.match(pattern, text)
        if m:
            return m.group(1).strip(), m.group(2).strip()
    m = re.match(r"^([A-Za-z][A-Za-z ]*?)\s*/\s*(.+)$", text)         # P/kPa, n/mmol g-1
    if m and unit_of(m.group(2)):
        return m.group(1).strip(), m.group(2).strip()
    m = re.match(r"^(.+?)[\s_]+([^\s_]+)$", text)                     # P_Pa, pressure kPa
    if m and unit_of(m.group(2)):
        return m.group(1).strip(), m.group(2).strip()
    return text, None


def _words(name: str) -> list[str]:
    return [w for w in re.split(r"[^a-z0-9]+", name.lower()) if w]


_PRESSURE_WORDS = {"p", "pressure", "pres", "press", "pabs", "peq", "pe"}
_AMOUNT_WORDS = {"amount", "uptake", "adsorbed", "loading", "quantity", "coverage", "dosed", "dose", "volume",
                 "n", "na", "nads", "v", "va", "vads", "q", "qads", "gamma", "capacity", "excess"}
_LEG_WORDS = {"leg", "branch", "direction", "segment"}
_RUN_WORDS = {"run", "series", "label", "sample", "measurement", "set", "id", "experiment"}


def _kind_of_name(name: str) -> str:
    words = _words(name)
    lower = name.lower().replace(" ", "")
    if not words:
        return "other"
    if words[0] in _LEG_WORDS or lower in ("ads/des", "adsorption/desorption", "a/d", "up/down"):
        return "leg"
    if name.strip() == "T" or words[0] in ("temperature", "temp") or "temperature" in words:
        return "temperature"
    if words[0] in _PRESSURE_WORDS or "pressure" in words:
        return "pressure"
    if words[0] in _AMOUNT_WORDS or any(w in _AMOUNT_WORDS - {"n", "v", "q", "na", "va"} for w in words):
        return "amount"
    return "other"


def parse_unit_from_header(header: str) -> tuple[str, str | None]:
    """What a column holds and its unit, from its header.

    Returns (kind, unit): kind one of "pressure", "amount", "temperature", "leg", "other"; unit a key of
    `porefill.physics.substances.units.PRESSURE_UNITS`, one of `porefill.physics.fitting.measured.MEASURED_AMOUNT_UNITS`, "K", or None when the
    header does not name one porefill reads. A recognised unit decides the kind (``x (Pa)`` is a pressure);
    relative pressure (``p/p0``, ``P/Po``, ``relative pressure``) is ("pressure", "p/p0").
    """
    text = _plain(header)
    if _RELATIVE.search(text.lower()):
        return "pressure", "p/p0"
    name, unit_text = split_header(text)
    found = unit_of(unit_text)
    if found:
        return found
    return _kind_of_name(name), None


def _is_run_header(header: str) -> bool:
    words = _words(split_header(header)[0])
    return bool(words) and words[0] in _RUN_WORDS


def unit_advice(kind: str, header: str) -> str:
    """Why a column's unit is not known, and what to do: for a problem message."""
    unit_text = split_header(header)[1]
    known = ", ".join(PRESSURE_UNITS) if kind == "pressure" else ", ".join(MEASURED_AMOUNT_UNITS)
    if kind == "temperature":
        if unit_text:
            return f"temperatures must be in K; the header says {unit_text!r}, so the column is not used"
        return "the header gives no unit; choose it as the temperature column if it is in K"
    if unit_text is None:
        return f"the header names no {kind} unit; choose one of {known}"
    key = _unit_key(unit_text)
    if key in ("cm3/g", "cm3"):
        return (f"{unit_text!r} does not say STP (gas volume at 273.15 K, 101.325 kPa); choose the unit "
                f"(one of {known})")
    return f"porefill does not read the unit {unit_text!r}; choose one of {known}"


def guess_columns(columns: tuple[str, ...], *, has_header: bool) -> tuple[ColumnMap, list[tuple[str, str]]]:
    """The column map a header suggests, and notes (column, message) about doubtful guesses.

    A headerless file of two columns is read as pressure, amount (units unknown). Of several candidate
    columns the first with a recognised unit is used, and a note says so.
    """
    notes: list[tuple[str, str]] = []
    if not has_header:
        if len(columns) == 2:
            return ColumnMap(pressure=columns[0], amount=columns[1]), notes
        return ColumnMap(), notes
    parsed = [(c,) + parse_unit_from_header(c) for c in columns]
    chosen: dict[str, str | None] = {}
    for kind in ("pressure", "amount"):
        candidates = [(c, u) for c, k, u in parsed if k == kind]
        with_unit = [(c, u) for c, u in candidates if u] or candidates
        if with_unit:
            chosen[kind], chosen[f"{kind}_unit"] = with_unit[0]
        if len(candidates) > 1:
            names = ", ".join(repr(c) for c, _ in candidates)
            notes.append((with_unit[0][0], f"several {kind} columns ({names}); using {with_unit[0][0]!r} — "
                                           "choose another if needed"))
    temperatures = [c for c, k, u in parsed if k == "temperature"]
    for c in temperatures:
        if parse_unit_from_header(c)[1] == "K" and "temperature" not in chosen:
            chosen["temperature"] = c
        elif parse_unit_from_header(c)[1] != "K":
            notes.append((c, unit_advice("temperature", c)))
    legs = [c for c, k, _ in parsed if k == "leg"]
    if legs:
        chosen["leg"] = legs[0]
    runs = [c for c in columns if _is_run_header(c)]
    if runs:
        chosen["run"] = runs[0]
    return ColumnMap(**chosen), notes
