"""Mode tracking across tests: match poles by natural frequency, using their intervals.

Tests are taken in time order.  Each tracked mode remembers the natural frequency and
interval of its latest observation; a pole of the next test joins a mode when the
frequencies differ by no more than the two interval half-widths plus a relative
tolerance (default 2 %, for drift between tests and for intervals that are too
narrow).  Within one test the pairing that minimises the total gated distance is
chosen (an exact minimum-cost matching), so two close modes are never merged into one.  A pole
that joins no mode starts a new one; a mode that first shows up after the first test,
that is missing from some tests, or that is not seen in the latest tests is reported.
Oscillatory poles and real poles are never matched with each other.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from .._validate import check_nonnegative

__all__ = ["ModeObservation", "TrackedMode", "ModeTracking", "track_modes"]


@dataclass(frozen=True)
class ModeObservation:
    """One pole of one test, assigned to a tracked mode."""

    test_id: int
    test_time: str
    pole: object
    tags: dict

    def to_dict(self) -> dict:
        return {"test_id": self.test_id, "test_time": self.test_time, "pole": self.pole.to_dict(),
                "tags": dict(self.tags)}


@dataclass(frozen=True)
class TrackedMode:
    """A mode followed across tests.

    Parameters
    ----------
    mode : str
        Label, ``"mode 1"``, ``"mode 2"``... in order of natural frequency.
    natural_frequency_hz : float
        Mean natural frequency over the observations, weighted by 1/half-width².
    oscillatory : bool
        Complex pair (true) or real pole (false).
    observations : tuple of ModeObservation
        In time order.
    missing_test_ids : tuple of int
        Tests between the first and last observation in which the mode was not found.
    appeared_in, disappeared_after : int or None
        Test id where the mode was first seen if that is not the first test; test id of
        its last observation if it is missing from the later tests.
    """

    mode: str
    natural_frequency_hz: float
    oscillatory: bool
    observations: tuple
    missing_test_ids: tuple = ()
    appeared_in: int | None = None
    disappeared_after: int | None = None

    def to_dict(self) -> dict:
        return {"mode": self.mode, "natural_frequency_hz": self.natural_frequency_hz,
                "oscillatory": self.oscillatory, "n_tests": len(self.observations),
                "test_ids": [o.test_id for o in self.observations],
                "missing_test_ids": list(self.missing_test_ids), "appeared_in": self.appeared_in,
                "disappeared_after": self.disappeared_after}


@dataclass(frozen=True)
class ModeTracking:
    """Modes tracked across tests, with the appear / disappear / missing events (one line each)."""

    modes: tuple
    events: tuple
    test_ids: tuple
    frequency_tolerance: float

    def to_dict(self) -> dict:
        return {"modes": [m.to_dict() for m in self.modes], "events": list(self.events),
                "test_ids": list(self.test_ids), "frequency_tolerance": self.frequency_tolerance}


def _half_width_hz(pole) -> float:
    ci = getattr(pole, "ci", None)
    if ci is None:
        return 0.0
    lo, hi = ci.natural_frequency_hz
    width = 0.5 * (float(hi) - float(lo))
    return width if math.isfinite(width) and width > 0 else 0.0


def _min_cost_matching(cost, big):
    """Pairs (row, col) of least total cost, an unmatched row costing ``big`` (exact).

    Dynamic programming over subsets of columns for up to 12 columns (a test rarely has
    more poles); else the Hungarian method from scipy.
    """
    n_rows, n_cols = cost.shape
    if n_cols > 12:
        from scipy.optimize import linear_sum_assignment

        rows, cols = linear_sum_assignment(cost)
        return [(int(r), int(c)) for r, c in zip(rows, cols) if cost[r, c] < big]
    best = {0: (0.0, ())}
    for i in range(n_rows):
        nxt = {}
        for mask, (total, pairs) in best.items():
            options = [(mask, total + big, pairs)]
            for j in range(n_cols):
                if not mask & (1 << j) and cost[i, j] < big:
                    options.append((mask | (1 << j), total + float(cost[i, j]), pairs + ((i, j),)))
            for m, t, p in options:
                if m not in nxt or t < nxt[m][0]:
                    nxt[m] = (t, p)
        best = nxt
    return list(min(best.values(), key=lambda v: v[0])[1])


def track_modes(tests, *, frequency_tolerance: float = 0.02) -> ModeTracking:
    """Follow each mode across tests by natural frequency.

    Parameters
    ----------
    tests : sequence
        Stored tests (:class:`~identify.history.StoredTest` or any object with ``id``,
        ``test_time`` (ISO-8601), ``poles`` and ``tags``); sorted by time here.
    frequency_tolerance : float, default=0.02
        Relative tolerance added to the interval half-widths when matching.

    Returns
    -------
    ModeTracking

    Notes
    -----
    A pole ``p`` of a test may join a mode ``m`` (latest observation ``q``) when

        |fn(p) − fn(q)| <= hw(p) + hw(q) + tol · max(fn(p), fn(q)),

    with ``hw`` the half-width of the natural-frequency interval.  Among feasible pairs
    the assignment minimising Σ |Δfn| / gate is chosen, an exact minimum-cost matching
    (the linear assignment problem, Kuhn 1955; solved by dynamic programming over
    subsets, or ``scipy.optimize.linear_sum_assignment`` for more than 12 poles).
    """
    import numpy as np

    tol = check_nonnegative("frequency_tolerance", frequency_tolerance)
    ordered = sorted(tests, key=lambda t: (t.test_time, t.id))
    tracks = []  # dicts: kind, obs list, last pole
    for test in ordered:
        poles = [p for p in test.poles if math.isfinite(p.natural_frequency_hz)]
        assigned = {}
        if tracks and poles:
            big = 1e6
            cost = np.full((len(tracks), len(poles)), big)
            for i, tr in enumerate(tracks):
                q = tr["last"]
                for j, p in enumerate(poles):
                    if (not p.is_real) != tr["oscillatory"]:
                        continue
                    fq, fp = q.natural_frequency_hz, p.natural_frequency_hz
                    gate = _half_width_hz(p) + _half_width_hz(q) + tol * max(fp, fq)
                    d = abs(fp - fq)
                    if gate > 0 and d <= gate:
                        cost[i, j] = d / gate
                    elif gate == 0 and d == 0:
                        cost[i, j] = 0.0
            assigned = {c: r for r, c in _min_cost_matching(cost, big)}
        for j, p in enumerate(poles):
            obs = ModeObservation(int(test.id), str(test.test_time), p, dict(getattr(test, "tags", {}) or {}))
            if j in assigned:
                tr = tracks[assigned[j]]
                tr["obs"].append(obs)
                tr["last"] = p
            else:
                tracks.append({"oscillatory": not p.is_real, "obs": [obs], "last": p})

    test_ids = [int(t.id) for t in ordered]
    position = {tid: k for k, tid in enumerate(test_ids)}
    built = []
    for tr in tracks:
        obs = tr["obs"]
        f = np.array([o.pole.natural_frequency_hz for o in obs])
        hw = np.array([_half_width_hz(o.pole) for o in obs])
        if np.all(hw > 0):
            w = 1.0 / hw ** 2
            fn = float(np.sum(w * f) / np.sum(w))
        else:
            fn = float(np.mean(f))
        seen = {o.test_id for o in obs}
        first, last = position[obs[0].test_id], position[obs[-1].test_id]
        missing = tuple(tid for tid in test_ids[first:last + 1] if tid not in seen)
        built.append((fn, tr["oscillatory"], tuple(obs), missing,
                      obs[0].test_id if first > 0 else None,
                      obs[-1].test_id if last < len(test_ids) - 1 else None))
    built.sort(key=lambda b: (not b[1], b[0]))
    modes, events = [], []
    for k, (fn, osc, obs, missing, appeared, gone) in enumerate(built, 1):
        label = f"mode {k}"
        modes.append(TrackedMode(label, fn, osc, obs, missing, appeared, gone))
        desc = f"{label} (about {fn:.4g} Hz{'' if osc else ', real pole'})"
        if appeared is not None:
            when = next(o.test_time for o in obs if o.test_id == appeared)
            events.append(f"appeared: {desc} first seen in test #{appeared} ({when[:10]})")
        if missing:
            events.append(f"missing: {desc} not found in test(s) "
                          + ", ".join(f"#{m}" for m in missing))
        if gone is not None:
            later = len(test_ids) - 1 - position[gone]
            events.append(f"disappeared: {desc} last seen in test #{gone} ({obs[-1].test_time[:10]}); "
                          f"not found in the {later} later test(s)")
    return ModeTracking(tuple(modes), tuple(events), tuple(test_ids), tol)
