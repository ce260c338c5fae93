"""``poleprint demo``: every job on the bundled records, one report, a short summary."""
from __future__ import annotations

import argparse
import sys
from pathlib import Path

from ._common import EXIT_OK, EXIT_PARTIAL, EXIT_USAGE, fail_line, fmt, fmt_interval

DESCRIPTION = """\
Run the decay, step and ARX jobs on the records bundled with poleprint (invented
demonstration data, see datasets/README.md), add the demo rig's monthly bump tests to a
history database and trend them, then write one self-contained HTML report and print
where it is with a short summary.  Estimates, not clearances.
"""

#: (file under datasets/, job, options)
DEMO_RECORDS = (
    ("bracket_ringdown.csv", "decay", {}),
    ("plate_ringdown_semicolon.csv", "decay", {}),
    ("valve_step.csv", "step", {"input": "valve_cmd", "output": "flow"}),
    ("actuator_step.csv", "step", {"input": "command", "output": "position"}),
    ("motor_prbs.csv", "arx", {"input": "drive", "output": "speed", "refine": "iv"}),
)
DEMO_RIG = "fulmar"
#: the history needs the answer only: the decay job without its cross-check methods
HISTORY_OPTIONS = {"method": "fit"}
DEMO_RIG_FOLDER = ("history", "fulmar")


def datasets_dir() -> Path:
    """The bundled records: ``datasets/`` beside the ``identify`` package."""
    import identify

    return Path(identify.__file__).resolve().parent.parent / "datasets"


def register(subparsers, name, help_text):
    parser = subparsers.add_parser(name, help=help_text, description=DESCRIPTION,
                                   formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--out", metavar="DIR", default="poleprint-demo",
                        help="folder for the report and the demo history (default: ./poleprint-demo)")
    parser.set_defaults(func=run)


def summary_line(name, job, result) -> str:
    """One line: the file, the job and its poles with intervals and units."""
    parts = []
    for p in getattr(result, "poles", ()) or ():
        ci = p.ci
        if p.is_real:
            tau = p.time_constant_s
            parts.append(f"real pole, time constant {fmt(tau, 4)} s" if tau is not None
                         else f"real pole at {fmt(p.real, 4)} 1/s")
        else:
            parts.append(f"{fmt(p.natural_frequency_hz, 5)} Hz "
                         f"{fmt_interval(ci.natural_frequency_hz if ci else None, 5)}, "
                         f"ζ {fmt(p.damping_ratio, 4)} {fmt_interval(ci.damping_ratio if ci else None, 4)}")
    model = getattr(result, "model", None)
    extra = ""
    gain = getattr(model, "gain", None) if model is not None else None
    dead = getattr(model, "dead_time_s", None) if model is not None else None
    if gain is not None and dead is not None:
        unit = getattr(model, "gain_unit", "") or ""
        extra = f"; gain {fmt(gain, 4, unit)}, dead time {fmt(dead, 3)} s"
    n_warn = len(getattr(result, "warnings", ()) or ())
    warn = f"; {n_warn} warning(s)" if n_warn else ""
    return f"  {name} ({job}): " + ("; ".join(parts) or "no pole") + extra + warn


def _history(out_dir: Path, data: Path):
    """Add the demo rig's tests to a history database and trend them (None if unavailable)."""
    try:
        from ..history import HistoryStore, analyse_trend
    except ImportError:
        return None, "history: not available in this installation"
    from ..check import run_job

    folder = data.joinpath(*DEMO_RIG_FOLDER)
    files = sorted(folder.glob("*.csv"))
    if not files:
        return None, f"history: no demo records in {folder}"
    db = out_dir / "demo-history.sqlite"
    with HistoryStore(db) as store:
        for f in files:
            store.add(DEMO_RIG, f, analyse=lambda p: run_job("decay", p, **HISTORY_OPTIONS),
                      job="decay")
        trend = analyse_trend(store.get(DEMO_RIG), rig=DEMO_RIG, threshold_damping=0.01)
    return trend, (f"history: {len(files)} monthly tests of rig '{DEMO_RIG}' (decay job, "
                   f"method fit) in {db}")


def run(args) -> int:
    from .._errors import PoleprintError
    from ..report import write_report
    from ._report import analyse_files

    data = datasets_dir()
    if not data.is_dir():
        fail_line(f"the bundled records were not found at {data} (run from a source checkout)")
        return EXIT_USAGE
    out_dir = Path(args.out)
    try:
        out_dir.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        fail_line(f"{out_dir}: cannot create the folder: {exc.strerror or exc}")
        return EXIT_USAGE
    results, failures, lines = [], [], []
    for name, job, options in DEMO_RECORDS:
        done, failed = analyse_files(job, [str(data / name)], options)
        results += done
        failures += failed
        if done:
            lines.append(summary_line(name, job, done[0]))
    trend, note = None, None
    try:
        trend, note = _history(out_dir, data)
    except PoleprintError as exc:
        fail_line(f"history: {exc}")
        failures.append(("history", str(exc)))
    if not results:
        fail_line("no demo record gave a result; no report written")
        return EXIT_USAGE
    report = write_report(results, out_dir / "report.html", title="Poleprint demonstration",
                          history=[trend] if trend is not None else None, failures=failures)
    print(f"poleprint demo: report written to {report.path.resolve()}")
    print(f"{len(results)} record(s) analysed, {len(report.figures)} figure(s):")
    for line in lines:
        print(line)
    if note:
        print(f"  {note}")
    if trend is not None:
        modes = [m for m in trend.to_dict().get("modes", []) if m.get("damping_ratio_slope_per_day")]
        modes.sort(key=lambda m: (m.get("level") in ("steady", "increasing"), m.get("natural_frequency_hz") or 0))
        if len(modes) > 6:
            print(f"    ({len(modes) - 6} more tracked mode(s) in the report)")
        for m in modes[:6]:
            slope = m.get("damping_ratio_slope_per_day") or {}
            value = slope.get("value") if isinstance(slope, dict) else slope
            cross = m.get("threshold_crossing")
            when = f", ζ = 0.01 projected {cross.get('date')} (indicative)" if isinstance(cross, dict) else ""
            print(f"    {fmt(m.get('natural_frequency_hz'), 5)} Hz: ζ slope {fmt(value, 3)} per day, "
                  f"{m.get('level')}{when}")
    print("Estimates, not clearances: defer to the site's procedures, local codes and "
          "licensed engineers.", file=sys.stdout)
    return EXIT_OK if not failures else EXIT_PARTIAL
