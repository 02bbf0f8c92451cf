"""Text from a run sheet is data in every output: the CSV and markdown of `reduce --out` too
(formula injection as described by OWASP "CSV injection"; HTML in markdown)."""

from __future__ import annotations

import csv

from conftest import copy_sample_runs

from calwork.cli.main import main

HOSTILE = '=HYPERLINK("http://example.invalid","x")'
SCRIPT = "<script>alert(1)</script>"


def test_reduce_outputs_neutralise_sheet_text(tmp_path, capsys):
    copy_sample_runs(tmp_path / "runs")
    sheet = tmp_path / "runs" / "runs.csv"
    with sheet.open(encoding="utf-8") as fh:
        rows = [r for r in csv.DictReader(fh) if r["kind"] in ("calibration", "combustion")]
    for r in rows:
        if r["kind"] == "combustion":
            r["sample"] = HOSTILE if r["sample"].startswith("succinic") else SCRIPT
    with sheet.open("w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(rows)
    out = tmp_path / "out"
    assert main(["reduce", str(sheet), "--out", str(out)]) in (0, 1)
    capsys.readouterr()
    for name in ("summary.csv", "samples.csv"):
        with (out / name).open(encoding="utf-8", newline="") as fh:
            cells = [c for row in csv.reader(fh) for c in row]
        assert not any(c.startswith(("=", "+", "@")) for c in cells), name
        assert any(c == "'" + HOSTILE for c in cells), name
    report = (out / "report.md").read_text(encoding="utf-8")
    assert SCRIPT not in report
    assert "&lt;script&gt;" in report
