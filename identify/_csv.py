"""Read a logger's or oscilloscope's CSV file into a :class:`~identify.Record`.

The head of the file is sniffed in Python (:mod:`identify._csv_dialect`); the bulk of
the rows is parsed by ``pandas.read_csv`` with what was found, so a file of millions of
rows reads about as fast as pandas itself.  Units in headers and time conversion live
in :mod:`identify._csv_units`, time-base checks in :mod:`identify._timebase`, clipping and
quantisation checks in :mod:`identify._quality`.
"""
from __future__ import annotations

import hashlib
import os

import numpy as np

from ._csv_dialect import WHITESPACE, Dialect, sniff, split_fields, split_lines
from ._csv_units import (is_index_name, is_time_name, sample_time_from_metadata, split_name_unit,
                         stamps_to_seconds, time_unit_factor)
from ._errors import ParameterTypeError, RecordError
from ._quality import quality_warnings
from ._timebase import check_time_base, resample
from ._validate import check_choice, check_positive
from .records import Channel, Record

__all__ = ["read_record"]

_NO_RATE_HINT = ("give the sample rate with --sample-rate HZ (sample_rate_hz= in Python), "
                 "add a 'sample rate: HZ' preamble line, or add a time column")


def read_record(path, *, sample_rate_hz=None, time_column=None, nan="raise") -> Record:
    """Read a CSV file into a uniformly sampled :class:`~identify.Record`.

    Parameters
    ----------
    path : str or os.PathLike
        The CSV file.  Separators comma, semicolon, tab or runs of blanks; decimal point
        or decimal comma; quoted numbers; UTF-8 with or without BOM (Latin-1 accepted);
        ``#`` comment lines; a preamble of ``key: value`` / ``key,value`` lines before the
        header row; units in the header (``t [ms]``, ``Time (s)``, ``accel_mps2``).
    sample_rate_hz : float, optional
        Sample rate for a file without a time column.  With a time column it must agree
        with the stamps to 1 %.
    time_column : str or int or False, optional
        The time column by name (case-insensitive, unit removed) or 0-based index;
        ``False`` when the file has none.  By default it is found by name (time, t,
        timestamp, seconds, ...), by ISO-8601 or hh:mm:ss stamps, by a time unit in the
        first column's header, or as a strictly increasing first column (reported in
        the notes).
    nan : {"raise", "omit"}, default="raise"
        Missing-value policy.  ``"raise"``: an empty or NaN cell is an error naming its
        line and column.  ``"omit"``: such cells stay NaN in the channel values, a note
        says so, and each estimator decides what to do with them.

    Returns
    -------
    Record
        Time converted to seconds (from s, ms, µs/us, ns, min, h, or ISO-8601 / clock
        stamps as seconds from the first), ``start_s`` the first stamp (may be negative),
        ``sha256`` of the file bytes, ``metadata`` from the preamble (keys lower-case),
        ``notes`` for what was converted or repaired, ``warnings`` for clipping and
        coarse quantisation.

    Raises
    ------
    RecordError
        One line naming the problem and, where it has one, the line and column: missing
        file, directory, empty or binary file, no rows of numbers, a single data row, a
        cell that is not a number, missing values (with ``nan="raise"``), no time base,
        repeated, decreasing or gapped stamps, or jitter above 2 % of the interval.
    ParameterValueError, ParameterTypeError
        For a bad ``sample_rate_hz``, ``time_column`` or ``nan``.

    Notes
    -----
    Time-base rules (see :mod:`identify._timebase`): an interval longer than 1.5 times
    the median is a gap (error, never interpolated); stamps off the least-squares grid
    :math:`t_k = t_0 + k T_s` by at most 2 % of :math:`T_s` are resampled onto it by
    linear interpolation and reported; more is an error.

    Examples
    --------
    >>> rec = read_record("bracket.csv")            # doctest: +SKIP
    >>> rec.sample_rate_hz, rec.names               # doctest: +SKIP
    (1000.0, ('accel',))
    """
    try:
        source = os.fspath(path)
    except TypeError:
        raise ParameterTypeError(f"path must be a file path (str or os.PathLike); got {path!r}") from None
    source = source.decode(errors="replace") if isinstance(source, bytes) else str(source)
    nan = check_choice("nan", nan, ("raise", "omit"))
    sample_rate_hz = check_positive("sample_rate_hz", sample_rate_hz, allow_none=True)
    if time_column is not None and not isinstance(time_column, (str, int)):
        raise ParameterTypeError(f"time_column must be a column name, a 0-based index or False; "
                                 f"got {time_column!r}")
    raw, identity = _read_bytes(source)
    digest = hashlib.sha256(raw).hexdigest()
    raw, utf16_note = _from_utf16(raw, source)
    dialect = sniff(raw, source)
    frame = _parse_bulk(raw, dialect, source, identity=None if utf16_note else identity)
    line_of = _LineMap(raw, dialect)
    notes = list(dialect.notes) + utf16_note

    n_rows = int(frame.shape[0])
    if n_rows < 2:
        raise RecordError(f"only one data row (line {dialect.data_line}); a record needs at "
                          f"least 2 samples", source)
    names, units = _column_names(dialect, notes)
    preamble_ts, preamble_error = _preamble_sample_time(dialect, source)
    time_j, index_j = _choose_time_column(frame, names, units, dialect, time_column,
                                          sample_rate_hz, preamble_ts, source, notes)

    channel_js = [j for j in range(len(names)) if j not in (time_j, index_j)]
    if not channel_js:
        raise RecordError(f"the file holds no data channel besides the time column "
                          f"{names[time_j]!r}", source)
    values = {j: _numeric_column(frame, j, names[j], line_of, source) for j in channel_js}
    _missing_policy(values, names, nan, line_of, source, notes)

    if time_j is not None:
        t, resolution = _time_seconds(frame, time_j, names[time_j], units[time_j], dialect,
                                      line_of, source, notes)
        base = check_time_base(t, resolution_s=resolution, line_of=line_of, source=source,
                               name=names[time_j])
        if sample_rate_hz is not None and abs(base.sample_time_s * sample_rate_hz - 1) > 0.01:
            raise RecordError(f"the time column {names[time_j]!r} gives "
                              f"{1 / base.sample_time_s:.6g} Hz but the sample rate given is "
                              f"{sample_rate_hz:.6g} Hz", source)
        if base.resampled:
            values = {j: resample(t, v, base) for j, v in values.items()}
            notes.append(base.note())
        start_s, sample_time_s = base.start_s, base.sample_time_s
        if preamble_ts and abs(preamble_ts[0] / sample_time_s - 1) > 0.01:
            notes.append(f"sample rate: the {preamble_ts[1]} says {1 / preamble_ts[0]:.6g} Hz, "
                         f"the time column gives {1 / sample_time_s:.6g} Hz; the time column is used")
    else:
        start_s = 0.0
        if sample_rate_hz is not None:
            sample_time_s = 1.0 / sample_rate_hz
            if preamble_ts and abs(preamble_ts[0] * sample_rate_hz - 1) > 0.01:
                notes.append(f"sample rate: {sample_rate_hz:.6g} Hz as given, not the "
                             f"{1 / preamble_ts[0]:.6g} Hz of the {preamble_ts[1]}")
        elif preamble_error is not None:
            raise preamble_error
        elif preamble_ts:
            sample_time_s = preamble_ts[0]
            notes.append(f"sample rate: {1 / sample_time_s:.6g} Hz from the {preamble_ts[1]}")
        else:
            raise RecordError(f"no time column and no sample rate: {_NO_RATE_HINT}", source)

    channels = tuple(Channel(names[j], units[j], values[j]) for j in channel_js)
    return Record(start_s, sample_time_s, channels, source=source, sha256=digest,
                  notes=tuple(notes), warnings=tuple(quality_warnings(channels)),
                  metadata=dict(dialect.metadata))


# -- reading ------------------------------------------------------------------------
def _read_bytes(source: str):
    """The file's bytes, and its identity (device, inode, size, modification time) when
    it is a regular file of that size (else None)."""
    if os.path.isdir(source):
        raise RecordError("is a directory, not a CSV file", source)
    try:
        with open(source, "rb") as fh:
            identity = _identity(os.fstat(fh.fileno()))
            raw = fh.read()
    except FileNotFoundError:
        raise RecordError("file not found", source) from None
    except PermissionError:
        raise RecordError("cannot read the file: permission denied", source) from None
    except OSError as exc:
        raise RecordError(f"cannot read the file: {exc.strerror or exc}", source) from None
    if not raw or (len(raw) < 4096 and not raw.strip(b" \t\r\n\x1a")):
        raise RecordError("the file is empty", source)
    if identity is not None and identity[2] != len(raw):
        identity = None
    return raw, identity


def _identity(st):
    """(device, inode, size, modification time in ns) of a regular file, else None."""
    import stat

    if not stat.S_ISREG(st.st_mode):
        return None
    return (st.st_dev, st.st_ino, st.st_size, st.st_mtime_ns)


def _from_utf16(raw: bytes, source: str):
    """UTF-16 with a BOM (some Windows loggers) re-encoded as UTF-8, with a note."""
    if not raw.startswith((b"\xff\xfe", b"\xfe\xff")):
        return raw, []
    try:
        text = raw.decode("utf-16")
    except UnicodeDecodeError:
        raise RecordError("the file starts like UTF-16 text but does not decode as UTF-16",
                          source) from None
    return text.encode("utf-8"), ["encoding: the file is UTF-16; converted to UTF-8 to read it"]


def _parse_bulk(raw: bytes, dialect: Dialect, source: str, identity=None):
    """The data rows as a frame of columns 0..ncols-1.

    ``identity`` (from :func:`_read_bytes`) allows pandas to read the rows from the file
    itself (:func:`_parse_file`), about twice as fast as from the bytes in memory."""
    import io

    import pandas as pd

    options = dict(
        sep=dialect.sep, decimal=dialect.decimal, header=None, comment="#",
        skip_blank_lines=True, quotechar='"', encoding=dialect.encoding,
        encoding_errors="replace", low_memory=False, engine="c",
        skipinitialspace=dialect.sep != WHITESPACE, na_filter=True)
    if dialect.trailing_sep:
        options["usecols"] = range(dialect.ncols)
    if dialect.encoding == "utf-8":
        # UTF-8 is the C parser's own: given bytes and no encoding it reads them directly,
        # where naming the encoding adds a decoding text layer (about a third slower)
        options["encoding"] = None
    fast = _fast_options(raw, dialect, options)
    # no warnings.catch_warnings() here: its filter state is process-wide, and the command
    # line imports lmfit in another thread meanwhile (identify/cli/_warmup.py).  With
    # engine="c" and low_memory=False pandas has no fallback or chunk-type warning to give.
    try:
        frame = None
        if fast is not None and identity is not None:
            frame = _parse_file(raw, dialect, source, identity, fast)
        if fast is not None and frame is None:
            frame = pd.read_csv(io.BytesIO(raw[dialect.data_offset:]), **fast)
            if not _numbers_only(frame):
                frame = None  # text, booleans or mixed chunks: parse again as a whole
        if frame is None:
            frame = pd.read_csv(io.BytesIO(raw[dialect.data_offset:]), **options)
    except pd.errors.ParserError as exc:
        raise RecordError(_field_count_problem(raw, dialect) or
                          f"cannot parse the rows: {str(exc).strip().splitlines()[-1]}", source) from None
    except pd.errors.EmptyDataError:
        raise RecordError("no data rows", source) from None
    except (ValueError, UnicodeError, OverflowError, MemoryError) as exc:
        text = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise RecordError(f"cannot parse the rows: {text}", source) from None
    if frame.shape[1] != dialect.ncols:
        raise RecordError(_field_count_problem(raw, dialect) or
                          f"rows have {frame.shape[1]} fields, expected {dialect.ncols}", source)
    frame.columns = range(frame.shape[1])
    return frame


def _parse_file(raw: bytes, dialect: Dialect, source: str, identity, fast: dict):
    """The frame read by pandas from the file itself, or None where that is not certain
    to give what the bytes in memory give.

    pandas parses from a path about twice as fast as from bytes in memory (its own
    buffered reads rather than a Python file object's).  Taken only for UTF-8 rows
    whose lines before the data all end in ``\\n`` (so that skipping ``data_line - 1``
    lines lands on ``data_offset``), and only when the file's identity (device, inode,
    size, modification time) is the same after the parse as when its bytes were read
    and hashed: the numbers are then those of the bytes whose SHA-256 the record
    carries.  Anything else (a parse error included) returns None and the caller parses
    the bytes, which gives the errors their usual wording.
    """
    import pandas as pd

    head = raw[:dialect.data_offset]
    if dialect.encoding != "utf-8" or b"\r" in head.replace(b"\r\n", b"") \
            or head.count(b"\n") != dialect.data_line - 1 or raw.startswith(b"\xef\xbb\xbf"):
        return None
    # the absolute path: pandas reads a string starting with "~" or "scheme://" as the
    # home directory or a URL, where open() took a local relative path
    path = os.path.abspath(source)
    try:
        frame = pd.read_csv(path, skiprows=dialect.data_line - 1, **fast)
        if _identity(os.stat(path)) != identity:
            return None
    except Exception:  # noqa: BLE001 - the bytes are parsed instead, with the usual errors
        return None
    return frame if _numbers_only(frame) else None


def _numbers_only(frame) -> bool:
    """Every column parsed as float64 or int64 (what the chunked parse may keep)."""
    return all(dtype in (np.float64, np.int64) for dtype in frame.dtypes)


def _fast_options(raw: bytes, dialect: Dialect, options: dict):
    """Cheaper ``read_csv`` options that give the same frame, or None.

    ``comment`` and ``skipinitialspace`` slow the C parser by about half; they change
    nothing when the data rows hold no ``#`` and no blank (or tab, unless tab is the
    separator).  Parsing in chunks (``low_memory=True``) is faster again; it can differ
    from a whole-file parse only in how a column's type is inferred chunk by chunk, so
    the caller keeps its frame only when every column came out as float64 or int64
    (the same numbers either way) and parses the whole file again otherwise.
    """
    if dialect.sep == WHITESPACE:
        return None
    off = dialect.data_offset
    if raw.find(b"#", off) >= 0 or raw.find(b" ", off) >= 0:
        return None
    if dialect.sep != "\t" and raw.find(b"\t", off) >= 0:
        return None
    return dict(options, comment=None, skipinitialspace=False, low_memory=True)


def _data_lines(raw: bytes, dialect: Dialect):
    """Yield ``(line_number, text)`` for every data row (blank and comment lines skipped)."""
    text = raw[dialect.data_offset:].decode(dialect.encoding, errors="replace")
    number = dialect.data_line
    for line in split_lines(text):
        stripped = line.strip()
        if stripped and not stripped.startswith("#"):
            yield number, line
        number += 1


def _field_count_problem(raw: bytes, dialect: Dialect):
    expected = dialect.ncols + (1 if dialect.trailing_sep else 0)
    for number, line in _data_lines(raw, dialect):
        got = len(split_fields(line.split("#", 1)[0], dialect.sep))
        if got > expected:
            return f"line {number} has {got} fields, the data rows above have {expected}"
    return None


class _LineMap:
    """Maps a 0-based data row to its 1-based line in the file (built on first use)."""

    def __init__(self, raw: bytes, dialect: Dialect):
        self._raw, self._dialect, self._lines = raw, dialect, None

    def __call__(self, row: int) -> int:
        if self._lines is None:
            self._lines = [n for n, _ in _data_lines(self._raw, self._dialect)]
        if 0 <= row < len(self._lines):
            return self._lines[row]
        return self._dialect.data_line + row  # pragma: no cover - defensive


# -- columns ------------------------------------------------------------------------
def _column_names(dialect: Dialect, notes: list):
    names, units = [], []
    header = dialect.header or (None,) * dialect.ncols
    for j, cell in enumerate(header):
        name, unit = split_name_unit(cell) if cell else ("", "")
        if dialect.units is not None and not unit:
            unit = dialect.units[j].strip().strip("[](){}").strip()
        names.append(name or f"column_{j + 1}")
        units.append(unit)
    seen = {}
    for j, name in enumerate(names):
        key = name.lower()
        if key in seen:
            seen[key] += 1
            new = f"{name}_{seen[key]}"
            notes.append(f"columns: a second column named {name!r} is called {new!r}")
            names[j] = new
        else:
            seen[key] = 1
    return names, units


def _preamble_sample_time(dialect: Dialect, source: str):
    """``((sample_time_s, text) or None, error or None)``; the error matters only when
    the preamble is the record's only time base."""
    try:
        return sample_time_from_metadata(dialect.metadata), None
    except ValueError as exc:
        return None, RecordError(str(exc), source)


def _is_increasing(frame, j) -> bool:
    col = frame[j]
    if col.dtype.kind not in "fiu":
        return False
    v = col.to_numpy(dtype=float)
    return bool(np.all(np.isfinite(v)) and np.all(v[1:] > v[:-1]))


def _find_column(key, names, units, source):
    if isinstance(key, bool):
        raise ParameterTypeError(f"time_column must be a column name, a 0-based index or False; "
                                 f"got {key!r}")
    if isinstance(key, int):
        if 0 <= key < len(names):
            return key
        raise RecordError(f"time column index {key} is out of range 0..{len(names) - 1} "
                          f"(columns: {', '.join(names)})", source)
    text = str(key).strip().lower()
    for j, name in enumerate(names):
        full = f"{name} [{units[j]}]".lower() if units[j] else name.lower()
        if text in (name.lower(), full):
            return j
    raise RecordError(f"no time column named {key!r} (columns: {', '.join(names)})", source)


def _choose_time_column(frame, names, units, dialect, time_column, sample_rate_hz,
                        preamble_ts, source, notes):
    """Return ``(time_j, index_j)``: the time column and a sample-counter column (or None)."""
    if time_column is False:
        return None, None
    if time_column is not None:
        return _find_column(time_column, names, units, source), None
    for j, name in enumerate(names):
        if is_time_name(name):
            return j, None
    for j, stamp in enumerate(dialect.text_stamps):
        if stamp:
            return j, None
    if time_unit_factor(units[0]) is not None and len(names) > 1:
        return 0, None
    index_j = None
    if len(names) > 1 and is_index_name(names[0]) and _is_increasing(frame, 0):
        index_j = 0
        notes.append(f"columns: {names[0]!r} is a sample counter, not a channel; it is not used")
    if (index_j is None and sample_rate_hz is None and not preamble_ts and len(names) > 1
            and _is_increasing(frame, 0)):
        notes.append(f"time: the first column {names[0]!r} is taken as the time because it "
                     f"increases on every row (name it 'time', or give time_column=False / "
                     f"--sample-rate if it is a channel)")
        return 0, None
    return None, index_j


def _numeric_column(frame, j, name, line_of, source) -> np.ndarray:
    import pandas as pd

    col = frame[j]
    kind = col.dtype.kind
    if kind in "fiu":
        return col.to_numpy(dtype=float)
    if kind == "b":
        bad = 0
        text = str(col.iloc[0])
    else:
        as_text = col.astype("object")
        coerced = pd.to_numeric(as_text, errors="coerce")
        bad_mask = (coerced.isna() & as_text.notna()).to_numpy()
        if not bad_mask.any():
            return coerced.to_numpy(dtype=float)
        bad = int(np.argmax(bad_mask))
        text = str(as_text.iloc[bad])
    raise RecordError(f"not a number at line {line_of(bad)}, column {name!r} (column {j + 1}): "
                      f"{text[:40]!r}", source)


def _missing_policy(values, names, nan, line_of, source, notes):
    first = None
    for j, v in values.items():
        infinite = np.isinf(v)
        if infinite.any():
            i = int(np.argmax(infinite))
            raise RecordError(f"infinite value at line {line_of(i)}, column {names[j]!r} "
                              f"(column {j + 1})", source)
        missing = np.isnan(v)
        if missing.any():
            i = int(np.argmax(missing))
            if first is None or i < first[0]:
                first = (i, j)
            if nan == "omit":
                notes.append(f"missing values: column {names[j]!r} has {int(missing.sum())} empty "
                             f"or NaN cell(s), first at line {line_of(i)}; kept as NaN (nan='omit')")
    if first is not None and nan == "raise":
        i, j = first
        raise RecordError(f"missing value (empty or NaN cell) at line {line_of(i)}, column "
                          f"{names[j]!r} (column {j + 1}); use --nan omit (nan='omit') to keep "
                          f"it as NaN where the method allows", source)


def _time_seconds(frame, j, name, unit, dialect, line_of, source, notes):
    """Time stamps in seconds and their print resolution in seconds."""
    col = frame[j]
    resolution = 10.0 ** -dialect.decimals[j] if j < len(dialect.decimals) else 0.0
    if col.dtype.kind not in "fiub" and j < len(dialect.text_stamps) and dialect.text_stamps[j]:
        try:
            t, kind = stamps_to_seconds(col.to_numpy())
        except ValueError as exc:
            message, row = exc.args[0], exc.args[1] if len(exc.args) > 1 else 0
            raise RecordError(f"{message} at line {line_of(row)}, column {name!r}", source) from None
        notes.append(f"time: {kind} stamps in column {name!r} converted to seconds from the first")
        return t, resolution
    v = _numeric_column(frame, j, name, line_of, source)
    factor = time_unit_factor(unit) if unit else None
    if unit and factor is None:
        raise RecordError(f"the time column {name!r} has unit {unit!r}, not a time unit "
                          f"(s, ms, us, ns, min, h)", source)
    if factor is None:
        factor = time_unit_factor(name)  # a column named "ms" or "seconds"
    if factor is None:
        factor = 1.0
        notes.append(f"time: column {name!r} has no unit; seconds assumed")
    elif factor != 1.0:
        notes.append(f"time: column {name!r} converted from {unit or name} to seconds")
    if factor < 1.0:  # divide by 1000, 1e6, 1e9: exact for stamps that are whole units
        return v / round(1.0 / factor), resolution / round(1.0 / factor)
    return v * factor, resolution * factor
