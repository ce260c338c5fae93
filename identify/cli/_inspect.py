"""``poleprint inspect FILE...``: show what each CSV record holds.

Text: samples, duration, sample rate, start time, each channel with unit and range,
notes (what was converted or repaired on load) and warnings (clipping, quantisation).
With ``--json``: one line per file, the record's own ``summary()``.
"""
from __future__ import annotations

from ._common import add_output_options, add_record_options, fmt, run_per_file, table


def register(subparsers, name: str, help_text: str) -> None:
    parser = subparsers.add_parser(
        name, help=help_text, description=help_text[:1].upper() + help_text[1:] + ".")
    parser.add_argument("files", nargs="+", metavar="FILE", help="CSV records to inspect")
    add_record_options(parser, column=False)
    parser.add_argument("--time-column", metavar="C", default=None,
                        help="time column by name or 0-based index (default: found automatically)")
    add_output_options(parser)
    parser.set_defaults(func=run)


def _time_column(text):
    if text is None:
        return None
    text = str(text).strip()
    if text.lower() in ("none", "false"):
        return False
    return int(text) if text.lstrip("-").isdigit() else text


def render_text(record) -> str:
    """The human-readable block for one record."""
    s = record.summary()
    lines = [
        f"{s['source']}",
        f"  samples      {s['samples']}",
        f"  duration     {fmt(s['duration_s'], 6, 's')}",
        f"  sample rate  {fmt(s['sample_rate_hz'], 6, 'Hz')}",
        f"  start time   {fmt(s['start_s'], 6, 's')}",
        f"  sha256       {s['sha256']}",
    ]
    rows = [(c["name"], c["unit"] or "-", fmt(c["min"], 6), fmt(c["max"], 6), c["missing"])
            for c in s["channels"]]
    lines.append("")
    lines.extend("  " + row for row in table(("channel", "unit", "min", "max", "missing"),
                                             rows).splitlines())
    # warnings are printed once, on stderr, by the shared per-file loop
    for title, key in (("metadata", "metadata"), ("notes", "notes")):
        items = s[key]
        if not items:
            continue
        lines.append(f"  {title}:")
        if isinstance(items, dict):
            lines.extend(f"    {k}: {v}" for k, v in items.items())
        else:
            lines.extend(f"    - {item}" for item in items)
    return "\n".join(lines)


def run(args) -> int:
    from .._csv import read_record

    time_column = _time_column(getattr(args, "time_column", None))

    def analyse(path):
        return read_record(path, sample_rate_hz=args.sample_rate_hz, time_column=time_column,
                           nan=args.nan)

    return run_per_file(args.files, analyse, render_text, json_output=args.json)
