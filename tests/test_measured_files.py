"""The reader of lab isotherm files (explorer.measured): round trips through many layouts and units, units
read from headers, a gallery of bad and hostile files each answered by its own message, property-based tests.

All data here is invented for the tests. Values are written with repr() so the text carries every digit;
reading them back must give the same floats (rtol 1e-12; the parser is correctly rounded, so in fact equal).
"""
from __future__ import annotations

import gzip
import io
import re
import zipfile

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from explorer.measured import (LIMITS, ColumnMap, FileProblem, MeasuredFileError, ReadResult, parse_unit_from_header,
                               read_measured, read_measured_path)

RTOL = 1e-12   # the text carries all 17 digits


def _points(n: int = 12, seed: int = 0) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    pressure = np.sort(rng.uniform(0.0, 1.0, n)) * 10.0 ** rng.uniform(-3, 5) + 1e-3
    amount = np.cumsum(rng.uniform(0.01, 2.0, n))
    return pressure, amount


def _text(header: str | None, pressure, amount, *, delimiter=",", decimal=".", comments=()) -> str:
    def fmt(v):
        return repr(float(v)).replace(".", decimal)

    lines = list(comments) + ([header] if header is not None else [])
    lines += [f"{fmt(p)}{delimiter}{fmt(a)}" for p, a in zip(pressure, amount)]
    return "\n".join(lines) + "\n"


def _xlsx(rows: list[list], *, title: str = "Sheet", more_sheets: dict | None = None) -> bytes:
    import openpyxl

    book = openpyxl.Workbook()
    sheet = book.active
    sheet.title = title
    for row in rows:
        sheet.append(row)
    for name, extra in (more_sheets or {}).items():
        other = book.create_sheet(name)
        for row in extra:
            other.append(row)
    out = io.BytesIO()
    book.save(out)
    return out.getvalue()


def _one_run(result: ReadResult):
    assert result.ok, [str(p) for p in result.problems]
    assert len(result.runs) == 1, [r.name for r in result.runs]
    return result.runs[0]


# --- round trips -----------------------------------------------------------------------------------------------

P, A = _points()
ROUND_TRIPS = [
    # (file name, bytes, column choices, pressure unit, amount unit)
    ("torr_cc.csv", _text("P (Torr),V (cm3 STP/g)", P, A).encode(), None, "Torr", "cm3(STP)/g"),
    ("kpa_mmol.tsv", _text("pressure / kPa\tamount / mmol g-1", P, A, delimiter="\t").encode(), None, "kPa", "mmol/g"),
    ("relative.csv", _text("p/p0,n (mmol/g)", P / P.max(), A).encode(), None, "p/p0", "mmol/g"),
    ("dosed.csv", _text("P [mbar],dosed (mol)", P, A * 1e-5).encode(), None, "mbar", "mol"),
    ("decimal_comma.csv", _text("P (Pa);n (mmol/g)", P, A, delimiter=";", decimal=",").encode(), None, "Pa",
     "mmol/g"),
    ("decimal_comma_tab.txt", _text("P (Pa)\tuptake (mol/g)", P, A, delimiter="\t", decimal=",").encode(), None,
     "Pa", "mol/g"),
    ("whitespace.dat", _text("P_mbar   Vads_[cm³(STP)/g]", P, A, delimiter="   ").encode(), None, "mbar",
     "cm3(STP)/g"),
    ("whitespace_names.dat", _text("P (Pa)    N (per nm)", P, A, delimiter="  ").encode(), None, "Pa", "per nm"),
    ("no_header.csv", _text(None, P, A).encode(), ColumnMap(pressure_unit="bar", amount_unit="per nm2 wall"), "bar",
     "per nm2 wall"),
    ("no_header_ws.txt", _text(None, P, A, delimiter=" ").encode(), ColumnMap(pressure_unit="Pa", amount_unit="mol"),
     "Pa", "mol"),
    ("bom.csv", b"\xef\xbb\xbf" + _text("p (Torr),coverage (molecules/nm2)", P, A).encode(), None, "Torr",
     "per nm2 wall"),
    ("utf16.csv", _text("P (Pa)\tVads [cm³(STP)/g]", P, A, delimiter="\t").encode("utf-16"), None, "Pa",
     "cm3(STP)/g"),
    ("utf16be.csv", b"\xfe\xff" + _text("P (Pa),n (mmol/g)", P, A).encode("utf-16-be"), None, "Pa", "mmol/g"),
    ("cp1252.csv", _text("P (Pa);V (cm³ STP/g)", P, A, delimiter=";", decimal=",").encode("cp1252"), None, "Pa",
     "cm3(STP)/g"),
    ("comments.csv", _text("P (kPa),dosed volume (cm3 STP)", P, A, comments=["# invented data", "% second note"])
     .encode(), None, "kPa", "cm3(STP)"),
    ("crlf.csv", _text("P (Pa),n (mmol/g)", P, A).replace("\n", "\r\n").encode(), None, "Pa", "mmol/g"),
    ("quoted.csv", ('"P, Pa","n, mmol/g"\n' + "".join(f'"{p!r}","{a!r}"\n' for p, a in zip(P.tolist(), A.tolist()))).encode(), None,
     "Pa", "mmol/g"),
    ("quoted_comma_decimal.csv", ('"P (Pa)";"n (mmol/g)"\n' + "".join(
        f'"{p!r}";"{a!r}"\n'.replace(".", ",") for p, a in zip(P.tolist(), A.tolist()))).encode(), None, "Pa", "mmol/g"),
    ("book.xlsx", _xlsx([["P (Pa)", "n (mmol/g)"]] + [[float(p), float(a)] for p, a in zip(P, A)]), None, "Pa",
     "mmol/g"),
    ("book_no_header.xlsx", _xlsx([[float(p), float(a)] for p, a in zip(P, A)]),
     ColumnMap(pressure_unit="Torr", amount_unit="mmol/g"), "Torr", "mmol/g"),
    ("trailing_delimiters.csv", _text("P (Pa),n (mmol/g),", P, A, delimiter=",").replace("\n", ",\n").encode(), None,
     "Pa", "mmol/g"),
]


@pytest.mark.parametrize("name, data, choices, p_unit, a_unit", ROUND_TRIPS, ids=[r[0] for r in ROUND_TRIPS])
def test_round_trip(name, data, choices, p_unit, a_unit):
    run = _one_run(read_measured(name, data, columns=choices))
    pressure = P / P.max() if p_unit == "p/p0" else P
    amount = A * 1e-5 if a_unit == "mol" and name == "dosed.csv" else A
    assert (run.pressure_unit, run.amount_unit, run.leg) == (p_unit, a_unit, "adsorption")
    np.testing.assert_allclose(run.pressure, pressure, rtol=RTOL)
    np.testing.assert_allclose(run.amount, amount, rtol=RTOL)
    assert run.rows.size == P.size and np.all(np.diff(run.rows) >= 1)
    assert run.source == name and run.name.startswith(name)


def test_rows_are_the_lines_a_person_sees():
    text = "# invented\n\nP (Pa),n (mmol/g)\n1.0,0.5\n\n# note in between\n2.0,0.7\n3.0,0.9\n"
    run = _one_run(read_measured("rows.csv", text.encode()))
    assert run.rows.tolist() == [4, 7, 8]


def test_workbook_rows_are_sheet_rows_and_a_chosen_sheet_is_read():
    data = _xlsx([["invented data"], [], ["P (kPa)", "n (mmol/g)"], [1.0, 0.1], [2.0, 0.2]],
                 more_sheets={"second": [["P (Torr)", "V (cm3 STP/g)"], [5.0, 1.0], [6.0, 2.0], [7.0, 3.0]]})
    first = read_measured("book.xlsx", data)
    assert first.sheets == ("Sheet", "second")
    assert _one_run(first).rows.tolist() == [4, 5]
    second = _one_run(read_measured("book.xlsx", data, sheet="second"))
    assert (second.pressure_unit, second.amount_unit, second.rows.tolist()) == ("Torr", "cm3(STP)/g", [2, 3, 4])
    assert "second" in second.name


def test_two_header_rows_names_then_units():
    text = "pressure;amount\nkPa;mmol/g\n1,5;0,25\n2,5;0,5\n"
    result = read_measured("two_rows.csv", text.encode())
    run = _one_run(result)
    assert result.columns == ("pressure (kPa)", "amount (mmol/g)")
    assert (run.pressure_unit, run.amount_unit) == ("kPa", "mmol/g")
    np.testing.assert_allclose(run.pressure, [1.5, 2.5], rtol=RTOL)


def test_legs_by_pressure_direction_turning_point_in_adsorption():
    p = [1.0, 2.0, 4.0, 8.0, 6.0, 3.0, 1.5]
    a = [0.1, 0.2, 0.4, 0.8, 0.7, 0.5, 0.3]
    result = read_measured("loop.csv", _text("P (Pa),n (mmol/g)", p, a).encode(), temperature_k=77.35)
    ads, des = result.runs
    assert (ads.leg, des.leg) == ("adsorption", "desorption")
    assert ads.pressure.tolist() == [1.0, 2.0, 4.0, 8.0] and des.pressure.tolist() == [6.0, 3.0, 1.5]
    assert ads.name == "loop.csv · 77.35 K · adsorption" and des.name == "loop.csv · 77.35 K · desorption"
    assert ads.temperature_k == 77.35


def test_one_point_after_the_top_stays_in_adsorption():
    result = read_measured("end.csv", _text("P (Pa),n (mmol/g)", [1.0, 2.0, 4.0, 3.9], [1.0, 2.0, 3.0, 3.1]).encode())
    run = _one_run(result)
    assert run.pressure.tolist() == [1.0, 2.0, 4.0, 3.9]
    assert any("falls within the adsorption leg at rows 5" in str(p) for p in result.problems)


@pytest.mark.parametrize("ads, des", [("ads", "des"), ("a", "d"), ("Adsorption", "Desorption"), ("up", "down"),
                                      ("1", "-1")])
def test_legs_by_a_leg_column(ads, des):
    text = f"P (Pa),n (mmol/g),branch\n1,0.1,{ads}\n2,0.2,{ads}\n3,0.3,{des}\n2.5,0.25,{des}\n2.7,0.28,{ads}\n"
    result = read_measured("legs.csv", text.encode())
    assert result.used.leg == "branch"
    by_leg = {run.leg: run for run in result.runs}
    assert by_leg["adsorption"].rows.tolist() == [2, 3, 6]
    assert by_leg["desorption"].rows.tolist() == [4, 5]


def test_several_runs_by_temperature_and_run_columns():
    lines = ["run,T (K),P (Pa),n (mmol/g)"]
    for label, t in (("A", 77.35), ("B", 87.3)):
        for k, p in enumerate([1.0, 2.0, 3.0]):
            lines.append(f"{label},{t + 0.001 * k},{p},{0.1 * (k + 1)}")   # the bath drifts by 1 mK a point
    result = read_measured("runs.csv", ("\n".join(lines) + "\n").encode())
    assert (result.used.run, result.used.temperature) == ("run", "T (K)")
    assert [r.name for r in result.runs] == ["runs.csv · A · 77.351 K · adsorption",
                                             "runs.csv · B · 87.301 K · adsorption"]
    assert [r.rows.tolist() for r in result.runs] == [[2, 3, 4], [5, 6, 7]]
    assert result.runs[1].temperature_k == pytest.approx(87.301, rel=1e-12)


@pytest.mark.parametrize("comment, argument, expected, note", [
    ("# T = 77.35 K", None, 77.35, None),
    ("% temperature: 4.2 K", None, 4.2, None),
    ("# Temperature (K): 1.5", None, 1.5, None),
    ("# T = 77.35 K", 87.3, 87.3, "the file's comments say 77.35 K; using the given 87.3 K"),
    ("# invented", 2.0, 2.0, None),
    ("# invented", None, None, None),
])
def test_temperature_from_argument_or_comment(comment, argument, expected, note):
    text = _text("P (Pa),n (mmol/g)", [1, 2], [1, 2], comments=[comment])
    result = read_measured("t.csv", text.encode(), temperature_k=argument)
    assert _one_run(result).temperature_k == expected
    assert (note in [p.message for p in result.problems]) if note else True


def test_dosed_points_without_pressure_are_kept_and_noted_once():
    text = "P (Pa),dosed (mol)\n,1e-6\nnan,2e-6\n0,3e-6\n1.5,4e-6\n3.0,5e-6\n"
    result = read_measured("dosed.csv", text.encode())
    run = _one_run(result)
    assert run.amount.tolist() == [1e-6, 2e-6, 3e-6, 4e-6, 5e-6]
    assert np.isnan(run.pressure[:3]).all() and run.pressure[3:].tolist() == [1.5, 3.0]
    messages = [str(p) for p in result.problems]
    assert sum("have no pressure" in m for m in messages) == 1
    assert any("row 2" in m and "rows 2, 3" in m for m in messages)
    assert any("row 4" in m and "zero pressure" in m and "no usable pressure" in m for m in messages)


def test_user_choices_override_the_guess():
    text = "P (Pa),n (mmol/g),V (cm3 STP/g)\n1,0.1,2.2\n2,0.2,4.4\n"
    result = read_measured("choose.csv", text.encode(), columns=ColumnMap(amount="V (cm3 STP/g)",
                                                                           pressure_unit="kPa"))
    assert result.guessed.amount == "n (mmol/g)"
    assert (result.used.amount, result.used.amount_unit, result.used.pressure_unit) == \
        ("V (cm3 STP/g)", "cm3(STP)/g", "kPa")
    assert _one_run(result).amount.tolist() == [2.2, 4.4]
    assert any("the header says Pa; using the chosen kPa" in str(p) for p in result.problems)


def test_missing_units_leave_the_result_not_ok_and_say_what_to_choose():
    result = read_measured("bare.csv", b"P,n\n1,2\n3,4\n")
    assert not result.ok and result.to_choose == ("pressure_unit", "amount_unit")
    assert (result.guessed.pressure, result.guessed.amount) == ("P", "n")
    assert any("names no pressure unit" in str(p) and "column 'P'" in str(p) for p in result.problems)


def test_read_measured_path(tmp_path):
    path = tmp_path / "run.csv"
    path.write_bytes(b"P (Pa),n (mmol/g)\n1,2\n3,4\n")
    assert _one_run(read_measured_path(path)).amount.tolist() == [2.0, 4.0]
    with pytest.raises(MeasuredFileError, match="no such file"):
        read_measured_path(tmp_path / "missing.csv")
    with pytest.raises(MeasuredFileError, match="is a directory"):
        read_measured_path(tmp_path)
    with pytest.raises(MeasuredFileError, match="larger than"):
        read_measured_path(path, max_bytes=10)


def test_problem_text_names_file_row_column_value():
    problem = FileProblem("run1.csv", 7, "P (Pa)", "abc", "not a number")
    assert str(problem) == "run1.csv, row 7, column 'P (Pa)', value 'abc': not a number"
    assert str(FileProblem("run1.csv", None, None, None, "the file is empty")) == "run1.csv: the file is empty"


@pytest.mark.parametrize("field, value", [("pressure_unit", "psi"), ("amount_unit", "mmol"), ("pressure", 3)])
def test_column_map_refuses_unknown_units_by_name(field, value):
    with pytest.raises(ValueError, match=field):
        ColumnMap(**{field: value})


# --- units from headers ----------------------------------------------------------------------------------------

HEADERS = [  # header → (kind, unit); spellings common practice, no source
    ("pressure (Pa)", ("pressure", "Pa")), ("P [mbar]", ("pressure", "mbar")), ("p/p0", ("pressure", "p/p0")),
    ("P/P0", ("pressure", "p/p0")), ("relative pressure", ("pressure", "p/p0")), ("P/Po", ("pressure", "p/p0")),
    ("p (Torr)", ("pressure", "Torr")), ("pressure / kPa", ("pressure", "kPa")), ("P_kPa", ("pressure", "kPa")),
    ("Absolute Pressure (KPA)", ("pressure", "kPa")), ("p (hPa)", ("pressure", "mbar")), ("P / bar", ("pressure", "bar")),
    ("amount / mmol g-1", ("amount", "mmol/g")), ("n (mmol/g)", ("amount", "mmol/g")),
    ("n (mmol·g⁻¹)", ("amount", "mmol/g")), ("q [mmol g^-1]", ("amount", "mmol/g")),
    ("V (cm3 STP/g)", ("amount", "cm3(STP)/g")), ("Vads [cm³(STP)/g]", ("amount", "cm3(STP)/g")),
    ("Quantity Adsorbed (cm³/g STP)", ("amount", "cm3(STP)/g")), ("V (cc STP g-1)", ("amount", "cm3(STP)/g")),
    ("uptake (mol/g)", ("amount", "mol/g")), ("coverage (molecules/nm2)", ("amount", "per nm2 wall")),
    ("coverage (molecules per nm²)", ("amount", "per nm2 wall")), ("Γ (nm-2)", ("amount", "per nm2 wall")),
    ("N (per nm)", ("amount", "per nm")), ("N (atoms/nm)", ("amount", "per nm")), ("dosed (mol)", ("amount", "mol")),
    ("dosed volume (cm3 STP)", ("amount", "cm3(STP)")), ("T (K)", ("temperature", "K")),
    ("temperature / K", ("temperature", "K")),
    # no unit there: never guessed
    ("P", ("pressure", None)), ("pressure", ("pressure", None)), ("P (psi)", ("pressure", None)),
    ("P (MPa)", ("pressure", None)), ("V (cm3/g)", ("amount", None)), ("n (µmol/g)", ("amount", None)),
    ("amount", ("amount", None)), ("T (°C)", ("temperature", None)), ("T", ("temperature", None)),
    ("branch", ("leg", None)), ("ads/des", ("leg", None)), ("time (s)", ("other", None)), ("", ("other", None)),
    ("x (Pa)", ("pressure", "Pa")),
]


@pytest.mark.parametrize("header, expected", HEADERS, ids=[h[0] or "empty" for h in HEADERS])
def test_parse_unit_from_header(header, expected):
    assert parse_unit_from_header(header) == expected
