"""Reading lab isotherm files: delimited text and .xlsx workbooks to `porefill.physics.fitting.measured.MeasuredRun` objects.

Public face (other modules import from here, not from the private modules behind it)::

    read_measured(name, data, *, columns=None, sheet=None, temperature_k=None, max_bytes=64 MiB) -> ReadResult
    read_measured_path(path, **kw) -> ReadResult
    parse_unit_from_header(header) -> (kind, unit or None)
    FileProblem, ColumnMap, ReadResult, MeasuredFileError, LIMITS

Files are read from bytes in memory with pandas (delimited text) and openpyxl through pandas (.xlsx, cached
values only: formulas are never evaluated); nothing is written to disk and nothing in a file is executed.
What is accepted, what is guessed and what happens to bad rows: `porefill.explorer.files.measured.table` (layouts),
`porefill.explorer.files.measured.headers` (units), `porefill.explorer.files.measured.runs` (rows, runs, legs), `porefill.explorer.files.measured.decode`
(file types and encodings).
"""
from porefill.explorer.files.measured.headers import parse_unit_from_header
from porefill.explorer.files.measured.model import LIMITS, ColumnMap, FileProblem, MeasuredFileError, ReadResult
from porefill.explorer.files.measured.reader import read_measured, read_measured_path

__all__ = ["read_measured", "read_measured_path", "parse_unit_from_header", "FileProblem", "ColumnMap",
           "ReadResult", "MeasuredFileError", "LIMITS"]
