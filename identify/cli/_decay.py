"""``poleprint decay FILE...``: natural frequencies and damping ratios of free-decay records.

Text: one table per file (mode, fn and its interval in Hz, ζ and its interval, decay
rate in 1/s, amplitude in the channel's unit, verdict), the cross-checks, and a caution;
warnings go to stderr.  With ``--json``: one line per file, the result's ``to_dict()``
(docs/json-contract.md, "Decay job").
"""
from __future__ import annotations

from ._common import CliUsageError, add_output_options, add_record_options, run_per_file

METHOD_CHOICES = ("auto", "logdec", "pencil", "fit", "halfpower")


def register(subparsers, name: str, help_text: str) -> None:
    parser = subparsers.add_parser(
        name, help=help_text, description=help_text[:1].upper() + help_text[1:] + ".")
    parser.add_argument("files", nargs="+", metavar="FILE", help="CSV records of free decays")
    add_record_options(parser)
    parser.add_argument("--method", choices=METHOD_CHOICES, default="auto",
                        help="auto (default): matrix pencil then nonlinear fit, with log decrement "
                             "and half-power as cross-checks; or one method alone")
    parser.add_argument("--modes", default="auto", metavar="auto|N",
                        help="number of modes, or auto (default: every mode above the noise)")
    parser.add_argument("--confidence", type=float, default=0.95, metavar="P",
                        help="confidence level of the intervals as a probability (default 0.95)")
    parser.add_argument("--intervals", choices=("delta", "bootstrap"), default="delta",
                        help="interval method of the nonlinear fit (default delta)")
    parser.add_argument("--start", type=float, default=None, metavar="S", dest="start_s",
                        help="start of the decay segment in seconds (default: detected)")
    parser.add_argument("--end", type=float, default=None, metavar="S", dest="end_s",
                        help="end of the decay segment in seconds (default: detected)")
    add_output_options(parser)
    parser.set_defaults(func=run)


def _modes(text):
    text = str(text).strip().lower()
    if text == "auto":
        return "auto"
    if text.isdigit() and int(text) >= 1:
        return int(text)
    raise CliUsageError(f"--modes must be 'auto' or a whole number >= 1; got {text!r}")


def render_text(result) -> str:
    return result.summary(warnings=False)


def run(args) -> int:
    modes = _modes(args.modes)
    if not 0.0 < args.confidence < 1.0:
        hint = " (give a probability: 0.95, not 95)" if 1.0 < args.confidence <= 100.0 else ""
        raise CliUsageError(f"--confidence must lie strictly between 0 and 1; got {args.confidence!r}{hint}")
    if args.start_s is not None and args.end_s is not None and args.end_s <= args.start_s:
        raise CliUsageError(f"--end must be later than --start; got {args.start_s!r} and {args.end_s!r}")
    if args.sample_rate_hz is not None and not args.sample_rate_hz > 0:
        raise CliUsageError(f"--sample-rate must be > 0 Hz; got {args.sample_rate_hz!r}")
    from ..decay._analyse import analyse_decay

    if args.method in ("auto", "fit"):  # the fit's library loads while the first file is read
        from ._warmup import warm_up

        warm_up("lmfit")

    column = args.column
    if column is not None and column.strip().lstrip("-").isdigit():
        column = int(column)

    def analyse(path):
        return analyse_decay(path, column=column, method=args.method, modes=modes,
                             confidence=args.confidence, intervals=args.intervals,
                             start_s=args.start_s, end_s=args.end_s,
                             sample_rate_hz=args.sample_rate_hz, nan=args.nan)

    return run_per_file(args.files, analyse, render_text, json_output=args.json)
