"""``poleprint step``: process model, step figures and starting gains from a step test."""
from __future__ import annotations

from ._common import CliUsageError, add_output_options, run_per_file

MODELS = ("auto", "first-order", "two-lag", "underdamped", "integrating")


def register(subparsers, name, help_text):
    p = subparsers.add_parser(
        name, help=help_text, description=(
            "Fit first order, two lags, underdamped second order or integrator, each plus dead "
            "time, to a step test; report the model with intervals, the runner-up, the step "
            "figures (measured and model) and SIMC starting gains.  Starting gains are a "
            "starting point to review before use on a live plant; step tests on running plants "
            "need the site's approval."))
    p.add_argument("files", nargs="+", metavar="FILE", help="CSV records")
    p.add_argument("--output", required=True, metavar="COL", help="output (process variable) column")
    p.add_argument("--input", metavar="COL", help="input (actuator / controller output) column")
    p.add_argument("--step-time", type=float, metavar="S", dest="step_time_s",
                   help="step instant in seconds (required without --input; overrides detection)")
    p.add_argument("--step-size", type=float, metavar="U", dest="step_size",
                   help="step size in input units (required without --input)")
    p.add_argument("--model", choices=MODELS, default="auto", help="structure to fit (default auto)")
    p.add_argument("--confidence", type=float, default=0.95, metavar="P",
                   help="confidence level as a probability (default 0.95)")
    p.add_argument("--intervals", choices=("delta", "bootstrap"), default="delta",
                   help="delta method (default) or residual bootstrap")
    p.add_argument("--settling-band", type=float, default=0.02, metavar="F", dest="settling_band",
                   help="settling band as a fraction of the change (default 0.02)")
    p.add_argument("--tau-c", type=float, metavar="S", dest="tau_c",
                   help="closed-loop time constant for the SIMC gains (default: the dead time)")
    p.add_argument("--start", type=float, metavar="S", dest="start_s", help="analyse from this time")
    p.add_argument("--end", type=float, metavar="S", dest="end_s", help="analyse up to this time")
    p.add_argument("--sample-rate", metavar="HZ", type=float, dest="sample_rate_hz",
                   help="sample rate when the file has no time column")
    p.add_argument("--nan", choices=("raise", "omit"), default="raise",
                   help="missing output values: raise (default) or omit them from the fit")
    add_output_options(p)
    p.set_defaults(func=run)
    return p


def run(args) -> int:
    if args.input is None and (args.step_time_s is None or args.step_size is None):
        raise CliUsageError("step: give --input COL, or both --step-time S and --step-size U")
    if args.input is not None and args.step_size is not None:
        raise CliUsageError("step: --step-size applies only without --input (the size is read from the input)")
    from ..step import analyse_step

    def analyse(path):
        return analyse_step(path, output=args.output, input=args.input, step_time_s=args.step_time_s,
                            step_size=args.step_size, model=args.model, confidence=args.confidence,
                            intervals=args.intervals, settling_band=args.settling_band,
                            closed_loop_time_constant_s=args.tau_c, start_s=args.start_s,
                            end_s=args.end_s, sample_rate_hz=args.sample_rate_hz, nan=args.nan)

    return run_per_file(args.files, analyse, lambda r: r.summary(), json_output=args.json)
