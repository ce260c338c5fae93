"""Conditioning: what part of a record to analyse, and the record's baseline.

    estimate_offset_trend   offset and linear trend of a (quiet) part of a signal
    detect_decay_segment    quiet pre-trigger, impact/release, ring-down start and end
    detect_step             step instant and size from an input channel, with checks

Each returns a frozen object saying what it chose, so plots can draw it; every
choice can be overridden by the caller (``start_s``, ``end_s``).
"""
from __future__ import annotations

from .._lazy import lazy_exports


_LAZY = {
    "OffsetTrend": "._trend", "estimate_offset_trend": "._trend",
    "DecaySegment": "._segment", "detect_decay_segment": "._segment",
    "StepEvent": "._stepdetect", "detect_step": "._stepdetect",
}

__all__ = list(_LAZY)

__getattr__, __dir__ = lazy_exports(__name__, _LAZY)
