"""Benchmark of the review workbench (server side, through the ASGI test client).

    python tests/benchmarks/bench_web.py            # full size
    python tests/benchmarks/bench_web.py --quick    # 100 runs in the day view

* Day view of 500 runs (250 benzoic-acid calibrations + 250 combustions, every log distinct;
  calwork's simulator): server time cold (thumbnails drawn from the stored logs) and warm
  (thumbnails cached by the logs' SHA-256), and the page weight. Goal: < 300 ms, < 2 MB.
* Preview re-reduction of a 3,600-reading log (three methods, JSON out). Goal: < 30 ms.
* Run page of a 36,000-reading log: server time, page weight, points drawn (the chart is
  thinned for drawing, never for computation).

Simulated data, not measurements. Times are the best of several repeats (shared machine).
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
import time
import warnings
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from starlette.testclient import TestClient

from calwork.labbook import open_labbook
from calwork.simulation import (
    CalorimeterParams,
    CombustionPulse,
    simulate_run,
    simulate_scenario,
)
from calwork.web import create_app


def _best(fn, repeats: int) -> tuple[float, object]:
    best, out = float("inf"), None
    for _ in range(repeats):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def _single_run_book(root: Path, n_readings: int) -> Path:
    """A lab book with one calibration run whose log has ``n_readings`` readings."""
    from calwork.io import write_log

    folder = root / f"long-{n_readings}"
    folder.mkdir()
    dt = 3600.0 / n_readings
    run = simulate_run(CalorimeterParams.bomb_preset(sampling_interval_s=dt),
                       CombustionPulse(energy_J=26434.0, fire_time_s=600.0),
                       duration_s=3600.0 - dt, seed=7)
    write_log(run.thermogram, folder / "log.csv")
    (folder / "runs.csv").write_text(
        "run,kind,log,calorimeter,sample,mass_g,reference_material,certified_J_per_g,"
        "ignition_J,fuse_J,o2_pressure_MPa,bomb_volume_L,notes\n"
        "long-1,calibration,log.csv,bench,benzoic acid,1.0,benzoic-acid,26434.0,1.0,"
        "50.0,3.04,0.342,simulated by calwork\n")
    path = folder / "book.sqlite"
    with open_labbook(path, create=True, user="bench") as book:
        result = book.add_sheet(folder / "runs.csv")
        assert not result.failed, result.failed
    return path


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="100 runs in the day view")
    args = parser.parse_args(argv)
    n_pairs = 50 if args.quick else 250
    warnings.simplefilter("ignore")
    with tempfile.TemporaryDirectory(prefix="bench-web-") as tmp:
        root = Path(tmp)
        t0 = time.perf_counter()
        simulate_scenario("bomb", root / "day", runs=n_pairs, seed=3)
        book = root / "day.sqlite"
        with open_labbook(book, create=True, user="bench") as b:
            b.add_sheet(root / "day" / "runs.csv")
        print(f"simulated and recorded {2 * n_pairs} runs in {time.perf_counter() - t0:.1f} s")

        from calwork.web.service import Workbench

        bench = Workbench(book)
        t0 = time.perf_counter()
        with bench.book() as b:
            for r in b.runs():
                bench._thumbnail(b, r["run"])
        t_thumbs = time.perf_counter() - t0
        with TestClient(create_app(book)) as client:
            bench_app = client.app.state.bench
            bench_app._thumbs.clear()  # as if the start-up warm-up had not run yet
            t0 = time.perf_counter()
            cold = client.get("/")
            t_cold = time.perf_counter() - t0
            assert cold.status_code == 200
            t_warm, warm = _best(lambda: client.get("/"), 5)
            print(f"day view, {2 * n_pairs} runs: {t_warm * 1e3:.0f} ms with the thumbnails "
                  f"cached (the server draws them in the background at start: "
                  f"{t_thumbs:.1f} s for all), {t_cold * 1e3:.0f} ms if opened before; page "
                  f"{len(warm.content) / 1024:.0f} KiB (goal < 300 ms, < 2 MB)")

        book = _single_run_book(root, 3600)
        with TestClient(create_app(book)) as client:
            client.headers["X-CSRF-Token"] = client.get("/api/session").json()["csrf_token"]
            end = client.get("/api/runs/long-1").json()["periods"]["main_end_s"]
            client.post("/api/runs/long-1/preview", json={})  # first read of the log
            times = []
            for k in range(20):
                t0 = time.perf_counter()
                r = client.post("/api/runs/long-1/preview", json={"main_end_s": end + k})
                times.append(time.perf_counter() - t0)
                assert r.status_code == 200, r.text
            print(f"preview of a 3,600-reading log (3 methods): best {min(times) * 1e3:.1f} ms, "
                  f"median {statistics.median(times) * 1e3:.1f} ms (goal < 30 ms)")

        book = _single_run_book(root, 36000)
        with TestClient(create_app(book)) as client:
            client.get("/runs/long-1")
            t_page, page = _best(lambda: client.get("/runs/long-1"), 3)
            t_api, api = _best(lambda: client.get("/api/runs/long-1"), 3)
            total = len(api.json()["readings"]["t_s"])
            print(f"run page of a 36,000-reading log: {t_page * 1e3:.0f} ms, "
                  f"{len(page.content) / 1024:.0f} KiB (points drawn: at most 4,000 of "
                  f"{total}); JSON with every reading {t_api * 1e3:.0f} ms, "
                  f"{len(api.content) / 1024:.0f} KiB")
    return 0


if __name__ == "__main__":
    sys.exit(main())
