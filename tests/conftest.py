"""Shared test fixtures."""

from __future__ import annotations

import os

# Two cores are shared by everything the suite runs; BLAS threads beyond one only contend.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")
os.environ.setdefault("MPLBACKEND", "Agg")

import matplotlib  # noqa: E402  (after the thread settings above)

matplotlib.use("Agg")


def copy_sample_runs(dest):
    """A writable copy of the bundled, simulated sample runs in ``dest``; returns the folder."""
    import shutil
    from importlib import resources
    from pathlib import Path

    with resources.as_file(resources.files("calwork.sample_runs")) as folder:
        shutil.copytree(folder, Path(dest), dirs_exist_ok=True)
    return Path(dest)
