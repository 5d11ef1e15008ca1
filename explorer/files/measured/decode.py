"""Bytes to something a table can be read from: text (with its encoding found) or an .xlsx workbook.

Decided by content first (magic numbers, byte-order marks), then by the name: a tab-separated export named
.xls is read as text (with a note), an old binary .xls is refused. Nothing is written or executed.
"""
from __future__ import annotations

import io
import zipfile
from pathlib import PurePath

from porefill.explorer.files.measured.model import LIMITS, Problems

__all__ = ["ACCEPTED", "classify"]

TEXT_SUFFIXES = (".csv", ".tsv", ".txt", ".dat", ".tab", ".asc", ".prn")
ACCEPTED = "delimited text (.csv, .tsv, .txt, .dat) or an Excel workbook (.xlsx)"
_SAVE_AS = "save the sheet as .xlsx or CSV"

_REFUSED_SUFFIXES = {
    ".xlsm": f"a workbook with macros (.xlsm); macros are never run, but porefill reads only .xlsx — {_SAVE_AS}",
    ".xlsb": f"a binary Excel workbook (.xlsb); {_SAVE_AS}",
    ".ods": f"an OpenDocument spreadsheet (.ods); {_SAVE_AS}",
    ".numbers": f"a Numbers document; {_SAVE_AS}",
    ".json": f"JSON, not a table; porefill reads {ACCEPTED}",
    ".html": f"a web page, not a table; porefill reads {ACCEPTED}",
    ".htm": f"a web page, not a table; porefill reads {ACCEPTED}",
    ".xml": f"XML, not a table; porefill reads {ACCEPTED}",
    ".pdf": f"a PDF document; porefill reads {ACCEPTED}",
    ".png": f"an image; porefill reads {ACCEPTED}",
    ".jpg": f"an image; porefill reads {ACCEPTED}",
    ".jpeg": f"an image; porefill reads {ACCEPTED}",
    ".doc": f"a Word document; porefill reads {ACCEPTED}",
    ".docx": f"a Word document; porefill reads {ACCEPTED}",
    ".zip": f"a zip archive; unpack it and give the table inside ({ACCEPTED})",
    ".gz": f"a compressed file; unpack it and give the table inside ({ACCEPTED})",
}

_MAGIC = (
    (b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1", f"an old binary Office file (.xls or .doc), which porefill does not "
                                          f"read; {_SAVE_AS}"),
    (b"%PDF-", "a PDF document, not a table"),
    (b"\x89PNG\r\n\x1a\n", "a PNG image, not a table"),
    (b"\xff\xd8\xff", "a JPEG image, not a table"),
    (b"GIF87a", "a GIF image, not a table"),
    (b"GIF89a", "a GIF image, not a table"),
    (b"\x1f\x8b", "a gzip-compressed file; unpack it first"),
    (b"7z\xbc\xaf\x27\x1c", "a 7-Zip archive; unpack it first"),
    (b"Rar!\x1a\x07", "a RAR archive; unpack it first"),
    (b"\x7fELF", "a program (ELF executable), not a table"),
    (b"{\\rtf", "a rich-text (RTF) document, not a table"),
)

_BOMS = (  # longest first: the UTF-32 LE mark begins with the UTF-16 LE one
    (b"\xff\xfe\x00\x00", "utf-32-le", "UTF-32"), (b"\x00\x00\xfe\xff", "utf-32-be", "UTF-32"),
    (b"\xef\xbb\xbf", "utf-8", "UTF-8"), (b"\xff\xfe", "utf-16-le", "UTF-16"), (b"\xfe\xff", "utf-16-be", "UTF-16"),
)


def _mb(n: float) -> str:
    return f"{n / 2**20:.0f} MB" if n >= 2**20 else f"{n / 1024:.0f} kB" if n >= 10 * 1024 else f"{n:.0f} bytes"


def _zip_kind(data: bytes, problems: Problems) -> str:
    """"xlsx" for an Excel workbook; otherwise a refusal naming what the archive is."""
    try:
        with zipfile.ZipFile(io.BytesIO(data)) as archive:
            infos = archive.infolist()
            names = {info.filename for info in infos}
            mimetype = archive.read("mimetype")[:100].decode("ascii", "replace") if "mimetype" in names else ""
    except (zipfile.BadZipFile, zipfile.LargeZipFile, OSError, RuntimeError, ValueError, NotImplementedError):
        raise problems.refuse("a damaged zip archive (an .xlsx workbook is a zip archive; this one cannot be "
                              "opened)") from None
    if "opendocument.spreadsheet" in mimetype:
        raise problems.refuse(_REFUSED_SUFFIXES[".ods"])
    if "xl/workbook.xml" not in names and "xl/workbook.bin" not in names:
        what = "a Word document" if "word/document.xml" in names else "a zip archive that is not an Excel workbook"
        raise problems.refuse(f"{what} (no xl/workbook.xml inside); porefill reads {ACCEPTED}")
    if "xl/workbook.bin" in names:
        raise problems.refuse(_REFUSED_SUFFIXES[".xlsb"])
    if "xl/vbaProject.bin" in names:
        raise problems.refuse(_REFUSED_SUFFIXES[".xlsm"])
    unpacked = sum(info.file_size for info in infos)
    if unpacked > LIMITS["max_unzipped_bytes"]:
        raise problems.refuse(f"the workbook unpacks to {_mb(unpacked)}, more than the {_mb(LIMITS['max_unzipped_bytes'])}"
                              " porefill opens (a zip bomb, or a sheet far larger than a measured isotherm)")
    return "xlsx"


def _looks_utf16(head: bytes) -> str | None:
    """utf-16-le/-be for text without a byte-order mark whose every other byte is zero."""
    if len(head) < 4:
        return None
    even, odd = head[0::2], head[1::2]
    for zeros, other, codec in ((odd, even, "utf-16-le"), (even, odd, "utf-16-be")):
        if zeros.count(0) >= 0.9 * len(zeros) and other.count(0) <= 0.1 * len(other):
            return codec
    return None


def _line_of(data: bytes, position: int) -> int:
    return data.count(b"\n", 0, position) + 1


def _decode(data: bytes, problems: Problems) -> str:
    for bom, codec, label in _BOMS:
        if data.startswith(bom):
            try:
                return data[len(bom):].decode(codec)
            except UnicodeDecodeError as exc:
                raise problems.refuse(f"starts with a {label} byte-order mark but is not valid {label} "
                                      f"(bad bytes at position {exc.start})") from None
    if b"\x00" in data:
        codec = _looks_utf16(data[:4096])
        if codec:
            try:
                text = data.decode(codec)
            except UnicodeDecodeError:
                text = None
            if text is not None:
                problems.add(f"no byte-order mark; read as {codec.upper()} (every other byte is zero)")
                return text
        raise problems.refuse(f"contains zero bytes: binary data, not a text table; porefill reads {ACCEPTED}")
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        first = exc.start
    for codec, label in (("cp1252", "Windows-1252 (cp1252)"), ("latin-1", "Latin-1 (ISO 8859-1)")):
        try:
            text = data.decode(codec)
        except UnicodeDecodeError:
            continue
        problems.add(f"not UTF-8 (byte 0x{data[first]:02X} is not valid UTF-8); read as {label} — check that "
                     "names and units look right", row=_line_of(data, first))
        return text
    raise AssertionError("latin-1 decodes every byte")  # pragma: no cover


def _text_checks(text: str, problems: Problems) -> None:
    head = text[:65536]
    controls = sum(1 for ch in head if (ord(ch) < 32 and ch not in "\t\n\r\f\v") or 0x7F <= ord(ch) < 0xA0)
    if controls > max(2, 0.01 * len(head)):
        raise problems.refuse(f"looks like binary data, not a text table ({controls} control characters in the "
                              f"first {len(head)}); porefill reads {ACCEPTED}")
    start = head.lstrip()[:200].lower()
    if start.startswith(("<!doctype html", "<html", "<head", "<body")) or "<html" in start:
        raise problems.refuse(f"looks like a web page (HTML), not a table; porefill reads {ACCEPTED}")
    tail = text.rstrip()[-1:]
    # markup from first to last character (a tag opens it, one closes it); a table whose first line starts
    # with "<" is still a table
    if start.startswith("<?xml") or (start[:1] == "<" and start[1:2].isalpha() and tail == ">"):
        raise problems.refuse(f"looks like XML or markup, not a table; porefill reads {ACCEPTED}")
    if (start.startswith("{") and tail == "}") or (start.startswith("[") and tail == "]"):
        raise problems.refuse(f"looks like JSON, not a table; porefill reads {ACCEPTED}")


def _with_accepted(what: str) -> str:
    return what if "porefill reads" in what or _SAVE_AS in what else f"{what}; porefill reads {ACCEPTED}"


def classify(name: str, data: bytes, problems: Problems, *, max_bytes: int) -> tuple[str, str | bytes]:
    """("text", decoded text) or ("xlsx", the bytes); raises MeasuredFileError for anything else."""
    if len(data) > max_bytes:
        raise problems.refuse(f"the file is {_mb(len(data))}, larger than the {_mb(max_bytes)} porefill reads")
    if not data.strip() or data in (b"\xef\xbb\xbf", b"\xff\xfe", b"\xfe\xff"):
        raise problems.refuse("the file is empty")
    suffix = PurePath(name).suffix.lower()
    if suffix in _REFUSED_SUFFIXES:
        raise problems.refuse(_with_accepted(_REFUSED_SUFFIXES[suffix]))
    if data[:4] in (b"PK\x03\x04", b"PK\x05\x06", b"PK\x07\x08"):
        kind = _zip_kind(data, problems)
        if suffix != ".xlsx":
            problems.add(f"named {suffix or 'without an ending'} but is an Excel workbook; read as .xlsx")
        return kind, data
    for magic, what in _MAGIC:
        if data.startswith(magic):
            raise problems.refuse(_with_accepted(what))
    if suffix == ".xlsx":
        raise problems.refuse("named .xlsx but is not an Excel workbook (an .xlsx file is a zip archive); "
                              f"porefill reads {ACCEPTED}")
    text = _decode(data, problems)
    _text_checks(text, problems)
    if suffix == ".xls":
        problems.add("named .xls but is delimited text (as some instruments export); read as text")
    elif suffix and suffix not in TEXT_SUFFIXES:
        problems.add(f"unfamiliar file ending {suffix!r}; read as delimited text")
    return "text", text
