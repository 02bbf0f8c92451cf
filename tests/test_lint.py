"""The code base stays ruff-clean (the same check developers run before committing)."""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_ruff_clean():
    ruff = shutil.which("ruff")
    cmd = [ruff, "check", str(ROOT)] if ruff else [sys.executable, "-m", "ruff", "check", str(ROOT)]
    proc = subprocess.run(cmd, capture_output=True, text=True, check=False, cwd=ROOT)
    assert proc.returncode == 0, proc.stdout + proc.stderr
