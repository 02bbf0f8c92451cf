"""reduce exits 1 when a calibration series fails its acceptance, unless accepted; the samples
computed from it are marked (common practice of accredited labs: a calibration outside its
acceptance criteria is not used without a decision)."""

from __future__ import annotations

from conftest import copy_sample_runs

from calwork.cli.main import main


def test_a_calibration_failing_acceptance_is_not_silently_used(tmp_path, capsys):
    runs = copy_sample_runs(tmp_path / "runs")
    sheet = str(runs / "runs.csv")
    assert main(["reduce", sheet]) == 0  # the bundled series pass the default RSD limit
    capsys.readouterr()
    assert main(["reduce", sheet, "--rsd-limit", "0.000001"]) == 1
    out, err = capsys.readouterr()
    assert "calibration series failing acceptance: bomb-1" in err
    assert "--accept-calibration" in err
    assert "calibration-not-accepted: succinic acid" in out
    assert main(["reduce", sheet, "--rsd-limit", "0.000001", "--accept-calibration"]) == 0
    out, _ = capsys.readouterr()
    assert "calibration-not-accepted" in out  # accepted, and still said
