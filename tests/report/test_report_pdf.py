"""`--pdf`: the same document on A4 pages, read back with pypdf; a clear line and exit 2 without fpdf2."""

from __future__ import annotations

import json
import re
import sys
from pathlib import Path

import pytest

from livefix.cli import main
from livefix.report import facts

REPO = Path(__file__).resolve().parents[2]
RECORDING = REPO / "recordings" / "rooftop-5min.lfr"  # a built-in scenario's recording (make recordings)
A4_PT = (595.28, 841.89)  # ISO 216 A4, 210 mm x 297 mm, in PostScript points (72 per inch)
SITE = 'name = "South yard mast 3"\noperator = "Night shift"\nantenna_height_m = 1.5\n'


def _flat(text: str) -> str:
    return re.sub(r"\s+", " ", text)


@pytest.fixture(scope="module")
def pdf_run(tmp_path_factory) -> tuple[Path, dict]:
    pytest.importorskip("fpdf", reason="fpdf2 not installed (pip install 'livefix[pdf]')")
    out = tmp_path_factory.mktemp("pdf")
    (out / "site.toml").write_text(SITE, encoding="utf-8")
    rc = main(["report", str(RECORDING), "-o", str(out), "--site", str(out / "site.toml"), "--pdf",
               "--profile", "commission", "--jobs", "1"])
    assert rc in (0, 1)  # any verdict against the profile: the documents are written
    return out, json.loads((out / "report.json").read_text())


def test_pdf_opens_on_a4_with_verdict_site_and_key_figures(pdf_run):
    from pypdf import PdfReader

    out, report = pdf_run
    assert report["receivers"][0]["analysis"]["internal_errors"] == 0
    reader = PdfReader(out / "report.pdf")
    assert len(reader.pages) >= 3
    for pg in reader.pages:
        assert abs(float(pg.mediabox.width) - A4_PT[0]) < 0.5 and abs(float(pg.mediabox.height) - A4_PT[1]) < 0.5
    text = _flat(" ".join(pg.extract_text() for pg in reader.pages))
    assert "South yard mast 3" in text and "Night shift" in text
    assert report["verdict"] is not None  # judged against the profile (pass, fail or inconclusive)
    assert f"Verdict: {facts.verdict_text(report['verdict'])}" in text
    # the summary's figures, as the HTML and Markdown show them (one facts module for all three)
    for label, value in facts.summary(report)[1:]:
        if len(value) < 40:  # long values wrap in the table cell; the short ones must be found whole
            assert label in text and value in text, (label, value)
    assert "Work at height" in text and "licensed practice" in text  # the cautions
    # every check of the profile is listed by name
    for r in report["receivers"][0]["results"]:
        assert _flat(r["name"])[:30] in text


def test_pdf_embeds_the_plots_as_images(pdf_run):
    from pypdf import PdfReader

    out, _ = pdf_run
    images = [img for pg in PdfReader(out / "report.pdf").pages for img in pg.images]
    assert len(images) >= 6  # sky, scatter, position-time, C/N0, signal-time, Allan (plots.PLOTS)


def test_pdf_without_the_library_is_one_clear_line_and_exit_2(tmp_path, monkeypatch, capsys):
    monkeypatch.setitem(sys.modules, "fpdf", None)  # import fpdf now raises ImportError
    rc = main(["report", str(RECORDING), "-o", str(tmp_path), "--pdf"])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 2 and len(err) == 1 and "pip install 'livefix[pdf]'" in err[0]
    assert not list(tmp_path.iterdir())  # said before the run: nothing half written


def test_check_pdf_needs_a_report_folder(capsys):
    rc = main(["check", str(RECORDING), "--pdf"])
    err = capsys.readouterr().err.strip().splitlines()
    assert rc == 2 and len(err) == 1 and "--pdf needs --report" in err[0]


def test_check_writes_the_pdf_beside_the_other_documents(tmp_path):
    pytest.importorskip("fpdf", reason="fpdf2 not installed (pip install 'livefix[pdf]')")
    from pypdf import PdfReader

    rc = main(["check", str(RECORDING), "--report", str(tmp_path), "--pdf", "--site", "Check roof"])
    assert rc in (0, 1)
    names = sorted(p.name for p in tmp_path.iterdir() if p.suffix != ".lfr")
    assert {"report.pdf", "report.html", "report.json", "junit.xml"} <= set(names)
    assert "Check roof" in PdfReader(tmp_path / "report.pdf").pages[0].extract_text()
