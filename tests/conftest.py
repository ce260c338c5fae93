"""Suite-wide settings.

One BLAS thread per test process: the suite's Monte-Carlo loops solve many small problems,
for which extra BLAS threads only compete for the machine's two cores.  Plots use the
non-interactive Agg backend.
"""
import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("MKL_NUM_THREADS", "1")
os.environ.setdefault("MPLBACKEND", "Agg")
