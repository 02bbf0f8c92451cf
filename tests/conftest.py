"""Shared test fixtures."""

from __future__ import annotations

import os

import matplotlib

matplotlib.use("Agg")
os.environ.setdefault("MPLBACKEND", "Agg")
