"""``poleprint report``: analyse files and write one self-contained HTML report."""
from __future__ import annotations

import argparse
import os
import sys
import traceback

from ._common import EXIT_OK, EXIT_PARTIAL, EXIT_USAGE, fail_line, warn_line

DESCRIPTION = """\
Analyse each FILE with one job and write a single HTML file: per record the poles with
their intervals and units, every warning, the validation against the record, the
plots, the settings used and the tool version.  The file is self-contained (figures
embedded, no network access needed) and reads the same offline.

The job is --job; without it, step when --input or --output is given, else decay.
Results are estimates, not clearances: defer to the site's procedures, local codes and
licensed engineers.
"""


def register(subparsers, name, help_text):
    parser = subparsers.add_parser(name, help=help_text, description=DESCRIPTION,
                                   formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("files", nargs="+", metavar="FILE", help="record files (CSV)")
    parser.add_argument("-o", "--out", required=True, metavar="REPORT.html",
                        help="the HTML file to write")
    parser.add_argument("--job", choices=("decay", "step", "arx"),
                        help="which analysis to run (default: step with --input/--output, else decay)")
    parser.add_argument("--plots", metavar="DIR", help="also write every figure as a PNG file in DIR")
    parser.add_argument("--title", metavar="TEXT", help="title of the report")
    parser.add_argument("--column", metavar="C", help="decay: channel to analyse (name or 0-based index)")
    parser.add_argument("--input", metavar="COL", help="step/arx: the input channel")
    parser.add_argument("--output", metavar="COL", help="step/arx: the output channel")
    parser.add_argument("--confidence", type=float, metavar="P",
                        help="confidence level of the intervals as a probability (job default 0.95)")
    parser.add_argument("--sample-rate", metavar="HZ", type=float, dest="sample_rate_hz",
                        help="sample rate when the file has no time column")
    parser.set_defaults(func=run)


def job_options(args) -> dict:
    """The job options given on the command line (None: the job's default)."""
    return {"column": getattr(args, "column", None), "input": getattr(args, "input", None),
            "output": getattr(args, "output", None),
            "confidence": getattr(args, "confidence", None),
            "sample_rate_hz": getattr(args, "sample_rate_hz", None)}


def analyse_files(job, files, options):
    """Run ``job`` on each file; returns ``(results, failures)``, printing an error line each."""
    from .._errors import PoleprintError
    from ..check import run_job

    results, failures = [], []
    for path in files:
        try:
            results.append(run_job(job, path, **options))
            continue
        except PoleprintError as exc:
            exc.with_source(path)
            message = exc.message
        except (MemoryError, RecursionError) as exc:
            message = f"out of resources: {type(exc).__name__}"
        except Exception as exc:  # never a traceback on the terminal
            if os.environ.get("POLEPRINT_DEBUG"):
                traceback.print_exc()
            message = f"internal error ({type(exc).__name__}: {exc}); please report it with the file"
        fail_line(f"{path}: {message}")
        failures.append((str(path), " ".join(message.split())))
    return results, failures


def run(args) -> int:
    from .._errors import PoleprintError
    from ..report import write_report

    job = args.job or ("step" if (args.input or args.output) else "decay")
    results, failures = analyse_files(job, args.files, job_options(args))
    if not results:
        fail_line("no file gave a result; no report written")
        return EXIT_USAGE
    for r in results:
        for w in getattr(r, "warnings", ()) or ():
            warn_line(str(getattr(r, "source", "")), w)
    try:
        out = write_report(results, args.out, plots_dir=args.plots, title=args.title,
                           failures=failures)
    except (OSError, PoleprintError) as exc:
        fail_line(f"{args.out}: cannot write the report: {getattr(exc, 'strerror', None) or exc}")
        return EXIT_USAGE
    print(f"wrote {out.path}: {out.records} record(s), {len(out.figures)} figure(s)"
          + (f", PNG files in {args.plots}" if args.plots else ""), file=sys.stdout)
    return EXIT_OK if not failures else EXIT_PARTIAL
