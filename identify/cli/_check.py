"""``poleprint check``: re-run a saved result's job on new records; how did each pole move?"""
from __future__ import annotations

import argparse

from ._common import EXIT_USAGE, add_output_options, fail_line, fmt, fmt_interval, run_per_file, table

DESCRIPTION = """\
Check new records against a saved result (today's test against last month's model).

RESULT.json is one result as written by a job's --json output.  Each FILE is analysed
by the same job with the saved settings; its poles are paired with the saved ones by
natural frequency, and for each pair the change in natural frequency and damping ratio
is shown with both intervals and a z-test on the difference (the two standard errors
read back from the intervals).  "moved" means the change is larger than the intervals
explain at the saved confidence level.  The new model is also validated against the
new record.  Estimates, not clearances.
"""


def register(subparsers, name, help_text):
    parser = subparsers.add_parser(name, help=help_text, description=DESCRIPTION,
                                   formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("files", nargs="+", metavar="FILE", help="new record files (CSV)")
    parser.add_argument("--model", required=True, metavar="RESULT.json",
                        help="the saved result (a job's --json output for one file)")
    parser.add_argument("--column", metavar="C", help="override the saved channel (decay)")
    parser.add_argument("--input", metavar="COL", help="override the saved input channel (step/arx)")
    parser.add_argument("--output", metavar="COL", help="override the saved output channel (step/arx)")
    parser.add_argument("--confidence", type=float, metavar="P",
                        help="level of the move tests (default: the saved intervals' level)")
    parser.add_argument("--match-tolerance", type=float, default=0.2, metavar="FRACTION",
                        help="largest relative frequency difference for two poles to be the "
                             "same mode (default 0.2)")
    add_output_options(parser)
    parser.set_defaults(func=run)


def render_text(check) -> str:
    lines = [f"{check.source} against {check.saved_source or 'the saved result'} "
             f"({check.job} job, tests at {check.confidence:.0%})"]
    rows = []
    for i, c in enumerate(check.changes, 1):
        if c.status != "matched":
            pole = c.saved or c.new
            rows.append([i, fmt(pole.natural_frequency_hz, 6) + " Hz", c.status, "", "", "", "", ""])
            continue
        for q in c.quantities:
            unit = " Hz" if q.name.endswith("_hz") else ""
            name = "fn" if q.name == "natural_frequency_hz" else "zeta"
            verdict = ("MOVED" if q.moved else "within intervals" if q.moved is not None
                       else "no interval")
            rows.append([i, name, fmt(q.saved, 6) + unit + " " + fmt_interval(q.saved_ci, 5),
                         fmt(q.new, 6) + unit + " " + fmt_interval(q.new_ci, 5),
                         fmt(q.change_percent, 3, "%"), fmt(q.z, 3), fmt(q.p_value, 3), verdict])
    if rows:
        lines.append(table(["pole", "quantity", "saved [interval]", "new [interval]", "change",
                            "z", "p", "result"], rows))
    else:
        lines.append("no pole in either result")
    v = check.validation
    if v is not None:
        unit = f" {v.unit}" if v.unit else ""
        lines.append(f"validation: fit {fmt(v.fit_percent, 4)} %, residual RMS "
                     f"{fmt(v.residual_rms, 3)}{unit}, Ljung-Box p {fmt(v.ljung_box_p_value, 3)}: {v.verdict}")
    lines.append("overall: " + ("a pole moved more than the intervals explain (or went missing)"
                                if check.moved else "no pole moved more than the intervals explain"))
    lines.append("caution: estimates, not clearances; decisions rest with the site's procedures "
                 "and licensed engineers.")
    return "\n".join(lines)


def run(args) -> int:
    from .._errors import PoleprintError
    from ..check import check_against, load_saved_result

    try:
        saved = load_saved_result(args.model)
    except PoleprintError as exc:
        fail_line(str(exc))
        return EXIT_USAGE
    options = {"column": args.column, "input": args.input, "output": args.output}
    confidence = args.confidence
    tolerance = args.match_tolerance

    def analyse(path):
        return check_against(saved, path, confidence=confidence, match_tolerance=tolerance,
                             **options)

    return run_per_file(args.files, analyse, render_text, json_output=args.json)
