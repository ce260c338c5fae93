"""``poleprint history``: store each test of a rig and follow its modes over time."""
from __future__ import annotations

import argparse
import os

from ._common import (EXIT_OK, EXIT_USAGE, CliUsageError, fail_line, fmt, fmt_interval,
                      run_per_file, table, warn_line)

DEFAULT_DB = "poleprint-history.sqlite"  # same as identify.history.DEFAULT_DB (kept light here)

DESCRIPTION = """\
Keep every bump or step test of a rig in one SQLite file and follow each mode's
damping and frequency over time, with intervals.

  add     analyse files and store the results (re-adding a file is a no-op with a note)
  list    the rigs in the database
  show    the stored tests of one rig
  trend   per-mode slopes, step changes and the projected date at which the damping
          ratio reaches a threshold (indicative only)
  export  one rig's tests as CSV

Trends are estimates, not clearances: temperature, excitation amplitude and
configuration move damping too, so compare like with like (filter with --tag).
"""


def _db_option(parser, *, top: bool) -> None:
    parser.add_argument("--db", metavar="PATH", default=DEFAULT_DB if top else argparse.SUPPRESS,
                        help=f"history database file (default: {DEFAULT_DB} in the working folder)")


def _tag_option(parser, help_text: str) -> None:
    parser.add_argument("--tag", metavar="KEY=VALUE", action="append", default=[], help=help_text)


def register(subparsers, name, help_text):
    parser = subparsers.add_parser(name, help=help_text, description=DESCRIPTION,
                                   formatter_class=argparse.RawDescriptionHelpFormatter)
    _db_option(parser, top=True)
    parser.set_defaults(func=run, history_command=None)
    sub = parser.add_subparsers(dest="history_command", metavar="ACTION")

    add = sub.add_parser("add", help="analyse files and store the results for a rig",
                         description="Analyse each FILE with the chosen job and store the result. "
                                     "Test time: --when, else the record's metadata (date, test date, "
                                     "recorded, timestamp), else the file's modification time; the "
                                     "stored test says which.")
    add.add_argument("files", nargs="+", metavar="FILE", help="record files (CSV)")
    add.add_argument("--rig", required=True, metavar="NAME", help="rig name")
    add.add_argument("--job", choices=("decay", "step"), default="decay",
                     help="free-decay (bump) test or step test (default: decay)")
    add.add_argument("--column", metavar="C", help="decay job: channel to analyse (name or 0-based index)")
    add.add_argument("--output", metavar="COL", help="step job: the response channel (required for step)")
    add.add_argument("--input", metavar="COL", help="step job: the input channel, if recorded")
    add.add_argument("--sample-rate", metavar="HZ", type=float, dest="sample_rate_hz",
                     help="sample rate when the file has no time column")
    _tag_option(add, "tag stored with each test, e.g. temperature=20C (repeatable)")
    add.add_argument("--when", metavar="ISO-8601", help="test time, e.g. 2026-03-01T09:30Z "
                     "(no zone means UTC); applies to every FILE")
    add.add_argument("--json", action="store_true", help="one JSON object per file, one per line")
    _db_option(add, top=False)
    add.set_defaults(history_command="add")

    lst = sub.add_parser("list", help="the rigs in the database")
    lst.add_argument("--json", action="store_true", help="print JSON")
    _db_option(lst, top=False)
    lst.set_defaults(history_command="list")

    show = sub.add_parser("show", help="the stored tests of one rig")
    show.add_argument("--rig", required=True, metavar="NAME", help="rig name")
    _tag_option(show, "show only tests with this tag (repeatable)")
    show.add_argument("--json", action="store_true", help="print JSON")
    _db_option(show, top=False)
    show.set_defaults(history_command="show")

    trend = sub.add_parser("trend", help="per-mode damping trend and projected threshold crossing")
    trend.add_argument("--rig", required=True, metavar="NAME", help="rig name")
    trend.add_argument("--threshold-damping", type=float, default=0.01, metavar="ZETA",
                       help="damping ratio whose projected crossing is reported (default 0.01)")
    _tag_option(trend, "use only tests with this tag, to compare like with like (repeatable)")
    trend.add_argument("--confidence", type=float, default=0.95, metavar="P",
                       help="interval level as a probability (default 0.95)")
    trend.add_argument("--seed", type=int, default=0, help="seed of the step-change test (default 0)")
    trend.add_argument("--plot", metavar="PNG", help="also write the damping-trend plot to this PNG file")
    trend.add_argument("--json", action="store_true", help="print the trend as one JSON object")
    _db_option(trend, top=False)
    trend.set_defaults(history_command="trend")

    export = sub.add_parser("export", help="one rig's tests as CSV (one row per pole)")
    export.add_argument("--rig", required=True, metavar="NAME", help="rig name")
    export.add_argument("--csv", required=True, metavar="FILE", help="CSV file to write")
    _tag_option(export, "export only tests with this tag (repeatable)")
    _db_option(export, top=False)
    export.set_defaults(history_command="export")
    return parser


def _parse_tags(items) -> dict:
    tags = {}
    for item in items or ():
        key, sep, value = item.partition("=")
        if not sep or not key.strip():
            raise CliUsageError(f"--tag must be KEY=VALUE (e.g. temperature=20C); got {item!r}")
        tags[key.strip()] = value.strip()
    return tags


def run(args) -> int:
    from .._errors import PoleprintError

    action = getattr(args, "history_command", None)
    if not action:
        fail_line("history needs an action: add, list, show, trend or export (see poleprint history -h)")
        return EXIT_USAGE
    try:
        return {"add": _add, "list": _list, "show": _show, "trend": _trend, "export": _export}[action](args)
    except PoleprintError as exc:
        fail_line(str(exc))
        return EXIT_USAGE


# -- add ------------------------------------------------------------------------------
def _analyser(args):
    kwargs = {}
    if args.sample_rate_hz is not None:
        kwargs["sample_rate_hz"] = args.sample_rate_hz
    if args.job == "decay":
        if args.output or args.input:
            raise CliUsageError("--input/--output belong to --job step; use --column with --job decay")
        from ..decay import analyse_decay

        if args.column is not None:
            kwargs["column"] = args.column
        return lambda path: analyse_decay(path, **kwargs)
    if args.column is not None:
        raise CliUsageError("--column belongs to --job decay; use --output (and --input) with --job step")
    if not args.output:
        raise CliUsageError("--job step needs --output COL (and --input COL if the input was recorded)")
    from ..step import analyse_step

    if args.input:
        kwargs["input"] = args.input
    return lambda path: analyse_step(path, output=args.output, **kwargs)


def _metadata_reader(sample_rate_hz):
    def read(path, result):
        from .._errors import PoleprintError

        for holder in (result, getattr(result, "record", None)):
            meta = getattr(holder, "metadata", None)
            if isinstance(meta, dict):
                return meta
        try:
            from .._csv import read_record

            return dict(read_record(path, sample_rate_hz=sample_rate_hz).metadata)
        except (ImportError, PoleprintError):
            return {}

    return read


def _render_added(outcome) -> str:
    t = outcome.test
    if not outcome.added:
        return f"note: {outcome.note}"
    poles = "; ".join(f"{fmt(p.natural_frequency_hz)} Hz ζ {fmt(p.damping_ratio, 3)}"
                      + (f" {fmt_interval(p.ci.damping_ratio, 3)}" if p.ci else "")
                      for p in t.poles) or "no pole"
    return (f"added: {t.source} -> rig '{t.rig}' test #{t.id}, {t.test_time} "
            f"(time from {t.time_source}); {t.job}: {poles}")


def _add(args) -> int:
    from ..history import HistoryStore, parse_time

    tags = _parse_tags(args.tag)
    when = None
    if args.when is not None:
        from .._errors import PoleprintError

        try:
            when = parse_time(args.when, name="--when")
        except PoleprintError as exc:
            raise CliUsageError(str(exc)) from None
    analyse = _analyser(args)
    if when is not None and len(args.files) > 1:
        warn_line("--when", f"the same test time {when.isoformat()} is stored for all {len(args.files)} files")
    with HistoryStore(args.db, create=True) as store:
        return run_per_file(args.files,
                            lambda path: store.add(args.rig, path, analyse=analyse, job=args.job,
                                                   when=when, tags=tags,
                                                   read_metadata=_metadata_reader(args.sample_rate_hz)),
                            _render_added, json_output=args.json)


# -- list / show ------------------------------------------------------------------------
def _list(args) -> int:
    from .._jsonable import dumps_line
    from ..history import HistoryStore

    with HistoryStore(args.db, create=False) as store:
        rigs = store.rigs()
    if args.json:
        print(dumps_line({"db": args.db, "rigs": [r.to_dict() for r in rigs]}))
        return EXIT_OK
    if not rigs:
        print(f"{args.db}: no tests stored yet")
        return EXIT_OK
    print(table(["rig", "tests", "first test", "last test"],
                [[r.rig, r.n_tests, r.first_test_time[:10], r.last_test_time[:10]] for r in rigs]))
    return EXIT_OK


def _show(args) -> int:
    from .._jsonable import dumps_line
    from ..history import HistoryStore

    tags = _parse_tags(args.tag)
    with HistoryStore(args.db, create=False) as store:
        tests = store.get(args.rig, tags=tags)
    if args.json:
        print(dumps_line({"rig": args.rig, "tags": tags, "tests": [t.to_dict() for t in tests]}))
        return EXIT_OK
    rows = []
    for t in tests:
        poles = [f"{fmt(p.natural_frequency_hz)} Hz, ζ {fmt(p.damping_ratio, 3)} "
                 f"{fmt_interval(p.ci.damping_ratio, 3) if p.ci else ''}".rstrip() for p in t.poles] or ["-"]
        tag_text = ",".join(f"{k}={v}" for k, v in sorted(t.tags.items())) or "-"
        for i, text in enumerate(poles):
            rows.append([f"#{t.id}", t.test_time[:16].replace("T", " "), t.time_source, t.job,
                         os.path.basename(t.source), tag_text, text] if i == 0 else
                        ["", "", "", "", "", "", text])
    print(f"rig '{args.rig}': {len(tests)} test(s)" + (f" with tags {tags}" if tags else ""))
    if rows:
        print(table(["test", "time (UTC)", "time from", "job", "file", "tags", "poles"], rows))
    return EXIT_OK


# -- trend --------------------------------------------------------------------------------
def _write_atomically(path, data: bytes) -> None:
    from .._atomic import write_atomically
    from .._errors import HistoryError

    try:
        write_atomically(path, data)
    except OSError as exc:
        raise HistoryError(f"cannot write the file ({exc.strerror or exc})", path) from None


def _render_trend(trend) -> str:
    pct = f"{trend.confidence * 100:g} %"
    lines = []
    if not trend.modes:
        lines.append(f"rig '{trend.rig}': no mode to trend ({trend.n_tests} test(s) after the tag filter)")
    else:
        lines.append(f"rig '{trend.rig}': {trend.n_tests} test(s) from {trend.origin_time[:10]}; "
                     f"threshold ζ = {trend.threshold_damping:g}; {pct} intervals")
    principal = trend.principal_modes
    names = {m.mode for m in principal}
    others = [m for m in trend.modes if m.mode not in names]
    rows = []
    for m in principal:
        fit = m.damping_fit
        slope = "-" if fit is None else (f"{fmt(fit.slope_per_day * 365.25, 3)} "
                                         f"{fmt_interval([v * 365.25 for v in fit.slope_ci], 3)}")
        cross = m.threshold_crossing
        cross_text = "-" if cross is None else f"{cross['date']} [{cross['ci'][0]}, {cross['ci'][1]}]"
        rows.append([m.mode, fmt(m.natural_frequency_hz), len(m.test_ids),
                     fmt(m.damping_ratio[-1], 3) if m.damping_ratio else "-", slope, m.level, cross_text])
    if rows:
        lines.append(table(["mode", "fn (Hz)", "tests", "latest ζ", f"ζ change per year [{pct}]",
                            "level", "projected crossing (indicative)"], rows))
    if others:
        lines.append("other modes (found in fewer tests; see --json): "
                     + ", ".join(f"{fmt(m.natural_frequency_hz)} Hz in {len(m.test_ids)} test(s)" for m in others))
    for m in principal:
        step = m.step_change or {}
        if step.get("detected"):
            lines.append(f"step change: {m.mode} between {step['between'][0]} and {step['between'][1]}: "
                         f"ζ shifted by {fmt(step['size'], 3)} {fmt_interval(step['size_ci'], 3)} "
                         f"(p = {fmt(step['p_value'], 2)}); the straight-line trend spans it")
        elif step.get("tested"):
            lines.append(f"step change: {m.mode}: none found (p = {fmt(step['p_value'], 2)})")
        if m.frequency_fit is not None:
            f = m.frequency_fit
            lines.append(f"frequency: {m.mode}: {fmt(f.slope_per_day * 365.25, 3)} Hz per year "
                         f"{fmt_interval([v * 365.25 for v in f.slope_ci], 3)}")
    # events of the principal modes; of the others only those still seen in the latest test
    latest = max(((t, i) for m in trend.modes for t, i in zip(m.test_times, m.test_ids)), default=(None, None))
    last_id = latest[1]
    keep = names | {m.mode for m in others if m.test_ids and m.test_ids[-1] == last_id}
    for e in trend.events:
        label = e.split(": ", 1)[1].split(" (", 1)[0]
        if label in keep:
            lines.append(f"modes: {e}")
    hidden = sum(1 for e in trend.events if e.split(": ", 1)[1].split(" (", 1)[0] not in keep)
    if hidden:
        lines.append(f"modes: {hidden} more appear/missing/disappear line(s) for the other modes (see --json)")
    lines.append("cautions:")
    lines.extend(f"  - {c}" for c in trend.cautions)
    return "\n".join(lines)


def _trend(args) -> int:
    from .._jsonable import dumps_line
    from ..history import HistoryStore, analyse_trend

    tags = _parse_tags(args.tag)
    with HistoryStore(args.db, create=False) as store:
        tests = store.get(args.rig)
    trend = analyse_trend(tests, rig=args.rig, threshold_damping=args.threshold_damping,
                          confidence=args.confidence, tags=tags, seed=args.seed)
    if args.plot:
        from ..plots._style import figure_to_png
        from ..plots._trend import plot_damping_trend

        _write_atomically(args.plot, figure_to_png(plot_damping_trend(trend)))
    if args.json:
        print(dumps_line(trend))
    else:
        print(_render_trend(trend))
        if args.plot:
            print(f"plot: {args.plot}")
    for w in trend.warnings:
        warn_line(args.rig, w)
    if not trend.modes:
        return EXIT_USAGE
    return EXIT_OK


# -- export -------------------------------------------------------------------------------
def _export(args) -> int:
    from ..history import HistoryStore

    tags = _parse_tags(args.tag)
    with HistoryStore(args.db, create=False) as store:
        n = store.export_csv(args.rig, args.csv, tags=tags)
    print(f"wrote {n} row(s) for rig '{args.rig}' to {args.csv}")
    return EXIT_OK

