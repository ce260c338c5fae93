"""Plumbing shared by every subcommand: per-file loop, error lines, JSON lines, progress."""
from __future__ import annotations

import os
import sys
import traceback

EXIT_OK = 0
EXIT_USAGE = 2
EXIT_PARTIAL = 3


class CliUsageError(Exception):
    """Bad combination of options: printed as one line, exit status 2."""


def fail_line(text: str) -> None:
    """Print ``poleprint: error: text`` as one line on stderr."""
    print(f"poleprint: error: {' '.join(str(text).split())}", file=sys.stderr)


def warn_line(source: str, text: str) -> None:
    print(f"poleprint: warning: {source}: {' '.join(str(text).split())}", file=sys.stderr)


def add_record_options(parser, *, column: bool = True) -> None:
    """Options for reading records, shared by every subcommand that reads CSV files."""
    if column:
        parser.add_argument("--column", metavar="C",
                            help="channel to analyse, by name (case-insensitive) or 0-based index")
    parser.add_argument("--sample-rate", metavar="HZ", type=float, dest="sample_rate_hz",
                        help="sample rate when the file has no time column")
    parser.add_argument("--nan", choices=("raise", "omit"), default="raise",
                        help="missing-value policy: raise (default) or omit where the method allows")


def add_output_options(parser) -> None:
    parser.add_argument("--json", action="store_true",
                        help="print one JSON object per input file, one per line, in input order")


def _progress(i: int, n: int, name: str) -> None:
    if n > 1 and sys.stderr.isatty():
        width = 24
        done = int(width * i / n)
        sys.stderr.write(f"\r[{'#' * done}{'.' * (width - done)}] {i}/{n} {os.path.basename(name)[:40]:<40}")
        if i == n:
            sys.stderr.write("\r" + " " * (width + 52) + "\r")
        sys.stderr.flush()


def run_per_file(files, analyse, render_text, *, json_output: bool, stdout=None) -> int:
    """Analyse each file, print its result (text or one JSON line), return the exit status.

    ``analyse(path)`` returns an object with ``to_dict()``; a :class:`PoleprintError`
    becomes one error line (and, with ``--json``, a line with an ``error`` key).
    """
    from .._errors import PoleprintError
    from .._jsonable import dumps_line

    out = stdout or sys.stdout
    ok = failed = 0
    n = len(files)
    for i, path in enumerate(files, 1):
        _progress(i - 1, n, str(path))
        try:
            result = analyse(path)
        except PoleprintError as exc:
            exc.with_source(path)
            message = exc.message
            failed += 1
        except (MemoryError, RecursionError) as exc:
            message = f"out of resources: {type(exc).__name__}"
            failed += 1
        except Exception as exc:  # never a traceback on the terminal
            if os.environ.get("POLEPRINT_DEBUG"):
                traceback.print_exc()
            message = f"internal error ({type(exc).__name__}: {exc}); please report it with the file"
            failed += 1
        else:
            ok += 1
            if json_output:
                print(dumps_line(result), file=out, flush=True)
            else:
                print(render_text(result), file=out, flush=True)
            for w in getattr(result, "warnings", ()) or ():
                if not json_output:
                    warn_line(str(path), w)
            continue
        fail_line(f"{path}: {message}")
        if json_output:
            print(dumps_line({"source": str(path), "error": " ".join(message.split())}), file=out, flush=True)
    _progress(n, n, "")
    if failed == 0:
        return EXIT_OK
    return EXIT_USAGE if ok == 0 else EXIT_PARTIAL


def fmt(value, digits: int = 4, unit: str = "") -> str:
    """Format a number for tables: significant digits, ``-`` for None/NaN."""
    import math

    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "-"
    text = f"{value:.{digits}g}"
    return f"{text} {unit}".rstrip() if unit else text


def fmt_interval(ci, digits: int = 4) -> str:
    if ci is None:
        return "-"
    lo, hi = ci[0], ci[1]
    return f"[{fmt(lo, digits)}, {fmt(hi, digits)}]"


def table(headers, rows) -> str:
    """Plain-text table with columns padded to width."""
    cells = [list(map(str, headers))] + [[str(c) for c in r] for r in rows]
    widths = [max(len(r[i]) for r in cells) for i in range(len(headers))]
    lines = ["  ".join(c.ljust(w) for c, w in zip(r, widths)).rstrip() for r in cells]
    lines.insert(1, "  ".join("-" * w for w in widths))
    return "\n".join(lines)
