"""Sniff how a logger wrote its CSV: encoding, separator, decimal mark, preamble, header.

Only the head of the file (about the first 200 lines) is looked at in Python; the bulk
of the data is then parsed by pandas with what was found here.

Rules (applied in this order):

* Encoding: UTF-8 with or without BOM; if the head is not valid UTF-8, Latin-1 (the
  usual fallback of older loggers writing ``µ`` as byte 0xB5), reported in a note.
  NUL bytes or other control characters mean the file is not text.
* Comment lines start with ``#`` (after optional blanks) and are skipped; blank lines
  are skipped.
* Separator and decimal mark: each candidate (``,`` ``.``), (``;`` ``,``), (``;`` ``.``),
  (tab ``.``), (tab ``,``), (blanks ``.``), (blanks ``,``), (``,`` ``,`` in quoted
  cells) is tried.  Its first data row is the first line whose fields are all numbers
  (ISO-8601 or hh:mm:ss stamps allowed, empty / NaN cells tolerated) with one of the
  next 3 lines such a row of the same field count too (so a lone number in a preamble
  is skipped).  The candidate with a matching header (or data from the first line),
  then more columns, then earlier in the list, wins.  A decimal comma is kept only if
  a comma is seen in the data.
* Header: the line just before the first data row (or a ``#`` comment line right
  before it, for two or more columns), if it has as many fields as the data and none
  of them is a number.  Otherwise the columns are named ``column_1``...  A header row
  made only of units (``s,V``) under a row of names is read as the units row.
* Preamble: every earlier line of the form ``key: value``, ``key = value`` or
  ``key<sep>value`` (also inside ``#`` comments); keys lower-cased and stripped.
"""
from __future__ import annotations

import csv
import re
from dataclasses import dataclass, field

from ._errors import RecordError

__all__ = ["Dialect", "sniff", "split_lines", "split_fields", "WHITESPACE"]

WHITESPACE = r"\s+"
HEAD_LINES = 200
HEAD_BYTES = 1 << 18
_CANDIDATES = ((",", "."), (";", ","), (";", "."), ("\t", "."), ("\t", ","),
               (WHITESPACE, "."), (WHITESPACE, ","), (",", ","))
_NUMBER = re.compile(r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$")
_MISSING = {"", "nan", "na", "n/a", "null", "none", "-nan", "+nan"}
_ISO = re.compile(r"^\d{4}-\d{2}-\d{2}(?:[T ]\d{2}:\d{2}(?::\d{2}(?:[.,]\d+)?)?)?(?:Z|[+-]\d{2}:?\d{2})?$")
_CLOCK = re.compile(r"^\d{1,2}:\d{2}(?::\d{2}(?:[.,]\d+)?)?$")
_WS_FIELD = re.compile(r'"[^"]*"|[^\s"]+')
_LINE_END = re.compile(r"\r\n|\r|\n")
_CONTROL = re.compile(r"[\x00-\x08\x0b\x0e-\x1f\x7f]")
_CONTROL_LATIN1 = re.compile(r"[\x00-\x08\x0b\x0e-\x1f\x7f-\x9f]")


@dataclass(frozen=True)
class Dialect:
    """What :func:`sniff` found out about a CSV file (all line numbers 1-based)."""

    sep: str
    decimal: str
    encoding: str
    ncols: int
    header: tuple | None
    header_line: int | None
    data_line: int
    data_offset: int
    trailing_sep: bool
    metadata: dict = field(default_factory=dict)
    text_stamps: tuple = ()
    decimals: tuple = ()
    units: tuple | None = None
    notes: tuple = ()


def split_lines(text: str) -> list:
    """Split ``text`` into lines, keeping the end-of-line marks (``\\r\\n``, ``\\r``, ``\\n``)."""
    lines, start = [], 0
    for match in _LINE_END.finditer(text):
        lines.append(text[start:match.end()])
        start = match.end()
    if start < len(text):
        lines.append(text[start:])
    return lines


def split_fields(line: str, sep: str) -> list:
    """Split one line into stripped, unquoted fields for separator ``sep``."""
    line = line.rstrip("\r\n")
    if sep == WHITESPACE:
        return [p.strip('"') for p in _WS_FIELD.findall(line)]
    try:
        parts = next(csv.reader([line], delimiter=sep), [])
    except csv.Error:
        parts = line.split(sep)
    return [p.strip().strip('"').strip() for p in parts]


def _is_number(text: str, decimal: str) -> bool:
    if decimal == ",":
        if "." in text:
            return False
        text = text.replace(",", ".")
    return bool(_NUMBER.match(text)) or text.lower() in ("inf", "-inf", "+inf", "infinity")


def _row_kind(fields: list, decimal: str) -> bool:
    """True when every field is a number, missing, or (first field) an ISO stamp."""
    numbers = 0
    for j, f in enumerate(fields):
        if _is_number(f, decimal):
            numbers += 1
        elif f.lower() in _MISSING:
            continue
        elif _ISO.match(f) or _CLOCK.match(f):
            numbers += 1
        else:
            return False
    return numbers > 0


def _is_comment(line: str) -> bool:
    return line.lstrip().startswith("#")


def _decode_head(raw: bytes, source: str):
    nul = raw.find(b"\x00")
    if nul >= 0:
        raise RecordError(f"the file is not text (NUL byte at offset {nul}); expected a CSV file", source)
    bom = raw.startswith(b"\xef\xbb\xbf")
    body = raw[3:] if bom else raw
    head = body[:HEAD_BYTES]
    pos = 0
    for _ in range(HEAD_LINES + 1):  # the first lines are all that is sniffed
        pos = head.find(b"\n", pos) + 1
        if pos == 0:
            break
    if pos > 0:
        head = head[:pos]
    elif len(body) > HEAD_BYTES:
        cut = max(head.rfind(b"\n"), head.rfind(b"\r"))
        head = head[: cut + 1] if cut > 0 else head
    notes = []
    try:
        text = head.decode("utf-8")
        encoding = "utf-8"
    except UnicodeDecodeError as exc:
        if len(head) < len(body) and exc.start >= len(head) - 4:
            text = head[: exc.start].decode("utf-8")
            encoding = "utf-8"
        else:
            text = head.decode("latin-1")
            encoding = "latin-1"
            notes.append("encoding: the file is not UTF-8; read as Latin-1")
    bad = (_CONTROL_LATIN1 if encoding == "latin-1" else _CONTROL).search(text.rstrip("\x1a"))
    if bad:
        raise RecordError(f"the file is not text (control byte 0x{ord(bad.group()):02x} "
                          f"near line {text.count(chr(10), 0, bad.start()) + 1}); expected a CSV file",
                          source)
    return text, encoding, (3 if bom else 0), notes


def _split_header(line: str, sep: str, ncols: int):
    fields = split_fields(line, sep)
    if sep == WHITESPACE and len(fields) != ncols:
        # "t [ms]  x [V]": split on 2+ blanks or tabs, or glue bracketed units back on
        wide = [f.strip().strip('"') for f in re.split(r"\t|\s{2,}", line.strip()) if f.strip()]
        if len(wide) == ncols:
            return wide
        glued = []
        for f in fields:
            if glued and re.match(r"^[\[\(\{].*[\]\)\}]$", f):
                glued[-1] = f"{glued[-1]} {f}"
            else:
                glued.append(f)
        return glued
    return fields


def _split_preamble(line: str):
    text = line.strip().lstrip("#").strip()
    if not text:
        return None
    best = None
    for mark in (":", "=", ",", ";", "\t"):
        i = text.find(mark)
        if i > 0 and (best is None or i < best):
            best = i
    if best is None:
        return None
    key = " ".join(text[:best].strip().strip('"').split()).lower()
    value = text[best + 1:].strip().strip(",;\t").strip().strip('"').strip()
    return (key, value) if key else None


def _try(lines, content, sep, decimal):
    """First data row (index into ``content``) and column count for one candidate."""
    parsed = {}

    def fields(k):
        if k not in parsed:
            parsed[k] = split_fields(lines[content[k]], sep)
        return parsed[k]

    for k in range(len(content)):
        row = fields(k)
        if not _row_kind(row, decimal):
            continue
        follow = range(k + 1, min(k + 4, len(content)))
        if not follow or any(len(fields(m)) == len(row) and _row_kind(fields(m), decimal)
                             for m in follow):
            return k, len(row), fields
    return None


def sniff(raw: bytes, source: str) -> Dialect:
    """Find the dialect of a CSV file given as bytes (see the module notes for the rules)."""
    text, encoding, bom, notes = _decode_head(raw, source)
    lines = split_lines(text)[:HEAD_LINES]
    content = [i for i, line in enumerate(lines) if line.strip() and not _is_comment(line)]
    if not content:
        what = "only comments and blank lines" if lines else "nothing"
        raise RecordError(f"the file holds {what}; no data rows found", source)
    best = None
    for order, (sep, decimal) in enumerate(_CANDIDATES):
        found = _try(lines, content, sep, decimal)
        if found is None:
            continue
        k, ncols, fields = found
        row = fields(k)
        trailing = ncols > 1 and all(
            fields(m)[-1] == "" for m in range(k, min(k + 4, len(content)))) and row[-1] == ""
        n_eff = ncols - 1 if trailing else ncols
        header = header_index = None
        candidates = []
        if k > 0:
            candidates.append(content[k - 1])
        if n_eff > 1 and content[k] > 0 and _is_comment(lines[content[k] - 1]) \
                and not re.search(r"[:=]", lines[content[k] - 1]):
            candidates.append(content[k] - 1)  # "# time,x" written as a comment
        for index in candidates:
            line = lines[index].lstrip()
            line = line[1:] if line.startswith("#") else line
            cand = _split_header(line, sep, ncols)
            if len(cand) == n_eff + 1 and cand[-1] == "":
                cand = cand[:-1]
            if len(cand) == n_eff and not any(_is_number(c, decimal) for c in cand if c):
                header, header_index = tuple(cand), index
                break
        score = (header is not None or k == 0, n_eff, -order)
        if best is None or score > best[0]:
            best = (score, sep, decimal, k, n_eff, header, header_index, trailing, fields)
    if best is None:
        first = lines[content[0]].strip()
        if len(content) == 1:
            raise RecordError(f"no rows of numbers found; the only line is line {content[0] + 1}: "
                              f"{first[:60]!r}", source)
        raise RecordError(f"no rows of numbers found in the first {len(lines)} lines "
                          f"(line {content[0] + 1} reads {first[:60]!r})", source)
    _, sep, decimal, k, ncols, header, header_index, trailing, fields = best
    units = None
    if header is not None and _all_units(header):
        # two header rows: names, then units ("time,x" over "s,V")
        above = [i for i in content if i < header_index]
        if above:
            names = _split_header(lines[above[-1]], sep, ncols)
            if len(names) == ncols + 1 and names[-1] == "":
                names = names[:-1]
            if len(names) == ncols and not any(_is_number(c, decimal) for c in names if c) \
                    and not _all_units(names):
                header, units, header_index = tuple(names), header, above[-1]
    data_index = content[k]
    if decimal == ",":
        sample = [f for m in range(k, min(k + 50, len(content))) for f in fields(m)]
        if not any("," in f for f in sample):
            decimal = "."  # no decimal mark seen: integers read the same either way
    metadata = {}
    stop = header_index if header_index is not None else data_index
    for i in range(stop):
        pair = _split_preamble(lines[i])
        if pair and pair[0] not in metadata:
            metadata[pair[0]] = pair[1]
    rows = [fields(m) for m in range(k, min(k + 50, len(content)))]
    rows = [r for r in rows if len(r) >= ncols]
    stamps = tuple(bool(_ISO.match(f) or _CLOCK.match(f)) and not _is_number(f, decimal)
                   for f in rows[0][:ncols])
    decimals = tuple(max(_decimals(r[j], decimal, stamps[j]) for r in rows) for j in range(ncols))
    offset = bom + len("".join(lines[:data_index]).encode(encoding))
    return Dialect(sep=sep, decimal=decimal, encoding=encoding, ncols=ncols, header=header,
                   header_line=None if header_index is None else header_index + 1,
                   data_line=data_index + 1, data_offset=offset, trailing_sep=trailing,
                   metadata=metadata, text_stamps=stamps, decimals=decimals, units=units,
                   notes=tuple(notes))


def _all_units(cells) -> bool:
    """True when every non-empty cell reads as a unit (``s``, ``V``, ``m/s^2``, ``[mm]``)."""
    from ._csv_units import looks_like_unit

    filled = [c for c in cells if c]
    return bool(filled) and all(looks_like_unit(c) for c in filled)


def _decimals(text: str, decimal: str, stamp: bool) -> int:
    """Digits after the decimal mark, shifted by an exponent (the print resolution)."""
    text = text.strip()
    if stamp:
        match = re.search(r"[.,](\d+)(?:Z|[+-]\d{2}:?\d{2})?$", text)
        return len(match.group(1)) if match else 0
    mantissa, _, exponent = text.lower().partition("e")
    digits = len(mantissa.partition(decimal)[2]) if decimal in mantissa else 0
    try:
        return digits - int(exponent) if exponent else digits
    except ValueError:
        return digits
