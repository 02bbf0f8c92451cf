"""Packaging: every subpackage is listed in pyproject.toml and the sample runs ship."""

from __future__ import annotations

import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_every_subpackage_is_listed():
    config = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
    listed = set(config["tool"]["setuptools"]["packages"])
    found = {
        ".".join(p.parent.relative_to(ROOT).parts)
        for p in (ROOT / "calwork").rglob("__init__.py")
    }
    assert found <= listed, f"add to [tool.setuptools] packages: {sorted(found - listed)}"


def test_sample_runs_are_importable_package_data():
    from importlib import resources

    folder = resources.files("calwork.sample_runs")
    assert folder.joinpath("runs.csv").is_file()
    sheet = folder.joinpath("runs.csv").read_text(encoding="utf-8")
    assert "simulated" in sheet  # every row is labelled as simulated
