"""Speed and memory of ``poleprint decay`` on a 2,000,000-sample two-mode CSV record.

Ratios measured in the same run (targets from issue 3):

* whole:    time of ``poleprint decay LONG --json``  /  time of
            ``python -c "import pandas; pandas.read_csv(LONG)"``              (≤ 4)
* marginal: (decay LONG − decay SHORT) / (pandas LONG − pandas SHORT),
            SHORT being the first 10,000 samples of the same record           (≤ 3)
* peak memory (max resident set) of the decay command on LONG                 (≤ 600 MB)

Each command runs in a fresh process REPEAT times (median wall time), the four commands
taking turns round by round.  The records are written once to a temporary directory (or
the directory given as the first argument).  A last line gives the same marginal cost in
one warm process (imports done), where nothing overlaps: no target, for the record.

Run: python tests/bench/bench_decay_speed.py [DIR] [REPEAT]   (not part of pytest)
"""
import json
import os
import statistics
import subprocess
import sys
import tempfile

import numpy as np

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(os.path.dirname(HERE))
sys.path[:0] = [ROOT, os.path.dirname(HERE)]  # the package checkout and tests/ (for _decay_synth)

from _decay_synth import make_decay  # noqa: E402

N_LONG, N_SHORT, FS = 2_000_000, 10_000, 10_000.0
MODES = [(12.0, 0.0005, 1.0, 0.3), (31.0, 0.0004, 0.5, 1.2)]

_RUNNER = (
    "import resource, subprocess, sys, time\n"
    "t = time.perf_counter()\n"
    "p = subprocess.run(sys.argv[1:], stdout=subprocess.PIPE, stderr=subprocess.PIPE)\n"
    "dt = time.perf_counter() - t\n"
    "print(dt, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss, p.returncode)\n"
)


_IN_PROCESS = (
    "import json, statistics, sys, time\n"
    "import lmfit, pandas\n"
    "from identify import read_record\n"
    "from identify.decay import analyse_decay\n"
    "long_path, short_path, repeat = sys.argv[1], sys.argv[2], int(sys.argv[3])\n"
    "def clock(f):\n"
    "    f()  # warm: first-call imports and caches\n"
    "    times = []\n"
    "    for _ in range(repeat):\n"
    "        t = time.perf_counter(); f(); times.append(time.perf_counter() - t)\n"
    "    return statistics.median(times)\n"
    "out = {}\n"
    "for tag, path in (('long', long_path), ('short', short_path)):\n"
    "    out['decay_' + tag] = clock(lambda: analyse_decay(read_record(path)))\n"
    "    out['pandas_' + tag] = clock(lambda: pandas.read_csv(path))\n"
    "print(json.dumps(out))\n"
)


def _write(path, t, y):
    with open(path, "w") as fh:
        fh.write("time (s),accel (m/s^2)\n")
        block = 200_000
        for i in range(0, t.size, block):
            rows = np.column_stack([t[i:i + block], y[i:i + block]])
            fh.write("\n".join(f"{a:.6f},{b:.7g}" for a, b in rows))
            fh.write("\n")


def _measure_interleaved(commands, repeat):
    """Median wall time and largest peak memory of each command, over ``repeat`` rounds.

    Each round runs every command once, in turn, so that a change in the machine's load
    during the benchmark touches all of them alike instead of one block of runs.
    """
    times = {name: [] for name in commands}
    peaks = {name: [] for name in commands}
    for _ in range(repeat):
        for name, cmd in commands.items():
            out = subprocess.run([sys.executable, "-c", _RUNNER, *cmd], capture_output=True, text=True,
                                 check=True, cwd=ROOT).stdout.split()
            if out[2] != "0":
                raise RuntimeError(f"{' '.join(cmd)} exited with {out[2]}")
            times[name].append(float(out[0]))
            peaks[name].append(int(out[1]) / 1024.0)  # ru_maxrss is in KiB on Linux
    return {name: (statistics.median(times[name]), max(peaks[name]), times[name]) for name in commands}


def main(directory=None, repeat=11):
    if directory is not None:
        os.makedirs(directory, exist_ok=True)
    directory = directory or tempfile.mkdtemp(prefix="poleprint-bench-")
    long_path = os.path.join(directory, "decay_long.csv")
    short_path = os.path.join(directory, "decay_short.csv")
    if not (os.path.exists(long_path) and os.path.exists(short_path)):
        t, y, _, _ = make_decay(MODES, fs=FS, n=N_LONG, snr_db=50.0, offset=0.05, pretrigger=5000, seed=1)
        _write(long_path, t, y)
        _write(short_path, t[:N_SHORT], y[:N_SHORT])
    poleprint = [sys.executable, "-m", "identify", "decay", "--json"]
    pandas_cmd = [sys.executable, "-c", "import pandas, sys; pandas.read_csv(sys.argv[1])"]
    got = _measure_interleaved({"decay_long": poleprint + [long_path], "decay_short": poleprint + [short_path],
                                "pandas_long": pandas_cmd + [long_path], "pandas_short": pandas_cmd + [short_path]},
                               repeat)
    (d_long, mem_long, d_long_all), (d_short, _, d_short_all) = got["decay_long"], got["decay_short"]
    (p_long, mem_pandas, p_long_all), (p_short, _, p_short_all) = got["pandas_long"], got["pandas_short"]
    # the same marginal ratio from differences taken within each round (load changes
    # between rounds cancel), median over rounds
    paired = (statistics.median(a - b for a, b in zip(d_long_all, d_short_all))
              / statistics.median(a - b for a, b in zip(p_long_all, p_short_all)))
    result = json.loads(subprocess.run(poleprint + [long_path], capture_output=True, text=True,
                                       cwd=ROOT).stdout)
    whole = d_long / p_long
    marginal = (d_long - d_short) / (p_long - p_short)
    inproc = json.loads(subprocess.run([sys.executable, "-c", _IN_PROCESS, long_path, short_path, str(repeat)],
                                       capture_output=True, text=True, check=True, cwd=ROOT).stdout)
    print(f"records: {N_LONG} and {N_SHORT} samples at {FS:g} Hz, modes {[m[0] for m in MODES]} Hz")
    print(f"decay  long {d_long:.2f} s  short {d_short:.2f} s  peak memory {mem_long:.0f} MB")
    print(f"pandas long {p_long:.2f} s  short {p_short:.2f} s  peak memory {mem_pandas:.0f} MB")
    print(f"whole ratio    {whole:.2f}  (target <= 4)")
    print(f"marginal ratio {marginal:.2f}  (target <= 3); from round-by-round differences {paired:.2f}")
    print(f"peak memory    {mem_long:.0f} MB  (target <= 600 MB)")
    # the command overlaps its import of lmfit with the long record's reading, which the
    # marginal ratio above credits to the record; in one warm process nothing overlaps:
    ip = (inproc["decay_long"] - inproc["decay_short"]) / (inproc["pandas_long"] - inproc["pandas_short"])
    print(f"in one process (imports done): read + analyse long {inproc['decay_long']:.2f} s, "
          f"short {inproc['decay_short']:.2f} s; pandas.read_csv long {inproc['pandas_long']:.2f} s, "
          f"short {inproc['pandas_short']:.2f} s; marginal ratio {ip:.2f} (no target, for the record)")
    print("poles found: " + ", ".join(f"{p['natural_frequency_hz']:.4f} Hz zeta {p['damping_ratio']:.5f}"
                                      for p in result["poles"]))
    return {"whole": whole, "marginal": marginal, "marginal_paired": paired, "peak_mb": mem_long,
            "in_process_marginal": ip}


if __name__ == "__main__":
    main(sys.argv[1] if len(sys.argv) > 1 else None, int(sys.argv[2]) if len(sys.argv) > 2 else 11)
