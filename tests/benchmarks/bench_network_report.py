"""Benchmark of a network's report: ``calwork network FILE --xlsx --report`` for 5,000 species
/ 20,000 determinations (synthetic, randomly wired: bench_network.synthetic_network).

    python tests/benchmarks/bench_network_report.py [--quick]

Reported: wall time of the whole command (read, solve with every species' uncertainty,
workbook and HTML report), with the worst-offender screening off and at its default. The
workbook of a network is tables of values (no per-row formulas; only target derivations are
live formulas). Goal: under 10 s. Synthetic data, not measurements.
"""

from __future__ import annotations

import argparse
import csv
import io
import sys
import tempfile
import time
from contextlib import redirect_stdout
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from bench_network import synthetic_network

from calwork.cli.main import main as cli


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="1,000 species")
    args = parser.parse_args(argv)
    n = 1000 if args.quick else 5000
    net, _truth = synthetic_network(n, 4 * n)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "network.csv"
        with path.open("w", newline="") as fh:
            w = csv.writer(fh)
            w.writerow(["id", "equation", "delta_r_H_kJ_per_mol", "u_delta_r_H_kJ_per_mol"])
            w.writerows([r.id, r.equation, repr(r.delta_r_H_kJ_per_mol),
                         repr(r.u_delta_r_H_kJ_per_mol)] for r in net.determinations)
            w.writerows([r.id, next(iter(r.stoichiometry)).name, repr(r.delta_r_H_kJ_per_mol),
                         repr(r.u_delta_r_H_kJ_per_mol)] for r in net.priors)
        for label, extra in (("screening off", ["--worst-offender", "none"]),
                             ("default screening", [])):
            t0 = time.perf_counter()
            with redirect_stdout(io.StringIO()):
                code = cli(["network", str(path), "--no-key-values", *extra, "--xlsx",
                            str(Path(tmp) / "n.xlsx"), "--report", str(Path(tmp) / "n.html")])
            secs = time.perf_counter() - t0
            assert code == 0
            size = (Path(tmp) / "n.xlsx").stat().st_size + (Path(tmp) / "n.html").stat().st_size
            print(f"network report, {n} species / {4 * n} determinations, {label}: {secs:.1f} s "
                  f"(workbook + HTML {size / 2**20:.1f} MiB; goal < 10 s)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
