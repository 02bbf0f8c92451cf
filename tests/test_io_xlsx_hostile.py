"""Workbooks whose size records lie: every row is read, and hostile files are bounded.

openpyxl's documentation warns that read-only mode trusts the sheet's <dimension> record,
which some writers set wrong; calwork must neither drop rows silently nor pad every row of a
hostile file to 16 384 columns.
"""

from __future__ import annotations

import io
import re
import zipfile

import openpyxl
import pytest

from calwork.core.errors import LogFormatError
from calwork.io import read_log, read_run_sheet


def _patch_dimension(path, ref: str) -> None:
    """Rewrite the <dimension ref="…"/> of the first sheet, as a careless writer would."""
    src = zipfile.ZipFile(path)
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as dst:
        for info in src.infolist():
            data = src.read(info.filename)
            if info.filename == "xl/worksheets/sheet1.xml":
                data, n = re.subn(rb'<dimension ref="[^"]*"', f'<dimension ref="{ref}"'.encode(),
                                  data)
                assert n == 1
            dst.writestr(info, data)
    src.close()
    path.write_bytes(out.getvalue())


def _log_xlsx(path, n: int = 481):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["time_s", "temperature_C"])
    for i in range(n):
        ws.append([2.0 * i, 25.0 + 0.0001 * i])
    wb.save(path)


def test_stale_dimension_drops_no_reading(tmp_path):
    path = tmp_path / "log.xlsx"
    _log_xlsx(path)
    _patch_dimension(path, "A1:B427")  # claims 426 readings; the sheet holds 481
    th = read_log(path)
    assert th.n_points == 481
    assert th.time_s[-1] == pytest.approx(960.0)


def test_stale_dimension_drops_no_run(tmp_path):
    path = tmp_path / "runs.xlsx"
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["run", "kind", "log", "mass_g"])
    for i in range(6):
        ws.append([f"r{i}", "calibration", f"r{i}.csv", 1.0])
    wb.save(path)
    for i in range(6):
        (tmp_path / f"r{i}.csv").write_text("time_s,temperature_C\n0,25\n", encoding="utf-8")
    _patch_dimension(path, "A1:D4")  # says 3 runs
    assert [r.run for r in read_run_sheet(path)] == [f"r{i}" for i in range(6)]


def test_hostile_dimension_is_ignored(tmp_path):
    path = tmp_path / "log.xlsx"
    _log_xlsx(path, 60)
    _patch_dimension(path, "A1:XFD1048576")
    assert read_log(path).n_points == 60


def test_compression_bomb_is_refused_before_parsing(tmp_path):
    path = tmp_path / "bomb.xlsx"
    _log_xlsx(path, 20)
    src = zipfile.ZipFile(path)
    parts = {i.filename: src.read(i.filename) for i in src.infolist()}
    src.close()
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as dst:
        for name, data in parts.items():
            if name == "xl/worksheets/sheet1.xml":
                with dst.open(name, "w") as fh:  # 136 MiB of white space, ~130 KiB packed
                    fh.write(data[:-len(b"</worksheet>")])
                    chunk = b" " * 2**20
                    for _ in range(136):
                        fh.write(chunk)
                    fh.write(b"</worksheet>")
            else:
                dst.writestr(name, data)
    assert path.stat().st_size < 2**20
    with pytest.raises(LogFormatError, match="unpacks to more than calwork reads"):
        read_log(path)
