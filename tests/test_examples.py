"""The example scripts run (each a short use of the Python API on the bundled records)."""
import importlib
import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = ROOT / "examples"


def _run(script):
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    env["MPLBACKEND"] = "Agg"
    return subprocess.run([sys.executable, str(EXAMPLES / script)], capture_output=True, text=True,
                          timeout=240, cwd=str(ROOT), env=env)


@pytest.mark.parametrize("script, needs, expected", [
    ("decay_example.py", "identify.decay", ["Hz", "zeta", "intervals", "Estimates, not clearances"]),
    ("step_example.py", "identify.step", ["gain", "dead time", "time constant", "starting point to review"]),
    ("arx_example.py", "identify.arx", ["Hz", "hold-out fit", "Estimates, not clearances"]),
])
def test_example_runs(script, needs, expected):
    importlib.import_module(needs)  # the job the example uses must import (no skip)
    done = _run(script)
    assert done.returncode == 0, done.stderr[-2000:]
    for word in expected:
        assert word in done.stdout
    assert "Traceback" not in done.stderr
