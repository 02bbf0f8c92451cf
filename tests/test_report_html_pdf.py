"""HTML and PDF reports: self-contained, escaped, labelled, one plot per run, page count."""

from __future__ import annotations

import re
import sys
from dataclasses import replace
from pathlib import Path

import pytest

sys.path.insert(0, str(Path(__file__).parent))
from report_fixtures import cached_reduction, demo_reduction

from calwork.core.errors import ExportError
from calwork.core.safety import SAFETY_NOTE
from calwork.report import write_report

HOSTILE = '<script>alert("x")</script>=HYPERLINK("http://example.invalid","x")'


@pytest.fixture(scope="module")
def reduction():
    return cached_reduction(failed_run=True)


@pytest.fixture(scope="module")
def html(reduction, tmp_path_factory):
    path = write_report(reduction, tmp_path_factory.mktemp("html") / "report.html")
    return path.read_text(encoding="utf-8")


def test_html_is_self_contained(html):
    assert html.startswith("<!DOCTYPE html>")
    text = re.sub(r"data:image/png;base64,[A-Za-z0-9+/=]+", "", html)  # the embedded images
    assert "http" not in text  # no links, no external resources of any kind
    sources = re.findall(r'src="([^"]*)"', html)
    assert sources
    assert all(s.startswith("data:image/png;base64,") for s in sources)
    for tag in ("<link", "<script", "<iframe", "<object", "@import", "url("):
        assert tag not in html
    hrefs = re.findall(r'href="([^"]*)"', html)
    assert all(h.startswith("#") for h in hrefs)  # table of contents only


def test_html_has_safety_note_and_simulated_labels(html, reduction):
    from html import escape

    assert escape(SAFETY_NOTE) in html
    assert "pressure vessels" in html
    assert "SIMULATED DATA" in html
    for run in reduction.runs:
        assert f"Run {escape(run.run)} (simulated data)</h2>" in html


def test_html_one_thermogram_plot_per_run_and_a_control_chart(html, reduction):
    alts = re.findall(r'<img src="data:image/png;base64,[^"]+" alt="([^"]*)"', html)
    for run in reduction.runs:
        assert sum(a.startswith(f"Thermogram of run {run.run} ") for a in alts) == 1, run.run
    assert sum(a.startswith("Control chart") for a in alts) == len(reduction.calibrations)
    assert len(alts) == len(reduction.runs) + len(reduction.calibrations)


def test_html_escapes_text_from_sheets_and_logs(tmp_path):
    red = demo_reduction(sample=HOSTILE, notes="<b>note</b>", n_calibrations=2,
                         runs_per_sample=2, duration_s=1800.0)
    th = {k: replace(v, metadata={**v.metadata, "operator": "<img src=x onerror=alert(1)>"})
          for k, v in red.thermograms.items()}
    no_rise = replace(red.runs[-1], rise=None)  # a run whose rise failed: readings only
    red = replace(red, thermograms=th, runs=(*red.runs[:-1], no_rise))
    text = write_report(red, tmp_path / "r.html").read_text(encoding="utf-8")
    assert "<script" not in text
    assert "&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt;" in text
    assert 'src="http' not in text
    assert 'href="http' not in text
    assert all(s.startswith("data:") for s in re.findall(r'src="([^"]*)"', text))
    assert f'alt="Readings of run {no_rise.run} (simulated data)"' in text


def test_plot_styles_do_not_rely_on_colour():
    from calwork.report.plots import CYCLE, LINESTYLES, OKABE_ITO, plot_style

    # Okabe & Ito (2008), "Color Universal Design": the eight colours of the palette
    assert set(OKABE_ITO.values()) == {"000000", "E69F00", "56B4E9", "009E73", "F0E442",
                                       "0072B2", "D55E00", "CC79A7"}
    assert len(set(CYCLE)) == len(CYCLE)
    assert len({str(s) for s in LINESTYLES}) == len(LINESTYLES)
    import matplotlib as mpl

    with plot_style():
        styles = [(d["color"], str(d["linestyle"])) for d in mpl.rcParams["axes.prop_cycle"]]
    assert len({ls for _, ls in styles}) == len(styles)  # every series its own line style


def _pdf_pages(data: bytes) -> int:
    # page objects of the file (a minimal parser: '/Type /Page' but not '/Type /Pages')
    return len(re.findall(rb"/Type\s*/Page(?![a-z])", data))


def test_pdf_has_one_page_per_section(reduction, tmp_path):
    path = write_report(reduction, tmp_path / "report.pdf")
    data = path.read_bytes()
    assert data.startswith(b"%PDF")
    # summary + review table + each calibration + each sample series + each run
    expected = 2 + len(reduction.calibrations) + len(reduction.samples) + len(reduction.runs)
    assert _pdf_pages(data) == expected


def test_report_rejects_other_suffixes(reduction, tmp_path):
    with pytest.raises(ExportError, match="HTML or PDF"):
        write_report(reduction, tmp_path / "report.docx")
    assert not list(tmp_path.iterdir())  # nothing half-written is left behind
