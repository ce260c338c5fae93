"""The command line's background import of lmfit (identify/cli/_warmup.py).

Safety rests on one property: once ``JOB_MODULES`` are imported, the decay job imports
nothing before ``lmfit`` — so while the background thread imports lmfit, the main thread
starts no import of its own.  Each case runs in a fresh interpreter, where nothing but
the test's own set-up is loaded, and records every import the job makes.
"""
import json
import os
import subprocess
import sys

import pytest

from _decay_synth import make_decay

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
DATASETS = os.path.join(ROOT, "datasets")

_PROBE = r"""
import json, sys
from identify.cli._warmup import JOB_MODULES
import importlib
for name in JOB_MODULES:
    importlib.import_module(name)

class Recorder:
    names = []
    def find_spec(self, name, path=None, target=None):
        self.names.append(name)
        return None

recorder = Recorder()
sys.meta_path.insert(0, recorder)
from identify.decay import analyse_decay
kwargs = json.loads(sys.argv[2])
try:
    analyse_decay(sys.argv[1], **kwargs)
    outcome = "result"
except Exception as exc:
    outcome = type(exc).__name__
names = recorder.names
first = names.index("lmfit") if "lmfit" in names else len(names)
print(json.dumps({"before_lmfit": names[:first], "imported_lmfit": "lmfit" in names,
                  "outcome": outcome}))
"""


def _probe(path, **kwargs):
    env = dict(os.environ, PYTHONPATH=ROOT + os.pathsep + os.environ.get("PYTHONPATH", ""))
    out = subprocess.run([sys.executable, "-c", _PROBE, str(path), json.dumps(kwargs)],
                         capture_output=True, text=True, check=True, cwd=ROOT, env=env).stdout
    return json.loads(out)


def _csv(path, modes, *, sep=",", decimal=".", **kw):
    t, y, _, _ = make_decay(modes, **kw)
    with open(path, "w", encoding="utf-8") as fh:
        fh.write(f"time (s){sep}accel (m/s^2)\n")
        for a, b in zip(t, y):
            fh.write(f"{a:.6f}{sep}{b:.8g}\n".replace(".", decimal) if decimal != "." else f"{a:.6f}{sep}{b:.8g}\n")
    return path


@pytest.mark.parametrize("name", ["bracket_ringdown.csv"])
def test_demo_records_import_nothing_before_lmfit(name):
    got = _probe(os.path.join(DATASETS, name))
    assert got["outcome"] == "result" and got["imported_lmfit"]
    assert got["before_lmfit"] == []


@pytest.mark.parametrize("case", ["pretrigger_two_modes", "decimal_comma", "clipped_drift"])
def test_synthetic_records_import_nothing_before_lmfit(tmp_path, case):
    if case == "pretrigger_two_modes":
        path = _csv(tmp_path / "a.csv", [(12.0, 0.002, 1.0, 0.3), (31.0, 0.004, 0.5, 1.0)], fs=2000.0,
                    n=40_000, snr_db=40, pretrigger=3000, offset=0.1, seed=1)
    elif case == "decimal_comma":
        path = _csv(tmp_path / "b.csv", [(5.0, 0.02, 1.0, 0.0)], fs=200.0, n=3000, snr_db=30, seed=2,
                    sep=";", decimal=",")
    else:
        path = _csv(tmp_path / "c.csv", [(8.0, 0.01, 1.0, 0.0)], fs=400.0, n=6000, snr_db=35, seed=3,
                    clip=0.8, drift_per_s=0.02)
    got = _probe(path)
    assert got["outcome"] == "result" and got["imported_lmfit"]
    assert got["before_lmfit"] == []


def test_recorder_sees_a_missing_module(tmp_path):
    # the probe must be able to fail: without the set-up imports the job's own imports
    # (pandas at least) show up before lmfit
    probe = _PROBE.replace("for name in JOB_MODULES:", "for name in ():")
    env = dict(os.environ, PYTHONPATH=ROOT + os.pathsep + os.environ.get("PYTHONPATH", ""))
    out = subprocess.run([sys.executable, "-c", probe, os.path.join(DATASETS, "bracket_ringdown.csv"), "{}"],
                         capture_output=True, text=True, check=True, cwd=ROOT, env=env).stdout
    assert "pandas" in json.loads(out)["before_lmfit"]


def test_command_result_is_the_same_with_and_without_the_warm_up(tmp_path):
    # the background import changes when lmfit loads, never what the job computes
    path = _csv(tmp_path / "d.csv", [(12.0, 0.01, 1.0, 0.3)], fs=500.0, n=5000, snr_db=40, seed=4)
    env = dict(os.environ, PYTHONPATH=ROOT + os.pathsep + os.environ.get("PYTHONPATH", ""))
    runs = []
    for method in ("auto", "fit"):
        with_warm = subprocess.run([sys.executable, "-m", "identify", "decay", "--json", "--method", method,
                                    str(path)], capture_output=True, text=True, cwd=ROOT, env=env)
        api = subprocess.run([sys.executable, "-c",
                              "import json, sys; from identify.decay import analyse_decay; "
                              "from identify._jsonable import dumps_line; "
                              "print(dumps_line(analyse_decay(sys.argv[1], method=sys.argv[2])))",
                              str(path), method], capture_output=True, text=True, cwd=ROOT, env=env)
        assert with_warm.returncode == 0 and api.returncode == 0, with_warm.stderr + api.stderr
        runs.append((json.loads(with_warm.stdout), json.loads(api.stdout)))
    for cli, api in runs:
        assert cli == api


def test_warm_up_restores_the_switch_interval():
    code = ("import sys; from identify.cli._warmup import warm_up; before = sys.getswitchinterval(); "
            "t = warm_up('json'); t.join(); print(before == sys.getswitchinterval())")
    env = dict(os.environ, PYTHONPATH=ROOT + os.pathsep + os.environ.get("PYTHONPATH", ""))
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True,
                         cwd=ROOT, env=env).stdout.strip()
    assert out == "True"


def test_warm_up_survives_a_missing_module():
    # an import error in the thread is dropped; the job's own import reports it
    code = ("from identify.cli._warmup import warm_up; t = warm_up('no_such_module_for_poleprint'); "
            "t.join(); print('ok')")
    env = dict(os.environ, PYTHONPATH=ROOT + os.pathsep + os.environ.get("PYTHONPATH", ""))
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, env=env)
    assert out.stdout.strip() == "ok" and out.stderr == ""
