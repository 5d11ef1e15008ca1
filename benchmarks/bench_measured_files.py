"""Reader timings: generated isotherm files of about 1 MB and 50 MB (CSV, decimal-comma semicolon, whitespace),
an .xlsx of 20 000 rows, and how fast a file over the row limit is refused.

The files are invented here (random numbers in an instrument-like layout of 13 columns, at most the row limit), never written to disk.
Prints JSON lines. Run: .venv/bin/python benchmarks/bench_measured_files.py
"""
from __future__ import annotations

import io
import json
import os
import time

import numpy as np

from porefill.explorer.files.measured import LIMITS, MeasuredFileError, read_measured

_HEADER = ["P (Pa)", "n (mmol/g)", "p/p0", "T (K)", "time (s)", "dose", "p_dose (Pa)", "V_cell (cm3)",
           "T_bath (K)", "T_room (K)", "flow", "heater", "index"]


def _rows(n: int, rng: np.random.Generator) -> np.ndarray:
    p = np.concatenate([np.geomspace(1e-2, 1e5, n - n // 2), np.geomspace(1e5, 1e-2, n // 2)])
    cols = [p, np.log1p(p) * (1 + 1e-3 * rng.standard_normal(n)), p / 1e5, 77.35 + 1e-3 * rng.standard_normal(n)]
    cols += [rng.random(n) * 10.0 ** rng.integers(-3, 6, n) for _ in range(8)]
    return np.column_stack(cols + [np.arange(n)])


def _text(target_bytes: int, delimiter: str, decimal: str, rng) -> bytes:
    def body_of(table):
        return "\n".join(delimiter.join(repr(float(v)) for v in row) for row in table)

    line_bytes = len(body_of(_rows(200, rng))) / 200 + 1
    table = _rows(min(LIMITS["max_rows"], max(10, int(target_bytes / line_bytes))), rng)
    header = delimiter.join(h.replace(" ", "_") if delimiter == " " else h for h in _HEADER)
    body = body_of(table)
    if decimal == ",":
        body = body.replace(".", ",")
    return (f"# invented benchmark data\n{header}\n{body}\n").encode()


def _xlsx(n: int, rng) -> bytes:
    import openpyxl

    book = openpyxl.Workbook(write_only=True)
    sheet = book.create_sheet("data")
    sheet.append(_HEADER)
    for row in _rows(n, rng):
        sheet.append([float(v) for v in row])
    out = io.BytesIO()
    book.save(out)
    return out.getvalue()


def _time(name: str, data: bytes, reps: int) -> dict:
    times = []
    for _ in range(reps):
        t0 = time.perf_counter()
        result = read_measured(name, data)
        times.append(time.perf_counter() - t0)
    points = sum(run.amount.size for run in result.runs)
    return {"benchmark": f"read_measured_{name}", "bytes": len(data), "points": points, "runs": len(result.runs),
            "best_s": round(min(times), 3), "reps": reps, "load_avg_1min": round(os.getloadavg()[0], 2)}


def main() -> None:
    rng = np.random.default_rng(1)
    read_measured("warmup.csv", b"P (Pa),n (mmol/g)\n1,2\n2,3\n")
    for size, reps in ((2**20, 5), (50 * 2**20, 2)):
        for name, delimiter, decimal in (("comma.csv", ",", "."), ("semicolon_decimal_comma.csv", ";", ","),
                                         ("whitespace.txt", " ", ".")):
            data = _text(size, delimiter, decimal, rng)
            print(json.dumps({**_time(f"{size // 2**20}MB_{name}", data, reps), "columns": len(_HEADER)}), flush=True)
    data = _xlsx(20_000, rng)
    print(json.dumps(_time("20000_rows.xlsx", data, 2)), flush=True)
    too_many = b"P (Pa),n (mmol/g)\n" + b"1.0,2.0\n" * (LIMITS["max_rows"] + 1)
    t0 = time.perf_counter()
    try:
        read_measured("too_many_rows.csv", too_many)
        outcome = "read"
    except MeasuredFileError:
        outcome = "refused"
    print(json.dumps({"benchmark": "refuse_over_row_limit", "bytes": len(too_many), "outcome": outcome,
                      "s": round(time.perf_counter() - t0, 3)}))


if __name__ == "__main__":
    main()
