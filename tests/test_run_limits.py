"""Per-run sheet columns for review: ``fore_start_s``/``after_end_s`` limit the readings used,
``rise_method`` picks the run's corrected-rise method; the run record keeps its period
boundaries and where each came from. Logs are simulated with calwork's own simulator."""

from __future__ import annotations

import pytest

from calwork.reduce import reduce_sheet
from calwork.simulation import simulate_scenario


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    out = tmp_path_factory.mktemp("limits")
    simulate_scenario("bomb", out, runs=3, seed=31)
    return out


def _with_columns(folder, tmp_path, **cells):
    """A copy of the sheet with extra columns filled for run sample-01."""
    lines = (folder / "runs.csv").read_text().splitlines()
    names = list(cells)
    out = [lines[0] + "," + ",".join(names)]
    for line in lines[1:]:
        values = [str(cells[n]) if line.startswith("sample-01,") else "" for n in names]
        out.append(line + "," + ",".join(values))
    sheet = tmp_path / "runs.csv"
    sheet.write_text("\n".join(out) + "\n")
    for log in folder.glob("*.csv"):
        if log.name != "runs.csv":
            (tmp_path / log.name).write_bytes(log.read_bytes())
    return sheet


def _run(reduction, run_id):
    return next(r for r in reduction.runs if r.run == run_id)


def test_limits_cut_the_record_and_the_result_hardly_moves(folder, tmp_path):
    plain = _run(reduce_sheet(folder / "runs.csv"), "sample-01")
    assert plain.periods["fire_source"] == "detected"
    fore0, after1 = plain.periods["fore_period_s"][0], plain.periods["after_period_s"][1]
    start, end = fore0 + 120.0, after1 - 300.0
    cut = _run(reduce_sheet(_with_columns(folder, tmp_path, fore_start_s=start,
                                          after_end_s=end)), "sample-01")
    assert cut.error is None
    assert cut.periods["fore_period_s"][0] >= start
    assert cut.periods["after_period_s"][1] <= end
    # fewer drift readings: the same rise within a few of its uncertainties (dense log)
    assert cut.corrected_rise_K == pytest.approx(plain.corrected_rise_K,
                                                 abs=3 * plain.u_corrected_rise_K)
    assert cut.corrected_rise_K != plain.corrected_rise_K


def test_rise_method_per_run(folder, tmp_path):
    red = reduce_sheet(_with_columns(folder, tmp_path, rise_method="regnault-pfaundler"))
    assert _run(red, "sample-01").rise.method == "regnault-pfaundler"
    assert _run(red, "sample-02").rise.method == "newton-fit"


@pytest.mark.parametrize(("cells", "message"), [
    ({"fore_start_s": 900, "after_end_s": 300}, "after-period end must come after"),
    ({"rise_method": "guess"}, "guess"),
])
def test_bad_limits_fail_the_run_alone(folder, tmp_path, cells, message):
    red = reduce_sheet(_with_columns(folder, tmp_path, **cells))
    bad = _run(red, "sample-01")
    assert message in bad.error
    assert all(r.error is None for r in red.runs if r.run != "sample-01")


def test_periods_survive_the_json_round_trip(folder):
    from calwork.core.results import RunResult

    run = _run(reduce_sheet(folder / "runs.csv"), "cal-01")
    again = RunResult.from_dict(run.to_dict())
    assert dict(again.periods) == dict(run.periods)
    assert again.periods["main_end_source"] in ("detected", "given")
