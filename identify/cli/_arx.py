"""``poleprint arx``: plant poles from an input/output record by least-squares ARX."""
from __future__ import annotations

import argparse

from ._common import CliUsageError, add_output_options, add_record_options, run_per_file

DESCRIPTION = """\
Fit A(q) y = B(q) u + e to a record driven by a random binary signal, a chirp or normal
operation, and report the plant's poles (s = ln z / Ts) with intervals, zeros, DC gain,
the order search, residual tests and a hold-out validation by simulation.  Without
--input the output alone is fitted as an autoregression (output-only record, e.g. an
ambient response).

Poles and intervals are estimates, not clearances: defer to the site's procedures,
local codes and licensed engineers.
"""


def _orders(text: str):
    text = text.strip().lower()
    if text == "auto":
        return "auto"
    parts = [p for p in text.split(",") if p.strip()]
    try:
        values = tuple(int(p) for p in parts)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected auto or NA,NB (e.g. 2,2); got {text!r}") from None
    if len(values) not in (1, 2) or min(values) < 0:
        raise argparse.ArgumentTypeError(f"expected auto or NA,NB with whole numbers >= 0; got {text!r}")
    return values


def _delay(text: str):
    text = text.strip().lower()
    if text == "auto":
        return "auto"
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected auto or a whole number of samples; got {text!r}") from None
    if value < 0:
        raise argparse.ArgumentTypeError(f"the delay must be >= 0 samples; got {value}")
    return value


def _decimate(text: str):
    text = text.strip().lower()
    if text in ("auto", "off"):
        return text
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected auto, off or a whole factor >= 1; got {text!r}") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"the decimation factor must be >= 1; got {value}")
    return value


def register(subparsers, name, help_text):
    parser = subparsers.add_parser(name, help=help_text, description=DESCRIPTION,
                                   formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("files", nargs="+", metavar="FILE", help="record files (CSV)")
    parser.add_argument("--output", required=True, metavar="COL",
                        help="output (response) channel, by name or 0-based index")
    parser.add_argument("--input", metavar="COL",
                        help="input (drive) channel; omit for an output-only autoregression")
    parser.add_argument("--orders", type=_orders, default="auto", metavar="auto|NA,NB",
                        help="orders of A and B (default: auto, by the criterion)")
    parser.add_argument("--delay", type=_delay, default="auto", metavar="auto|K",
                        help="input delay in samples of the analysed record (default: auto)")
    parser.add_argument("--criterion", choices=("aic", "bic", "fpe", "aicc"), default="bic",
                        help="information criterion for the order search (default: bic, the more conservative order choice)")
    parser.add_argument("--refine", choices=("iv",), default=None,
                        help="iv: instrumental-variable refinement against sensor (output) noise")
    parser.add_argument("--holdout", type=float, default=0.3, metavar="FRACTION",
                        help="final fraction kept for validation by simulation (default 0.3; 0 for none)")
    parser.add_argument("--decimate", type=_decimate, default="auto", metavar="auto|off|Q",
                        help="anti-alias filter and decimate oversampled records (default: auto)")
    parser.add_argument("--confidence", type=float, default=0.95, metavar="P",
                        help="confidence level of the intervals, as a probability (default 0.95)")
    parser.add_argument("--start", type=float, dest="start_s", metavar="S", help="analyse from this time (s)")
    parser.add_argument("--end", type=float, dest="end_s", metavar="S", help="analyse up to this time (s)")
    add_record_options(parser, column=False)
    add_output_options(parser)
    parser.set_defaults(func=run)
    return parser


def run(args) -> int:
    from .._errors import PoleprintError
    from .._validate import check_confidence
    from ..arx import analyse_arx
    from ..arx._text import render_text

    try:
        check_confidence(args.confidence)
    except PoleprintError as exc:
        raise CliUsageError(f"--confidence: {exc}") from None
    if not (0.0 <= args.holdout < 1.0):
        raise CliUsageError(f"--holdout must lie in [0, 1) (e.g. 0.3); got {args.holdout!r}")
    if args.refine == "iv" and args.input is None:
        raise CliUsageError("--refine iv needs --input (instruments are built from the input)")
    orders = args.orders
    if isinstance(orders, tuple) and len(orders) == 1:
        orders = orders[0]

    def analyse(path):
        return analyse_arx(path, output=args.output, input=args.input, orders=orders,
                           delay=args.delay, criterion=args.criterion, confidence=args.confidence,
                           refine=args.refine, holdout=args.holdout, decimate=args.decimate,
                           start_s=args.start_s, end_s=args.end_s,
                           sample_rate_hz=args.sample_rate_hz, nan=args.nan)

    return run_per_file(args.files, analyse, render_text, json_output=args.json)
