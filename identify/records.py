"""The :class:`Record`: a uniformly sampled, named, traceable set of channels.

A record is what every estimator takes.  It is built by :func:`identify.read_record`
(from a logger's CSV) or directly from arrays with :meth:`Record.from_arrays`.
"""
from __future__ import annotations

import hashlib
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from ._errors import ParameterTypeError, RecordError
from ._validate import check_positive

__all__ = ["Channel", "Record"]


@dataclass(frozen=True)
class Channel:
    """One measured channel.

    Parameters
    ----------
    name : str
        Channel name as written in the file header (unit removed).
    unit : str
        Unit as written in the header (``""`` when none was given).
    values : numpy.ndarray
        Samples on the record's time base (read-only).  May hold NaN only when the
        record was read with the ``nan="omit"`` policy.
    """

    name: str
    unit: str
    values: np.ndarray

    def __post_init__(self):
        arr = np.array(self.values, dtype=float)
        arr.setflags(write=False)
        object.__setattr__(self, "values", arr)

    @cached_property
    def _quality_cache(self) -> dict:
        """Quality-check results by check name, filled by :mod:`identify._quality` on first
        use: the values are read-only, so a record's checks at reading and a job's on the
        same channel run once."""
        return {}

    @property
    def has_missing(self) -> bool:
        return bool(np.isnan(self.values).any())

    def summary(self) -> dict:
        finite = self.values[np.isfinite(self.values)]
        return {
            "name": self.name,
            "unit": self.unit,
            "min": float(finite.min()) if finite.size else None,
            "max": float(finite.max()) if finite.size else None,
            "missing": int(self.values.size - finite.size),
        }


@dataclass(frozen=True)
class Record:
    """A uniformly sampled record of one or more channels.

    Parameters
    ----------
    start_s : float
        Time of the first sample in seconds (negative pre-trigger time is allowed).
    sample_time_s : float
        Uniform sample interval Ts in seconds.
    channels : tuple of Channel
        The measured channels, all of the same length.
    source : str
        Where it came from (file path, or ``"<array>"``).
    sha256 : str
        SHA-256 of the source file's bytes (of the samples for array records).
    notes : tuple of str
        What was repaired or noticed on load (resampling, units converted, ...).
    warnings : tuple of str
        What may spoil an estimate (clipping, coarse quantisation, ...).
    metadata : dict
        ``key: value`` lines of the file's preamble.
    """

    start_s: float
    sample_time_s: float
    channels: tuple
    source: str = "<array>"
    sha256: str = ""
    notes: tuple = ()
    warnings: tuple = ()
    metadata: dict = field(default_factory=dict)

    def __post_init__(self):
        check_positive("sample_time_s", self.sample_time_s)
        object.__setattr__(self, "channels", tuple(self.channels))
        object.__setattr__(self, "notes", tuple(self.notes))
        object.__setattr__(self, "warnings", tuple(self.warnings))
        if not self.channels:
            raise RecordError("the record holds no data channel", self.source)
        n = {c.values.size for c in self.channels}
        if len(n) != 1:
            raise RecordError(f"channels differ in length: {sorted(n)}", self.source)

    # -- construction -------------------------------------------------------------
    @classmethod
    def from_arrays(cls, time_s=None, *, sample_time_s=None, source="<array>", units=None,
                    **channels) -> "Record":
        """Build a record from arrays.

        Give either ``time_s`` (uniform) or ``sample_time_s``; channels as keyword
        arrays, e.g. ``Record.from_arrays(t, accel=y, units={"accel": "m/s^2"})``.
        """
        if not channels:
            raise ParameterTypeError("from_arrays needs at least one channel given as name=array")
        units = units or {}
        arrays = {k: np.asarray(v, dtype=float) for k, v in channels.items()}
        n = next(iter(arrays.values())).size
        if time_s is not None:
            t = np.asarray(time_s, dtype=float)
            if t.size != n or n < 2:
                raise RecordError(f"time_s has {t.size} samples, channels {n}", source)
            dt = np.diff(t)
            ts = float(np.median(dt))
            if not np.all(dt > 0) or np.max(np.abs(dt - ts)) > 1e-6 * ts + 1e-12:
                raise RecordError("time_s must increase uniformly (resample first)", source)
            start = float(t[0])
        else:
            ts = check_positive("sample_time_s", sample_time_s)
            start = 0.0
        digest = hashlib.sha256()
        for k in sorted(arrays):
            digest.update(k.encode())
            digest.update(np.ascontiguousarray(arrays[k]).tobytes())
        chans = tuple(Channel(k, str(units.get(k, "")), v) for k, v in arrays.items())
        return cls(start, ts, chans, source=str(source), sha256=digest.hexdigest())

    # -- what it holds -----------------------------------------------------------
    @property
    def samples(self) -> int:
        return int(self.channels[0].values.size)

    @property
    def time_s(self) -> np.ndarray:
        """The uniform time base in seconds."""
        t = np.arange(self.samples, dtype=float)  # in place: one array, the same numbers
        t *= self.sample_time_s
        t += self.start_s
        return t

    @property
    def sample_rate_hz(self) -> float:
        return 1.0 / self.sample_time_s

    @property
    def duration_s(self) -> float:
        return self.sample_time_s * max(self.samples - 1, 0)

    @property
    def end_s(self) -> float:
        return self.start_s + self.duration_s

    @property
    def names(self) -> tuple:
        return tuple(c.name for c in self.channels)

    def channel(self, key=None) -> Channel:
        """Return a channel by name (case-insensitive) or 0-based index.

        With ``key=None`` the record must hold exactly one channel.
        """
        if key is None:
            if len(self.channels) == 1:
                return self.channels[0]
            raise RecordError(
                f"the record holds {len(self.channels)} channels; choose one with --column "
                f"(available: {', '.join(self.names)})", self.source)
        if isinstance(key, (int, np.integer)) and not isinstance(key, bool):
            if 0 <= key < len(self.channels):
                return self.channels[key]
            raise RecordError(f"column index {key} is out of range 0..{len(self.channels) - 1} "
                              f"(available: {', '.join(self.names)})", self.source)
        text = str(key).strip()
        for c in self.channels:
            if c.name.lower() == text.lower():
                return c
        if text.lstrip("-").isdigit():
            return self.channel(int(text))
        raise RecordError(f"no column named {text!r} (available: {', '.join(self.names)})", self.source)

    def segment(self, start_s=None, end_s=None) -> "Record":
        """Return the part of the record with ``start_s <= t <= end_s`` (a new record)."""
        t = self.time_s
        lo = 0 if start_s is None else int(np.searchsorted(t, float(start_s) - 1e-9 * self.sample_time_s))
        hi = self.samples if end_s is None else int(np.searchsorted(t, float(end_s) + 1e-9 * self.sample_time_s, "right"))
        if hi - lo < 2:
            raise RecordError(
                f"the segment {start_s} s to {end_s} s holds fewer than 2 samples "
                f"(record spans {self.start_s:g} s to {self.end_s:g} s)", self.source)
        chans = tuple(Channel(c.name, c.unit, c.values[lo:hi]) for c in self.channels)
        return Record(float(t[lo]), self.sample_time_s, chans, self.source, self.sha256,
                      self.notes, self.warnings, dict(self.metadata))

    def summary(self) -> dict:
        """What ``poleprint inspect --json`` prints for this record."""
        return {
            "source": self.source,
            "sha256": self.sha256,
            "samples": self.samples,
            "sample_rate_hz": self.sample_rate_hz,
            "sample_time_s": self.sample_time_s,
            "start_s": self.start_s,
            "duration_s": self.duration_s,
            "channels": [c.summary() for c in self.channels],
            "notes": list(self.notes),
            "warnings": list(self.warnings),
            "metadata": {str(k): str(v) for k, v in self.metadata.items()},
        }

    def to_dict(self) -> dict:
        return self.summary()

    def __repr__(self) -> str:
        return (f"Record(source={self.source!r}, samples={self.samples}, "
                f"sample_rate_hz={self.sample_rate_hz:g}, channels={list(self.names)})")
