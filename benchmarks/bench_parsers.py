"""Parse time against input size for every parser of a user's file: linear growth, no input that stalls.

Each kind of input is made at sizes from 10 kB to 4 MB (in memory, invented here) and read directly (not in
the worker, whose ~1 s start is printed once at the end). Hostile shapes are the issue-22 reproductions: a
comment line of spaces after a temperature word, one long cell of digits and a letter, a long run of spaces
after "[" inside a TOML multi-line string (with an unknown key, so the reader searches for its line), and
a password file that is one long line. The last column, µs per kB, stays flat when growth is linear.

Run: .venv/bin/python benchmarks/bench_parsers.py
"""
from __future__ import annotations

import time

from porefill.explorer.files.measured import MeasuredFileError, read_measured
from porefill.explorer.files.scenario_file import ScenarioFileError, parse_document

SIZES = (10_000, 40_000, 160_000, 640_000, 1_000_000, 4_000_000)
HEAD = "P (Pa),n (mmol/g)\n"
BASE = '[scenario]\nshape = "hexagon"\nsize_angstrom = 15.0\nwall_angstrom = 8.0\nadsorbate = "helium-4"\n'


def csv_rows(size: int) -> bytes:
    line = "12345.678,0.987654,77.35,1.5,2.5,3.5\n"
    return (HEAD + line * max(1, size // len(line))).encode()


def csv_comment_line(size: int) -> bytes:
    return ("# T" + " " * size + "\n" + HEAD + "1,2\n3,4\n").encode()


def csv_long_cell(size: int) -> bytes:
    return (HEAD + "1,2\n" + "9" * size + "x,3\n5,6\n").encode()


def toml_bracket_spaces(size: int) -> str:
    return BASE + 'title = """\n[' + " " * size + 'x\n"""\nbogus = 1\n'


def toml_measured(size: int) -> str:
    n = max(1, size // 40)
    values = ", ".join(f"{1.0 + i:.6f}" for i in range(n))
    return (BASE + '[[measured]]\nname = "run"\nsource = "x.csv"\nleg = "adsorption"\ntemperature_k = 1.5\n'
            f'pressure_unit = "Pa"\namount_unit = "mmol/g"\npressure = [{values}]\namount = [{values}]\n')


def _time(fn, data) -> tuple[float, str]:
    best = float("inf")
    outcome = ""
    for _ in range(3):
        start = time.perf_counter()
        try:
            fn(data)
            outcome = "read"
        except (MeasuredFileError, ScenarioFileError) as exc:
            outcome = "refused: " + str(exc).splitlines()[0][:60]
        best = min(best, time.perf_counter() - start)
    return best, outcome


def main() -> None:
    cases = [
        ("csv rows", csv_rows, lambda d: read_measured("rows.csv", d)),
        ("csv comment '# T' + spaces", csv_comment_line, lambda d: read_measured("comment.csv", d)),
        ("csv one long cell", csv_long_cell, lambda d: read_measured("cell.csv", d)),
        ("toml '[' + spaces, bad key", toml_bracket_spaces, lambda t: parse_document(t, name="b.toml")),
        ("toml measured arrays", toml_measured, lambda t: parse_document(t, name="m.toml")),
    ]
    print(f"{'input':30s} {'size':>9s} {'time (ms)':>10s} {'µs/kB':>8s}  outcome")
    for label, make, parse in cases:
        for size in SIZES:
            data = make(size)
            seconds, outcome = _time(parse, data)
            kb = len(data) / 1024
            print(f"{label:30s} {kb:8.0f}k {seconds * 1e3:10.2f} {seconds * 1e6 / kb:8.1f}  {outcome}", flush=True)
    from porefill.explorer.server.security import ServeError, read_password
    import tempfile
    from pathlib import Path

    with tempfile.TemporaryDirectory() as folder:
        for size in SIZES[:4]:
            path = Path(folder) / "password"
            path.write_text("p" * size + "\n", encoding="utf-8")
            start = time.perf_counter()
            try:
                read_password(str(path))
                outcome = "read"
            except ServeError as exc:
                outcome = "refused: " + str(exc)[-60:]
            seconds = time.perf_counter() - start
            print(f"{'password file, one line':30s} {size / 1024:8.0f}k {seconds * 1e3:10.2f} "
                  f"{seconds * 1e6 / (size / 1024):8.1f}  {outcome}")
    from porefill.explorer.jobs import file_parse

    # a file read here, in a process started for it, then in the reader started ahead of need (as the dashboard
    # does: `keep_ready` when a page opens, and the next one started while a file is read)
    data = csv_rows(10_000)
    start = time.perf_counter()
    read_measured("rows.csv", data)
    print(f"a 10 kB read in this process: {(time.perf_counter() - start) * 1e3:.0f} ms")
    take = file_parse._take_standby
    for ahead in (False, False, True, True):
        file_parse._take_standby = take if ahead else (lambda memory_bytes: None)
        if ahead:
            file_parse.keep_ready()
            time.sleep(5.0)                 # the time a user takes to pick a file: the standby is ready
        start = time.perf_counter()
        file_parse.parse_in_worker(read_measured, "rows.csv", data, file_name="rows.csv", refusals=(MeasuredFileError,))
        print(f"{'reader started ahead' if ahead else 'process started for the file'}, a 10 kB read in it: "
              f"{(time.perf_counter() - start) * 1e3:.0f} ms")
    file_parse._take_standby = take
    back_to_back(data)


def back_to_back(data: bytes, files: int = 5) -> None:
    """Files read one right after another (several dropped at once): each gets a fresh process, and the one
    started ahead is used up by the first. Spawned (each pays Python's start-up and the imports), then forked
    from the fork server that imported the readers once (`porefill.explorer.jobs.background._context`)."""
    import multiprocessing

    from porefill.explorer.jobs import background, file_parse

    forked = background._context
    for how in ("spawned", "forked from the fork server"):
        background._context = forked if how.startswith("forked") else (
            lambda preload=(): multiprocessing.get_context("spawn"))
        file_parse.keep_ready()
        time.sleep(5.0)
        times = []
        for i in range(files):
            start = time.perf_counter()
            file_parse.parse_in_worker(read_measured, f"r{i}.csv", data, file_name=f"r{i}.csv",
                                       refusals=(MeasuredFileError,))
            times.append(time.perf_counter() - start)
        print(f"{files} files back to back, {how}: " + ", ".join(f"{t * 1e3:.0f}" for t in times)
              + f" ms (total {sum(times):.2f} s)")
    background._context = forked


if __name__ == "__main__":
    main()
