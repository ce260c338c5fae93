"""Fuzzing the reader: whatever the bytes, only the project's own errors come out.

A successful read must also give a consistent record (finite, uniform time base), and no
read may raise a Python warning: the reader does not silence pandas (its filter state is
process-wide, identify/_csv.py), so the options must leave pandas nothing to warn about.
"""
from __future__ import annotations

import math
import warnings

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from identify import PoleprintError, Record
from identify._csv import read_record

FUZZ = settings(max_examples=120, deadline=None,
                suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])

# characters loggers write, so the fuzzer reaches the deeper parsing paths
CSVISH = st.text(alphabet=st.sampled_from(list("0123456789.,;\t -+eE#:=\"\n\r[]()_tTxms\u00b5ZnaNif")),
                 max_size=400)
OPTIONS = st.fixed_dictionaries({
    "sample_rate_hz": st.none() | st.sampled_from([1.0, 100.0]),
    "nan": st.sampled_from(["raise", "omit"]),
})


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    return tmp_path_factory.mktemp("fuzz")


def _check(path, options):
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            rec = read_record(path, **options)
        except PoleprintError as exc:
            rec, text = None, str(exc)
            assert "\n" not in text and exc.source == str(path)
    assert not caught, [f"{w.category.__name__}: {w.message}" for w in caught]
    if rec is None:
        return None
    assert isinstance(rec, Record)
    assert rec.samples >= 2
    assert math.isfinite(rec.start_s) and rec.sample_time_s > 0
    return rec


@FUZZ
@given(data=st.binary(max_size=600), options=OPTIONS)
def test_arbitrary_bytes(folder, data, options):
    path = folder / "bytes.csv"
    path.write_bytes(data)
    _check(path, options)


@FUZZ
@given(text=CSVISH, bom=st.booleans(), options=OPTIONS)
def test_csv_like_text(folder, text, bom, options):
    path = folder / "text.csv"
    path.write_bytes((b"\xef\xbb\xbf" if bom else b"") + text.encode("utf-8"))
    _check(path, options)


cells = (st.floats(width=64).map(repr) | st.integers(-10**25, 10**25).map(str)
         | st.sampled_from(["", "NaN", "nan", "-", "abc", "1,5", '"2.5"', "1e999", "2026-01-01T00:00:00"]))


@FUZZ
@given(header=st.lists(st.text(max_size=8), min_size=1, max_size=4),
       rows=st.lists(st.lists(cells, min_size=1, max_size=4), min_size=0, max_size=12),
       sep=st.sampled_from([",", ";", "\t", "  "]), options=OPTIONS)
def test_arbitrary_tables(folder, header, rows, sep, options):
    lines = [sep.join(header)] + [sep.join(r) for r in rows]
    path = folder / "table.csv"
    path.write_bytes("\n".join(lines).encode("utf-8", errors="replace"))
    rec = _check(path, options)
    if rec is not None and options["nan"] == "raise":
        for ch in rec.channels:
            assert np.all(np.isfinite(ch.values))
