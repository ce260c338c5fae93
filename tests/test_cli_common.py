"""Command-line plumbing: one JSON line per file, error lines, exit status, lazy imports."""
import json
import subprocess
import sys

import pytest

from identify import IdentificationError
from identify.cli import EXIT_OK, EXIT_PARTIAL, EXIT_USAGE, main
from identify.cli._common import run_per_file, table


class Fake:
    warnings = ("few cycles: only 2 cycles",)

    def __init__(self, name):
        self.name = name

    def to_dict(self):
        return {"source": self.name, "value": 1.5, "nan": float("nan")}


def analyse(path):
    if "bad" in path:
        raise IdentificationError("no oscillation found")
    return Fake(path)


def test_json_lines_in_input_order_with_error_lines(capsys):
    status = run_per_file(["a.csv", "bad.csv", "c.csv"], analyse, str, json_output=True)
    out, err = capsys.readouterr()
    lines = [json.loads(x) for x in out.splitlines()]
    assert [x["source"] for x in lines] == ["a.csv", "bad.csv", "c.csv"]
    assert lines[1] == {"source": "bad.csv", "error": "no oscillation found"}
    assert lines[0]["nan"] is None  # JSON has no NaN
    assert err.strip() == "poleprint: error: bad.csv: no oscillation found"
    assert status == EXIT_PARTIAL


def test_exit_status_all_ok_and_all_failed(capsys):
    assert run_per_file(["a.csv"], analyse, lambda r: "text", json_output=False) == EXIT_OK
    out, err = capsys.readouterr()
    assert out.strip() == "text" and "warning: a.csv: few cycles" in err
    assert run_per_file(["bad.csv"], analyse, str, json_output=False) == EXIT_USAGE


def test_unexpected_exception_is_one_line(capsys):
    def boom(path):
        raise ZeroDivisionError("x")

    assert run_per_file(["a.csv"], boom, str, json_output=False) == EXIT_USAGE
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "internal error" in err and "Traceback" not in err


def test_version_and_help(capsys):
    with pytest.raises(SystemExit) as info:
        main(["--version"])
    assert info.value.code == 0
    assert capsys.readouterr().out.startswith("poleprint ")
    assert main([]) == EXIT_USAGE


def test_table_pads_columns():
    text = table(["mode", "fn [Hz]"], [[1, "12.5"], [2, "140.25"]])
    assert text.splitlines()[0] == "mode  fn [Hz]"
    assert text.splitlines()[1] == "----  -------"


def test_command_line_start_imports_no_heavy_module():
    # The CLI must start fast: building the parser loads no plotting, fitting or statistics
    # package (lazy imports; STYLE.md §11).
    code = ("import sys; from identify.cli import build_parser; build_parser(); "
            "heavy = [m for m in ('matplotlib', 'lmfit', 'statsmodels', 'pandas', 'scipy') if m in sys.modules]; "
            "print(','.join(heavy))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.strip() == ""


@pytest.mark.parametrize("user", [None, ("OMP_NUM_THREADS", "3"), ("OPENBLAS_NUM_THREADS", "2")])
def test_whole_process_run_asks_blas_for_one_thread_unless_the_user_chose(user):
    # run_command sets the thread default before numpy is imported (import identify and
    # identify.cli import no numpy), and leaves any number the user set alone.  Our choice
    # for small matrices on few cores (docs/decay.md), no source.
    import os

    from identify.cli import BLAS_THREAD_VARIABLES

    env = {k: v for k, v in os.environ.items() if k not in BLAS_THREAD_VARIABLES}
    if user:
        env[user[0]] = user[1]
    code = ("import os, sys; from identify import cli; "
            "cli.main = lambda argv=None: (print(os.environ.get('OPENBLAS_NUM_THREADS'), "
            "os.environ.get('MKL_NUM_THREADS'), 'numpy' in sys.modules), 0)[1]; cli.run_command()")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, check=True).stdout
    expected = {None: "1 1 False", "OMP_NUM_THREADS": "None None False", "OPENBLAS_NUM_THREADS": "2 None False"}
    assert out.strip() == expected[user[0] if user else None]


def test_closed_pipe_is_quiet():
    # `poleprint ... | head -1`: the reader closes the pipe early; no traceback
    # (common practice for command-line tools, no source)
    code = ("import sys; from identify.cli import main; "
            "sys.exit(main(['inspect', sys.argv[1], sys.argv[1], sys.argv[1]]))")
    import pathlib
    path = pathlib.Path(__file__).resolve().parents[1] / "datasets" / "valve_step.csv"
    proc = subprocess.Popen([sys.executable, "-c", code, str(path)], stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE)
    proc.stdout.readline()
    proc.stdout.close()
    err = proc.stderr.read().decode()
    proc.wait(timeout=60)
    assert "Traceback" not in err


def test_whole_process_run_prints_library_warnings_on_one_line():
    # run_command (console script, python -m identify): a library's warnings.warn becomes
    # one "poleprint: warning:" line; the status is the process's exit status
    code = ("import warnings; from identify import cli; "
            "cli.main = lambda argv=None: (warnings.warn('first line\\n  second line'), 3)[1]; "
            "cli.run_command()")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert proc.returncode == 3
    assert proc.stderr == "poleprint: warning: UserWarning: first line second line\n"


def test_whole_process_run_of_the_module_gives_status_and_output(tmp_path):
    # python -m identify: the same status and output as main(), and nothing on stderr
    # from the shortened exit (no "Exception ignored", no traceback)
    import pathlib
    path = pathlib.Path(__file__).resolve().parents[1] / "datasets" / "bracket_ringdown.csv"
    ok = subprocess.run([sys.executable, "-m", "identify", "decay", "--json", str(path)],
                        capture_output=True, text=True)
    assert ok.returncode == EXIT_OK and json.loads(ok.stdout)["poles"]
    assert "Exception ignored" not in ok.stderr and "Traceback" not in ok.stderr
    bad = tmp_path / "bad.csv"
    bad.write_text("time,accel\n0,1\n")
    failed = subprocess.run([sys.executable, "-m", "identify", "decay", str(bad)], capture_output=True, text=True)
    assert failed.returncode == EXIT_USAGE and failed.stdout == ""
    assert len(failed.stderr.strip().splitlines()) == 1 and failed.stderr.startswith("poleprint: error: ")


def test_whole_process_run_with_closed_pipe_is_quiet():
    import pathlib
    path = pathlib.Path(__file__).resolve().parents[1] / "datasets" / "valve_step.csv"
    proc = subprocess.Popen([sys.executable, "-m", "identify", "inspect", str(path), str(path), str(path)],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    proc.stdout.readline()
    proc.stdout.close()
    err = proc.stderr.read().decode()
    proc.wait(timeout=60)
    assert "Traceback" not in err and "Exception ignored" not in err
