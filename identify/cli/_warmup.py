"""Import the fitting library in a background thread while the command reads and conditions.

    warm_up   start importing lmfit now, in a daemon thread; returns the thread

``poleprint decay`` spends about 1.5 s importing lmfit (which brings scipy.optimize
and scipy.stats) and, on a record of millions of rows, about as long reading,
segmenting and seeding before its first fit.  Much of the reading and conditioning
runs in pandas' and numpy's C code, which lets another Python thread run: importing
lmfit meanwhile hides most of the import.  The job's ``import lmfit`` then finds the
module loaded, or waits for the import in progress (Python's per-module import lock).

Import safety.  Two threads that *start* importing different modules of one cyclic
group could each wait for the other; CPython breaks such a deadlock by handing one of
them a half-initialised module.  So before the thread starts, every module the job
imports ahead of its first fit is imported here in the main thread
(:data:`JOB_MODULES`), and ``tests/test_cli_warmup.py`` checks that the decay job then
imports nothing before ``lmfit``: while the thread runs, only it imports.

Only the command line does this (it owns its process); the Python API imports in the
caller's thread.  While the thread runs, the interpreter's switch interval is 0.5 ms
instead of CPython's 5 ms, so that the main thread, returning from C code, does not
wait long for the lock the importing thread holds; the thread restores it when done.
"""
from __future__ import annotations

import importlib
import sys
import threading

__all__ = ["warm_up", "JOB_MODULES", "SWITCH_INTERVAL_S"]

#: What the decay job imports before its first fit, at module level or inside
#: functions (read_record's pandas and codecs included).
JOB_MODULES = (
    "numpy.fft", "pandas", "encodings.latin_1", "encodings.utf_8_sig", "identify._jsonable",
    "identify._csv", "identify._csv_dialect", "identify._csv_units", "identify._timebase",
    "identify._quality", "identify.records", "identify.poles", "identify._response",
    "identify.conditioning", "identify.conditioning._trend", "identify.conditioning._segment",
    "identify.decay", "identify.decay._analyse", "identify.decay._refine", "identify.decay._pencil",
    "identify.decay._nls", "identify.decay._checks", "identify.decay._result",
    "identify.decay._logdec", "identify.decay._halfpower",
    "identify.validation", "identify.validation._metrics",
)
#: GIL hand-over interval (s) while the import runs (CPython's default is 0.005).
SWITCH_INTERVAL_S = 0.0005


def warm_up(module: str = "lmfit") -> threading.Thread:
    """Import :data:`JOB_MODULES` here, then ``module`` in a daemon thread.

    An import error in the thread is dropped: the job's own import raises it again,
    in the main thread, where it is reported.
    """
    for name in JOB_MODULES:
        importlib.import_module(name)
    previous = sys.getswitchinterval()

    def work():
        try:
            importlib.import_module(module)
        except Exception:  # noqa: BLE001 - the job's own import reports it
            pass
        finally:
            sys.setswitchinterval(previous)

    sys.setswitchinterval(min(previous, SWITCH_INTERVAL_S))
    thread = threading.Thread(target=work, name=f"poleprint-import-{module}", daemon=True)
    thread.start()
    return thread
