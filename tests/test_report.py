"""The self-contained HTML report: parses, embeds every image, no external URL, shows every
warning, the cautions, the settings and the version."""
import base64
import re
from dataclasses import dataclass, field
from html.parser import HTMLParser

import numpy as np
import pytest

from identify import __version__
from identify._response import ModelResponse
from identify.decay._common import MethodEstimate
from identify.poles import pole_with_delta_intervals
from identify.report import CAUTIONS, write_report


@dataclass(frozen=True)
class FakeDecay:
    """Stands in for the decay job's result (same field names, synthetic numbers)."""
    source: str
    sha256: str
    poles: tuple
    warnings: tuple
    settings: dict
    response: object
    segment: dict
    methods: dict
    order_scan: tuple
    fit: dict = field(default_factory=dict)
    job: str = "decay"


@dataclass(frozen=True)
class FakeStep:
    source: str
    sha256: str
    poles: tuple
    warnings: tuple
    settings: dict
    response: object
    metrics: dict
    model: dict
    tuning: dict
    job: str = "step"


def fake_decay(seed=0, warnings=()):
    rng = np.random.default_rng(seed)
    t = np.arange(1500) / 1000
    s = complex(-3.0, 2 * np.pi * 20.0)
    y = np.exp(s.real * t) * np.cos(s.imag * t)
    resp = ModelResponse(t, y + rng.normal(0, 0.01, t.size), y, unit="m/s^2", label="fitted decay")
    p = pole_with_delta_intervals(s, np.diag([0.01, 0.01]))
    pk_t = np.arange(30) / 20
    est = MethodEstimate("logdec", (p,), (), {"peak_times_s": pk_t, "peak_amplitudes": np.exp(-3 * pk_t),
                                              "used": [True] * 25 + [False] * 5})
    return FakeDecay(f"/data/rig-{seed}.csv", f"{seed:064x}", (p,), tuple(warnings),
                     {"confidence": 0.95, "method": "auto", "column": "accel"}, resp,
                     {"start_s": 0.0, "end_s": 1.5, "trigger_s": 0.0},
                     {"logdec": est, "pencil": MethodEstimate("pencil", (p,))},
                     tuple({"order": n, "poles": [[-3.0, 125.66], [-80.0, 40.0 * n]]} for n in range(2, 8)),
                     {"noise_rms": 0.01})


def fake_step(warnings=()):
    t = np.arange(0, 60, 0.1)
    y = np.where(t >= 5, 1 - np.exp(-(t - 5) / 7.5), 0.0) * 2.35
    u = (t >= 5).astype(float)
    resp = ModelResponse(t, y + np.random.default_rng(1).normal(0, 0.02, t.size), y, input=u,
                         unit="L/min", label="first order plus dead time")
    p = pole_with_delta_intervals(complex(-1 / 7.5, 0.0), [[1e-5]])
    return FakeStep("/data/valve.csv", "f" * 64, (p,), tuple(warnings), {"model": "auto"}, resp,
                    {"rise_time_s": 16.5, "overshoot_percent": 0.0, "final_value": 2.35,
                     "step_time_s": 5.0, "settling_time_s": 29.3},
                    {"structure": "first-order", "gain": 2.35, "dead_time_s": 0.0,
                     "time_constants_s": [7.5], "ci": {"gain": [2.3, 2.4], "time_constants_s": [[7.2, 7.8]]}},
                    {"kc": 3.2, "ti_s": 7.5})


class _Page(HTMLParser):
    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack, self.imgs, self.text, self.errors = [], [], [], []
        self.tags = set()

    def handle_starttag(self, tag, attrs):
        self.tags.add(tag)
        if tag == "img":
            self.imgs.append(dict(attrs))
        elif tag not in ("meta", "br"):
            self.stack.append(tag)

    def handle_endtag(self, tag):
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"unbalanced </{tag}> with {self.stack[-3:]}")
        else:
            self.stack.pop()

    def handle_data(self, data):
        self.text.append(data)


def _parse(path):
    text = path.read_text(encoding="utf-8")
    page = _Page()
    page.feed(text)
    page.close()
    return text, page, " ".join(" ".join(page.text).split())


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("report")
    results = [fake_decay(0, ["few cycles: only 2.1 cycles above the noise floor (5 or more advised)",
                              "odd <chars> & 'quotes': kept as text"]),
               fake_step(["not settled: the output still moves at the end (final value extrapolated)"])]
    out = write_report(results, tmp / "sub" / "report.html", plots_dir=tmp / "png",
                       title="Test report", failures=[("/data/bad.csv", "no oscillation above the noise")])
    return tmp, results, out


def test_report_parses_and_is_balanced(report):
    tmp, results, out = report
    html_text, page, _ = _parse(out.path)
    assert html_text.startswith("<!DOCTYPE html>")
    assert not page.errors and not page.stack
    assert {"html", "head", "style", "body", "table", "figure"} <= page.tags
    assert not {"script", "link", "iframe", "object"} & page.tags
    assert out.records == 2


def test_every_figure_is_embedded_as_png(report):
    tmp, results, out = report
    _, page, _ = _parse(out.path)
    srcs = [img["src"] for img in page.imgs]
    assert len(srcs) == len(out.figures) >= 7  # decay: 5 figures, step: 3
    for src in srcs:
        assert src.startswith("data:image/png;base64,")
        assert base64.b64decode(src.split(",", 1)[1])[:8] == b"\x89PNG\r\n\x1a\n"
    kinds = {f.split(": ")[1] for f in out.figures}
    assert kinds == {"record", "residuals", "splane", "lnamp", "stability", "step"}
    # --plots: the same figures as files
    assert len(out.plot_files) == len(out.figures)
    assert all(p.read_bytes()[:4] == b"\x89PNG" for p in out.plot_files)


def test_no_external_url_anywhere(report):
    tmp, results, out = report
    raw = out.path.read_bytes()
    assert b"http://" not in raw and b"https://" not in raw
    assert not re.search(rb"(src|href)=\"(?!data:|#)", raw)


def test_every_warning_caution_setting_and_the_version_are_shown(report):
    tmp, results, out = report
    _, _, text = _parse(out.path)
    for r in results:
        for w in r.warnings:
            assert w in text
    for c in CAUTIONS:
        assert c in text
    assert "/data/bad.csv: not analysed: no oscillation above the noise" in text
    assert f"poleprint {__version__}" in text
    assert '"auto"' in text and "column" in text  # settings table
    assert "starting points to review" in text
    assert not re.search(r"\b(safe|cleared|stable)\b", text, re.IGNORECASE)


def test_summary_table_shows_intervals_and_units(report):
    tmp, results, out = report
    _, _, text = _parse(out.path)
    p = results[0].poles[0]
    assert "natural frequency (Hz)" in text and "damping ratio ζ (-)" in text
    assert f"[{p.ci.natural_frequency_hz[0]:.5g}, {p.ci.natural_frequency_hz[1]:.5g}]" in text
    assert "95% interval" in text
    assert "time constant τ (s)" in text and "7.5" in text
    assert "L/min" in text and "m/s^2" in text
    assert "the model explains the record" in text or "structure left in the residuals" in text


def test_written_atomically_without_leftovers(report):
    tmp, results, out = report
    assert [p.name for p in out.path.parent.iterdir()] == ["report.html"]


def test_result_without_optional_fields_loses_only_those_plots(tmp_path):
    @dataclass(frozen=True)
    class Bare:
        source: str
        poles: tuple
        warnings: tuple = ()
        settings: dict = field(default_factory=dict)

    bare = Bare("x.csv", (pole_with_delta_intervals(complex(-1, 10), np.eye(2) * 1e-3),))
    out = write_report([bare], tmp_path / "r.html")
    assert out.figures == ("x.csv: splane",)
    _, page, text = _parse(out.path)
    assert len(page.imgs) == 1 and "No warning." in text


def test_history_section_with_trend_plot(tmp_path):
    from identify import history

    with history.HistoryStore(tmp_path / "h.sqlite") as store:
        rng = np.random.default_rng(7)
        for k in range(6):
            zeta = 0.03 - 0.002 * k + rng.normal(0, 2e-4)
            wn = 2 * np.pi * 27.4
            s = complex(-zeta * wn, wn * np.sqrt(1 - zeta ** 2))
            r = fake_decay(k)
            r = FakeDecay(r.source, r.sha256, (pole_with_delta_intervals(s, np.diag([0.01, 0.01])),),
                          (), r.settings, r.response, r.segment, r.methods, r.order_scan)
            store.add_result("demo", r, job="decay", test_time=f"2025-{k + 1:02d}-10T09:00:00",
                             time_source="test")
        trend = history.analyse_trend(store.get("demo"), rig="demo", n_simulations=99)
    out = write_report([], tmp_path / "r.html", history=[trend])
    _, page, text = _parse(out.path)
    assert "History and damping trends" in text and "Rig demo" in text
    assert out.figures == ("history demo: trend",)
    assert len(page.imgs) == 1
    for c in trend.cautions:
        assert c in text
    assert trend.modes[0].level in text


# -- the command line (job calls replaced by synthetic results: the plumbing is tested) ---
def _parser():
    import argparse

    from identify.cli import _report

    parser = argparse.ArgumentParser(prog="poleprint")
    _report.register(parser.add_subparsers(dest="command"), "report", "report")
    return parser


def test_report_command_writes_report_plots_and_lists_failures(tmp_path, monkeypatch, capsys):
    import identify.check
    from identify import IdentificationError

    calls = []

    def fake_run_job(job, path, **options):
        calls.append((job, path, options))
        if path.endswith("bad.csv"):
            raise IdentificationError("no step found in the input channel")
        return fake_step(["step small: the step is 3 times the noise band (4 or more advised)"])

    monkeypatch.setattr(identify.check, "run_job", fake_run_job)
    out = tmp_path / "r.html"
    args = _parser().parse_args(["report", "a.csv", "bad.csv", "-o", str(out), "--input", "u",
                                 "--output", "y", "--plots", str(tmp_path / "png")])
    assert args.func(args) == 3  # some files gave a result, some did not
    assert [c[0] for c in calls] == ["step", "step"]  # --input/--output → step job
    assert calls[0][2]["input"] == "u" and calls[0][2]["output"] == "y"
    captured = capsys.readouterr()
    assert "wrote" in captured.out and "3 figure(s)" in captured.out
    assert "poleprint: error: bad.csv: no step found in the input channel" in captured.err
    _, page, text = _parse(out)
    assert "bad.csv: not analysed: no step found in the input channel" in text
    assert "step small: the step is 3 times the noise band (4 or more advised)" in text
    assert len(list((tmp_path / "png").glob("*.png"))) == len(page.imgs) == 3


def test_report_command_without_any_result_writes_nothing(tmp_path, monkeypatch, capsys):
    import identify.check
    from identify import RecordError

    def failing(job, path, **options):
        raise RecordError("cannot read the file")

    monkeypatch.setattr(identify.check, "run_job", failing)
    out = tmp_path / "r.html"
    args = _parser().parse_args(["report", "x.csv", "-o", str(out), "--job", "arx"])
    assert args.func(args) == 2
    assert not out.exists()
    assert "no report written" in capsys.readouterr().err


def test_run_job_passes_only_the_options_a_job_accepts():
    from identify.check._jobs import accepted_options, job_of_saved

    def analyse(record, *, column=None, confidence=0.95):
        return record

    assert accepted_options(analyse, {"column": "a", "input": "u", "confidence": 0.9}) == {
        "column": "a", "confidence": 0.9}
    assert job_of_saved({"job": "arx"}) == "arx"
    assert job_of_saved({"segment": {}, "methods": {}}) == "decay"
    assert job_of_saved({"metrics": {}, "tuning": {}}) == "step"
    from identify import ParameterValueError

    with pytest.raises(ParameterValueError, match="cannot tell which job"):
        job_of_saved({"poles": []})


def test_decay_record_plot_shows_the_whole_file_only_when_it_is_the_same_file(tmp_path):
    from identify import read_record
    from identify.report._figures import _whole_record

    t = np.arange(-50, 400) / 1000
    y = np.where(t >= 0, np.exp(-3 * t) * np.cos(2 * np.pi * 20 * t), 0.0)
    csv = tmp_path / "tap.csv"
    np.savetxt(csv, np.column_stack([t, y]), delimiter=",", header="time [s],accel [m/s^2]", comments="")
    sha = read_record(str(csv)).sha256
    base = fake_decay(0)
    same = FakeDecay(str(csv), sha, base.poles, (), base.settings, base.response, base.segment,
                     base.methods, base.order_scan)
    full_t, full_y = _whole_record(same)
    np.testing.assert_allclose(full_t, t, atol=1e-9)
    np.testing.assert_allclose(full_y, y, atol=1e-6)
    other = FakeDecay(str(csv), "0" * 64, base.poles, (), base.settings, base.response, base.segment,
                      base.methods, base.order_scan)
    assert _whole_record(other) == (None, None)
