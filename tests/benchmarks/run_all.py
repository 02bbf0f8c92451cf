"""Run every calwork benchmark and print its figures.

Usage::

    python tests/benchmarks/run_all.py [--quick]

Each ``bench_*.py`` beside this file is a stand-alone script that prints its own figures;
they are not part of the default test run (speed is measured here, never in timed tests).
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent


def main(argv: list[str] | None = None) -> int:
    args = list(sys.argv[1:] if argv is None else argv)
    status = 0
    for script in sorted(HERE.glob("bench_*.py")):
        print(f"=== {script.name} {' '.join(args)}", flush=True)
        proc = subprocess.run([sys.executable, str(script), *args], check=False)
        if proc.returncode != 0:
            print(f"!!! {script.name} exited with {proc.returncode}", flush=True)
            status = 1
    return status


if __name__ == "__main__":
    sys.exit(main())
