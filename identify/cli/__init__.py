"""The ``poleprint`` command line: parse arguments, call the public API, print.

Exit status: 0 every file gave a result; 2 bad usage, or no file gave a result
(unreadable or unusable input); 3 some files gave a result and some did not.
Set ``POLEPRINT_DEBUG=1`` to see tracebacks of unexpected failures.
"""
from __future__ import annotations

import argparse
import importlib
import os
import sys

from .._version import __version__
from ._common import EXIT_OK, EXIT_PARTIAL, EXIT_USAGE, CliUsageError, fail_line

__all__ = ["main", "run_command", "build_parser", "default_blas_threads", "EXIT_OK", "EXIT_USAGE",
           "EXIT_PARTIAL"]

#: (subcommand, module under identify.cli, one-line help); each module defines
#: ``register(subparsers, name, help)`` and sets ``func`` on its parser.
SUBCOMMANDS = [
    ("inspect", "_inspect", "show what a CSV record holds: samples, rate, channels, time-base findings"),
    ("decay", "_decay", "natural frequencies and damping ratios, with intervals, from free-decay records"),
    ("step", "_step", "process model, step figures and starting PI/PID gains from step tests"),
    ("arx", "_arx", "plant poles, zeros and DC gain with intervals from input/output records (ARX)"),
    ("check", "_check", "check new records against a saved result: how each pole moved, with intervals"),
    ("report", "_report", "analyse records and write one self-contained HTML report with plots"),
    ("demo", "_demo", "run every job on the bundled records and write the demonstration report"),
    ("history", "_history", "store each test of a rig and follow its modes' damping over time"),
]

DESCRIPTION = """\
Poles with confidence intervals from measured responses.

Reads logger CSV files, finds the response, estimates natural frequencies, damping
ratios, time constants, dead time and gain with intervals, checks the model against the
record and writes tables, JSON and reports.  Results are estimates, not clearances:
defer to the site's procedures, local codes and licensed engineers for decisions.
"""

EPILOG = """\
exit status: 0 every file gave a result; 2 bad usage or no file gave a result;
3 some files gave a result and some did not.
"""


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="poleprint", description=DESCRIPTION, epilog=EPILOG,
        formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--version", action="version", version=f"poleprint {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name, module, help_text in SUBCOMMANDS:
        importlib.import_module(f".{module}", __name__).register(sub, name, help_text)
    return parser


def main(argv=None) -> int:
    """Run the command line; returns the exit status (also used by the console script)."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "command", None):
        parser.print_help()
        return EXIT_USAGE
    try:
        return int(args.func(args))
    except CliUsageError as exc:
        fail_line(str(exc))
        return EXIT_USAGE
    except KeyboardInterrupt:
        fail_line("interrupted")
        return 130
    except BrokenPipeError:
        # the reader of our output went away (e.g. `poleprint ... | head`): stop quietly,
        # and keep Python from complaining when it flushes stdout at exit
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return EXIT_OK


def _one_line_warning(message, category, filename, lineno, file=None, line=None):
    """A Python warning from a library, as one line on stderr like the command's own."""
    text = " ".join(str(message).split())
    print(f"poleprint: warning: {category.__name__}: {text}", file=sys.stderr if file is None else file)


def run_command(argv=None) -> None:
    """Run the command line as a whole process: one-line warnings, then exit with the status.

    For the console script and ``python -m identify`` only (it ends the process):
    library warnings (``warnings.warn``) print as one ``poleprint: warning:`` line, and
    the process ends without CPython's final garbage collection.  With lmfit,
    scipy.stats, pandas and matplotlib loaded, those last collections walk every object
    the libraries made and take about half a second — longer than many whole analyses.
    The output is flushed, then :func:`gc.freeze` moves every live object out of the
    collector's reach before the normal exit: ``atexit`` handlers and the flushing of
    open streams still run; only garbage cycles among the frozen objects are left to the
    operating system.
    """
    import gc
    import warnings

    default_blas_threads(os.environ)
    warnings.showwarning = _one_line_warning
    status = main(argv)
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except (OSError, ValueError):  # closed, or a reader that went away: nothing to add,
            try:  # and nothing left for the interpreter's own flush at exit to complain about
                os.dup2(os.open(os.devnull, os.O_WRONLY), stream.fileno())
            except (OSError, ValueError):
                pass
    gc.freeze()
    sys.exit(status)


#: thread-count variables a user may set for numpy's BLAS (any of them: we leave all alone)
BLAS_THREAD_VARIABLES = ("OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "OMP_NUM_THREADS",
                         "GOTO_NUM_THREADS", "BLIS_NUM_THREADS")


def default_blas_threads(environ) -> bool:
    """Ask numpy's BLAS for one thread unless the user chose a number; True if set here.

    For the command line only, before numpy is imported (``import identify`` and
    ``identify.cli`` import no numpy; a test checks it).  The matrices here are small
    (the longest is about 50,000 × 10), while a second BLAS thread busy-waits for work on
    the core the background import of lmfit needs (:mod:`identify.cli._warmup`): on the
    2-core benchmark machine one thread made ``poleprint decay`` on a 2,000,000-sample
    record about 0.35 s faster and the demo no slower (docs/decay.md).
    """
    if any(environ.get(name) for name in BLAS_THREAD_VARIABLES):
        return False
    environ["OPENBLAS_NUM_THREADS"] = "1"
    environ["MKL_NUM_THREADS"] = "1"
    return True


def _entry() -> None:  # pragma: no cover - console script shim
    run_command()
