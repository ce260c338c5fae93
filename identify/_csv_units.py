"""Units written in CSV headers and preambles: split them off, convert time to seconds.

Loggers write the unit of a column in many ways: ``t [ms]``, ``Time (s)``,
``accel {m/s^2}`` or as a suffix ``accel_mps2``.  This module turns a header cell into
a bare name and the unit text as written, knows the time units (s, ms, µs/us, ns, min,
h) and their factor to seconds, recognises time and sample-index column names, reads a
sample rate or sample interval from ``key: value`` preamble lines and converts ISO-8601
timestamps to seconds from the first one.
"""
from __future__ import annotations

import re

import numpy as np

__all__ = [
    "split_name_unit",
    "time_unit_factor",
    "is_time_name",
    "is_index_name",
    "sample_time_from_metadata",
    "ISO_TIMESTAMP",
    "CLOCK_TIME",
    "iso_to_seconds",
    "clock_to_seconds",
    "stamps_to_seconds",
    "normalise_micro",
    "looks_like_unit",
]

#: Micro sign (U+00B5) and Greek small mu (U+03BC) are both written for "micro".
_MICRO = ("\u00b5", "\u03bc")

#: factor to seconds, keyed by the lower-case unit with µ/μ written as ``u``
_TIME_UNITS = {
    "s": 1.0, "sec": 1.0, "secs": 1.0, "second": 1.0, "seconds": 1.0,
    "ms": 1e-3, "msec": 1e-3, "millisecond": 1e-3, "milliseconds": 1e-3,
    "us": 1e-6, "usec": 1e-6, "microsecond": 1e-6, "microseconds": 1e-6,
    "ns": 1e-9, "nsec": 1e-9, "nanosecond": 1e-9, "nanoseconds": 1e-9,
    "min": 60.0, "mins": 60.0, "minute": 60.0, "minutes": 60.0,
    "h": 3600.0, "hr": 3600.0, "hrs": 3600.0, "hour": 3600.0, "hours": 3600.0,
}

#: unit suffixes accepted in ``name_unit`` headers (lower case, µ written ``u``);
#: only these split, so ``motor_speed`` stays one name.
_SUFFIX_UNITS = set(_TIME_UNITS) | {
    "hz", "khz", "mhz", "rpm", "rps", "rad", "rads", "radps", "deg", "degs", "dps",
    "v", "mv", "uv", "kv", "a", "ma", "ua", "w", "kw", "ohm", "ohms",
    "m", "mm", "um", "cm", "km", "in", "ft", "mps", "mps2", "ms2", "mmps", "inps",
    "g", "mg", "kg", "n", "kn", "nm", "knm", "pa", "kpa", "mpa", "bar", "mbar", "psi",
    "degc", "degf", "k", "c", "pct", "percent", "lpm", "m3ps", "db", "ue", "microstrain",
}

#: header names (unit removed, lower case, ``_``/``-`` as spaces) that mean "time"
_TIME_NAMES = {
    "time", "t", "timestamp", "time stamp", "tstamp", "seconds", "second", "sec", "secs",
    "elapsed", "elapsed time", "relative time", "rel time", "rel. time", "datetime",
    "date time", "date/time", "clock", "time s", "milliseconds", "microseconds",
    "nanoseconds", "minutes", "ms", "us", "ns",
}

#: names that mean "sample counter", not time
_INDEX_NAMES = {"index", "idx", "sample", "samples", "sample no", "sample no.", "sample number",
                "n", "no", "no.", "nr", "nr.", "#", "count", "point", "points", "row"}

_BRACKETED = re.compile(r"^(?P<name>.*?)\s*[\[\(\{](?P<unit>[^\[\]\(\)\{\}]*)[\]\)\}]\s*$")
_SUFFIX = re.compile(r"^(?P<name>.*[^_\s])[_](?P<unit>[A-Za-z\u00b5\u03bc][A-Za-z0-9\u00b5\u03bc]*)$")


def normalise_micro(text: str) -> str:
    """Lower-case ``text`` with the micro sign and Greek mu written as ``u``."""
    text = str(text)
    for mu in _MICRO:
        text = text.replace(mu, "u")
    return text.strip().lower()


def _name_key(name: str) -> str:
    return " ".join(normalise_micro(name).replace("_", " ").replace("-", " ").split())


def split_name_unit(cell: str) -> tuple[str, str]:
    """Split a header cell into ``(name, unit)``; unit ``""`` when none is written.

    Examples: ``"t [ms]" -> ("t", "ms")``, ``"Time (s)" -> ("Time", "s")``,
    ``"accel_mps2" -> ("accel", "mps2")``, ``"motor_speed" -> ("motor_speed", "")``.
    """
    text = str(cell).strip().strip('"').strip("'").strip()
    match = _BRACKETED.match(text)
    if match and match.group("name").strip():
        return match.group("name").strip(), match.group("unit").strip()
    match = _SUFFIX.match(text)
    if match and normalise_micro(match.group("unit")) in _SUFFIX_UNITS:
        return match.group("name").strip(), match.group("unit")
    return text, ""


def looks_like_unit(cell: str) -> bool:
    """True when a header cell is only a unit: ``s``, ``ms``, ``V``, ``m/s^2``, ``[mm]``, ``%``."""
    text = str(cell).strip().strip('"').strip()
    if re.fullmatch(r"[\[\(\{][^\[\]\(\)\{\}]*[\]\)\}]", text):
        return True
    key = normalise_micro(text)
    return key in _SUFFIX_UNITS or key in ("%", "-", "1") or bool(
        re.fullmatch(r"[a-z%\u00b0]{1,4}(?:[/*\^\u00b7][a-z0-9%\u00b2\u00b3]{1,4})+", key))


def time_unit_factor(unit: str) -> float | None:
    """Factor that turns a value in ``unit`` into seconds; None if not a time unit."""
    return _TIME_UNITS.get(normalise_micro(unit))


def is_time_name(name: str) -> bool:
    """True when a header name (unit removed) names a time column."""
    return _name_key(name) in _TIME_NAMES


def is_index_name(name: str) -> bool:
    """True when a header name names a sample counter (not a time)."""
    return _name_key(name) in _INDEX_NAMES


# -- preamble: sample rate or sample interval ------------------------------------------
_RATE_KEYS = {"sample rate", "sampling rate", "samplerate", "sampling frequency",
              "sample frequency", "sampling freq", "sample freq", "fs", "rate",
              "acquisition rate", "scan rate", "data rate", "logging rate"}
_INTERVAL_KEYS = {"sample interval", "sampling interval", "sample time", "sampling time",
                  "sample period", "sampling period", "dt", "ts", "delta t", "time step",
                  "timestep", "time increment", "x increment", "xincrement", "interval",
                  "logging interval", "scan interval"}
_RATE_UNITS = {"hz": 1.0, "khz": 1e3, "mhz": 1e6, "s/s": 1.0, "sa/s": 1.0, "sps": 1.0,
               "samples/s": 1.0, "ks/s": 1e3, "ksa/s": 1e3, "ksps": 1e3, "1/s": 1.0}
_VALUE = re.compile(r"^\s*(?P<num>[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?)\s*(?P<unit>\S*)\s*$")


def _parse_quantity(text: str):
    match = _VALUE.match(str(text).strip().strip('"'))
    if not match:
        return None
    num = match.group("num")
    if "," in num and "." not in num:
        num = num.replace(",", ".")
    try:
        return float(num), match.group("unit")
    except ValueError:  # pragma: no cover - the pattern only admits numbers
        return None


def sample_time_from_metadata(metadata: dict):
    """Sample interval in seconds from preamble keys, or None when none is given.

    Returns ``(sample_time_s, text)`` where ``text`` says which line gave it.  Accepts a
    sample rate (``sample rate: 1 kHz``, ``Sample rate (Hz),100``, ``fs = 250``) or a
    sample interval (``sample interval: 2 ms``, ``dt [s]: 0.001``).  Units may sit in
    the key (bracketed) or after the number; a rate without unit is in Hz, an interval
    without unit in seconds.  Raises ``ValueError`` when every key it recognises has a
    value that is not a positive number or carries an unknown unit, or when a rate and
    an interval disagree by more than 1 %.
    """
    rate = interval = None
    problems = []
    for key, value in metadata.items():
        try:
            found = _metadata_entry(key, value)
        except ValueError as exc:
            problems.append(str(exc))
            continue
        if found is None:
            continue
        kind, seconds, text = found
        if kind == "rate":
            rate = rate or (seconds, text)
        else:
            interval = interval or (seconds, text)
    if not rate and not interval and problems:
        raise ValueError(problems[0])
    if rate and interval and abs(rate[0] - interval[0]) > 0.01 * interval[0]:
        raise ValueError(f"the preamble disagrees with itself: {rate[1]} gives a sample interval of "
                         f"{rate[0]:g} s, {interval[1]} gives {interval[0]:g} s")
    return rate or interval


def _metadata_entry(key, value):
    """``("rate"|"interval", seconds, text)`` for a sample-rate/interval line, else None."""
    name, key_unit = split_name_unit(key)
    base = _name_key(name)
    for suffix, unit in ((" hz", "hz"), (" s", "s"), (" ms", "ms")):
        if base.endswith(suffix) and base[: -len(suffix)] in (_RATE_KEYS | _INTERVAL_KEYS):
            base, key_unit = base[: -len(suffix)], unit
    if base not in _RATE_KEYS and base not in _INTERVAL_KEYS:
        return None
    parsed = _parse_quantity(value)
    if parsed is None:
        raise ValueError(f"preamble line {key!r} has value {value!r}, not a number")
    number, unit = parsed
    unit = unit or key_unit
    text = f"preamble {key!r} = {value!r}"
    if not (number > 0 and np.isfinite(number)):
        raise ValueError(f"preamble line {key!r}: value must be > 0, got {value!r}")
    if base in _RATE_KEYS:
        factor = 1e6 if unit in ("MS/s", "MSa/s", "Msps") else \
            _RATE_UNITS.get(normalise_micro(unit) if unit else "hz")
        if factor is None:
            raise ValueError(f"preamble line {key!r}: unknown sample-rate unit {unit!r}")
        return "rate", 1.0 / (number * factor), text
    factor = time_unit_factor(unit) if unit else 1.0
    if factor is None:
        raise ValueError(f"preamble line {key!r}: unknown time unit {unit!r}")
    return "interval", number * factor, text


# -- ISO-8601 ------------------------------------------------------------------------
ISO_TIMESTAMP = re.compile(
    r"^\d{4}-\d{2}-\d{2}(?:[T ]\d{2}:\d{2}(?::\d{2}(?:[.,]\d+)?)?)?(?:Z|[+-]\d{2}:?\d{2})?$")


def iso_to_seconds(values) -> np.ndarray:
    """Seconds since the first of a sequence of ISO-8601 timestamp strings.

    Raises ``ValueError`` naming the 0-based index of the first stamp that cannot be
    read (as ``ValueError(message, index)``).
    """
    import pandas as pd

    text = pd.Series(values, dtype="object").astype(str).str.strip().str.replace(",", ".", regex=False)
    bad = ~text.str.match(ISO_TIMESTAMP.pattern)
    if bad.any():
        i = int(np.flatnonzero(bad.to_numpy())[0])
        raise ValueError(f"not an ISO-8601 time stamp: {str(values[i])!r}", i)
    zoned = text.str.contains(r"(?:Z|[+-]\d{2}:?\d{2})$", regex=True)
    if zoned.any() and not zoned.all():
        i = int(np.flatnonzero((zoned != zoned.iloc[0]).to_numpy())[0])
        raise ValueError(f"time stamps mix time zones and local time: {str(values[i])!r}", i)
    try:
        stamps = pd.to_datetime(text, format="ISO8601", utc=bool(zoned.iloc[0]), errors="coerce")
    except (ValueError, OverflowError, TypeError) as exc:  # pragma: no cover - coerce catches
        raise ValueError(f"cannot read the ISO-8601 time stamps ({exc})".splitlines()[0], 0) from None
    if stamps.isna().any():
        i = int(np.flatnonzero(stamps.isna().to_numpy())[0])
        raise ValueError(f"not a valid time stamp: {str(values[i])!r}", i)
    ns = (stamps - stamps.iloc[0]).to_numpy().astype("timedelta64[ns]").astype(np.int64)
    return ns.astype(float) * 1e-9


CLOCK_TIME = re.compile(r"^(\d{1,2}):(\d{2})(?::(\d{2}(?:[.,]\d+)?))?$")


def clock_to_seconds(values) -> np.ndarray:
    """Seconds since the first of a sequence of ``hh:mm[:ss[.fff]]`` clock times.

    Raises ``ValueError(message, index)`` at the first entry that is not a clock time.
    A record that runs past midnight goes backwards and is caught by the time-base check.
    """
    out = np.empty(len(values))
    for i, value in enumerate(values):
        match = CLOCK_TIME.match(str(value).strip())
        if not match or int(match.group(2)) > 59:
            raise ValueError(f"not a clock time hh:mm:ss: {str(value)!r}", i)
        seconds = float(match.group(3).replace(",", ".")) if match.group(3) else 0.0
        out[i] = int(match.group(1)) * 3600.0 + int(match.group(2)) * 60.0 + seconds
    return out - out[0]


def stamps_to_seconds(values) -> tuple[np.ndarray, str]:
    """ISO-8601 or clock-time text stamps to seconds from the first; also the kind found."""
    first = str(values[0]).strip() if len(values) else ""
    if CLOCK_TIME.match(first):
        return clock_to_seconds(values), "clock-time"
    return iso_to_seconds(values), "ISO-8601"
