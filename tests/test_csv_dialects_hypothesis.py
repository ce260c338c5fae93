"""Round trip: hypothesis tables written in every dialect read back to the same numbers.

Numbers are written with ``repr`` (shortest round-trip text), so "within print
precision" means equal to a relative 1e-12 (derived: both sides parse the same digits).
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from identify._csv import read_record

MAX_EXAMPLES = 15
SETTINGS = settings(max_examples=MAX_EXAMPLES, deadline=None,
                    suppress_health_check=[HealthCheck.function_scoped_fixture])

finite = st.floats(allow_nan=False, allow_infinity=False, width=64)


@st.composite
def tables(draw):
    channels = draw(st.integers(1, 4))
    rows = draw(st.integers(3, 200))
    values = draw(arrays(np.float64, (rows, channels), elements=finite))
    step = draw(st.sampled_from([1, 2, 5, 10, 25, 250]))       # stamp step in file units
    first = draw(st.integers(-50, 50))                           # may be negative (pre-trigger)
    return values, step, first


def _num(x: float, decimal: str = ".") -> str:
    text = repr(float(x))
    return text.replace(".", ",") if decimal == "," else text


def _stamps(step, first, rows, decimal="."):
    return [_num((first + k) * step, decimal) for k in range(rows)]


# dialect name -> (time unit factor to seconds or None for no time column, writer)
def _comma(values, t):
    names = [f"ch{j + 1}" for j in range(values.shape[1])]
    lines = [",".join(["time", *names])]
    lines += [",".join([s, *map(_num, row)]) for s, row in zip(t, values)]
    return "\n".join(lines) + "\n"


def _semicolon_decimal_comma(values, t):
    names = [f"ch{j + 1}" for j in range(values.shape[1])]
    lines = [";".join(["Zeit [s]".replace("Zeit", "time"), *names])]
    lines += [";".join([s.replace(".", ","), *(_num(v, ",") for v in row)])
              for s, row in zip(t, values)]
    return "\r\n".join(lines) + "\r\n"


def _tab(values, t):
    names = [f"ch{j + 1}" for j in range(values.shape[1])]
    lines = ["\t".join(["t", *names])]
    lines += ["\t".join([s, *map(_num, row)]) for s, row in zip(t, values)]
    return "\n".join(lines)  # no final newline


def _spaces(values, t):
    names = [f"ch{j + 1}" for j in range(values.shape[1])]
    cells = [["t [s]", *[f"{n} [V]" for n in names]]]
    cells += [[s, *map(_num, row)] for s, row in zip(t, values)]
    return "\n".join("  " + "   ".join(c.rjust(24) for c in row) for row in cells) + "\n"


def _quoted(values, t):
    names = [f"ch{j + 1}" for j in range(values.shape[1])]
    quote = lambda c: f'"{c}"'  # noqa: E731
    lines = [",".join(map(quote, ["time", *names]))]
    lines += [",".join(map(quote, [s, *map(_num, row)])) for s, row in zip(t, values)]
    return "\n".join(lines) + "\n"


def _bom(values, t):
    return "\ufeff" + _comma(values, t)


def _comments_preamble(values, t):
    body = _comma(values, t).splitlines()
    out = ["# exported for a round-trip test", "Logger: bench 2", "Operator,tester",
           "Channels: " + str(values.shape[1]), "", body[0]]
    for k, line in enumerate(body[1:]):
        if k % 7 == 3:
            out.append("# marker")
        out.append(line)
    return "\n".join(out) + "\n"


def _unit_headers(values, t):
    heads = ["accel_mps2", "disp [\u00b5m]", "Force (kN)", "volt_V"][: values.shape[1]]
    lines = [",".join(["Time (s)", *heads])]
    lines += [",".join([s, *map(_num, row)]) for s, row in zip(t, values)]
    return "\n".join(lines) + "\n"


def _time_unit(unit):
    def write(values, t):
        names = [f"ch{j + 1}" for j in range(values.shape[1])]
        lines = [",".join([f"t [{unit}]", *names])]
        lines += [",".join([s, *map(_num, row)]) for s, row in zip(t, values)]
        return "\n".join(lines) + "\n"
    return write


def _no_time_preamble_rate(values, t):
    names = [f"ch{j + 1}" for j in range(values.shape[1])]
    lines = ["Sample rate: 250 Hz", ";".join(names)]
    lines += [";".join(_num(v, ",") for v in row) for row in values]
    return "\n".join(lines) + "\n"


def _iso(values, t):
    # t holds the stamps in seconds as text; write them as ISO-8601 from a fixed instant
    base = np.datetime64("2026-03-01T12:00:00.000", "ms")
    stamps = [str(base + np.timedelta64(int(round(float(s) * 1000)), "ms")) for s in t]
    names = [f"ch{j + 1}" for j in range(values.shape[1])]
    lines = [",".join(["timestamp", *names])]
    lines += [",".join([s, *map(_num, row)]) for s, row in zip(stamps, values)]
    return "\n".join(lines) + "\n"


DIALECTS = {
    "comma": (1.0, _comma),
    "semicolon_decimal_comma": (1.0, _semicolon_decimal_comma),
    "tab": (1.0, _tab),
    "spaces": (1.0, _spaces),
    "quoted": (1.0, _quoted),
    "bom": (1.0, _bom),
    "comments_preamble": (1.0, _comments_preamble),
    "unit_headers": (1.0, _unit_headers),
    "ms": (1e-3, _time_unit("ms")),
    "us": (1e-6, _time_unit("us")),
    "micro_sign": (1e-6, _time_unit("\u00b5s")),
    "ns": (1e-9, _time_unit("ns")),
    "min": (60.0, _time_unit("min")),
    "no_time_preamble_rate": (None, _no_time_preamble_rate),
    "iso8601": ("iso", _iso),
}


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    return tmp_path_factory.mktemp("dialects")


@pytest.mark.parametrize("dialect", sorted(DIALECTS))
@SETTINGS
@given(table=tables())
def test_round_trip(folder, dialect, table):
    values, step, first = table
    factor, writer = DIALECTS[dialect]
    rows = values.shape[0]
    step_value = step * (1e-3 if factor in (1.0, "iso") else 1.0)  # seconds: ms-sized steps
    stamps = [_num((first + k) * step_value) for k in range(rows)]
    path = folder / f"{dialect}.csv"
    path.write_bytes(writer(values, stamps).encode("utf-8"))
    rec = read_record(path)
    assert rec.samples == rows
    assert len(rec.channels) == values.shape[1]
    for j, channel in enumerate(rec.channels):
        np.testing.assert_allclose(channel.values, values[:, j], rtol=1e-12, atol=0)
    if factor is None:
        assert rec.sample_time_s == pytest.approx(1 / 250)
        assert rec.start_s == 0.0
    elif factor == "iso":  # seconds from the first stamp
        assert rec.sample_time_s == pytest.approx(step_value, rel=1e-9)
        assert rec.start_s == 0.0
    else:
        assert rec.sample_time_s == pytest.approx(step_value * factor, rel=1e-9)
        assert rec.start_s == pytest.approx(first * step_value * factor, rel=1e-9, abs=1e-15)
        assert not any("resampled" in n for n in rec.notes)
    if dialect == "unit_headers":
        expected = [("accel", "mps2"), ("disp", "\u00b5m"), ("Force", "kN"), ("volt", "V")]
        assert [(c.name, c.unit) for c in rec.channels] == expected[: values.shape[1]]
    if dialect == "comments_preamble":
        assert rec.metadata["logger"] == "bench 2"
        assert rec.metadata["channels"] == str(values.shape[1])
    assert math.isfinite(rec.duration_s)
