"""Shared test fixtures."""

from __future__ import annotations

import os

# Two cores are shared by everything the suite runs; BLAS threads beyond one only contend.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")
os.environ.setdefault("MPLBACKEND", "Agg")

import matplotlib  # noqa: E402  (after the thread settings above)

matplotlib.use("Agg")
