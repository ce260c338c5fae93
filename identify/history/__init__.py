"""Per-rig history: store every test, track modes across tests, trend their damping.

    HistoryStore        SQLite store of tests (versioned schema, WAL, one transaction per add)
    StoredTest          one stored test: rig, time and its origin, file SHA-256, poles, tags
    AddOutcome          what one add did (``added`` false and a note for a known file)
    RigSummary          a rig, its number of tests and first and last test times
    track_modes         follow modes across tests by natural frequency and its interval
    ModeTracking, TrackedMode, ModeObservation
    analyse_trend       per-mode slopes, step change and projected threshold crossing
    TrendResult, ModeTrend, LineFit
    fit_line            weighted line with between-test scatter (Paule–Mandel, Knapp–Hartung)
    step_change_test    one level shift against a straight line (sup-F, Monte Carlo)
    resolve_test_time   test time from --when, record metadata or the file's modification time
    parse_time          ISO-8601 text to an aware UTC datetime
    CAUTIONS, LEVELS, DEFAULT_DB, SCHEMA_VERSION
"""
from __future__ import annotations

from ._schema import SCHEMA_VERSION
from ._store import (DEFAULT_DB, AddOutcome, HistoryStore, RigSummary, StoredTest, file_sha256,
                     parse_time, resolve_test_time)
from ._tracking import ModeObservation, ModeTracking, TrackedMode, track_modes
from ._trend import (CAUTIONS, LEVELS, LineFit, ModeTrend, TrendResult, analyse_trend, fit_line,
                     step_change_test)

__all__ = ["HistoryStore", "StoredTest", "AddOutcome", "RigSummary", "track_modes", "ModeTracking",
           "TrackedMode", "ModeObservation", "analyse_trend", "TrendResult", "ModeTrend", "LineFit",
           "fit_line", "step_change_test", "resolve_test_time", "parse_time", "file_sha256",
           "CAUTIONS", "LEVELS", "DEFAULT_DB", "SCHEMA_VERSION"]
