"""`poleprint demo` runs every job on the bundled records and writes the report."""
import os
import re
import subprocess
import sys
from html.parser import HTMLParser
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


class _Images(HTMLParser):
    def __init__(self):
        super().__init__()
        self.srcs = []

    def handle_starttag(self, tag, attrs):
        if tag == "img":
            self.srcs.append(dict(attrs).get("src", ""))


def test_demo_completes_and_writes_the_report(tmp_path):
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    out = tmp_path / "demo out"
    done = subprocess.run([sys.executable, "-m", "identify", "demo", "--out", str(out)],
                          capture_output=True, text=True, timeout=900, cwd=str(tmp_path), env=env)
    assert done.returncode == 0, done.stdout[-1500:] + done.stderr[-3000:]
    report = out / "report.html"
    assert report.is_file()
    assert str(report.resolve()) in done.stdout
    # a short summary with units, one line per bundled record
    for name in ("bracket_ringdown.csv", "plate_ringdown_semicolon.csv", "valve_step.csv",
                 "actuator_step.csv", "motor_prbs.csv"):
        assert name in done.stdout
    assert "Hz" in done.stdout and " s" in done.stdout
    text = report.read_text(encoding="utf-8")
    parser = _Images()
    parser.feed(text)
    assert len(parser.srcs) >= 15 and all(s.startswith("data:image/png;base64,") for s in parser.srcs)
    assert "http://" not in text and "https://" not in text
    assert len(re.findall(r'<section id="record-\d+">', text)) == 5
    assert "History and damping trends" in text and (out / "demo-history.sqlite").is_file()
    assert "fulmar" in done.stdout
