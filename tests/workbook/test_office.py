"""The evaluated workbooks opened in a real spreadsheet application (LibreOffice, headless).

Every kind of output is converted to PDF in one soffice call; the --formulas outputs are recalculated
by LibreOffice (OOXMLRecalcMode 0: always recalculate on load) and its values must equal sheettool's
within 1e-9 relative. A probe file with a wrong cached value proves the recalculation really ran.
When SHEETTOOL_REQUIRE_OFFICE=1 (as .ci/run sets) a missing soffice is a failure, not a skip.
"""

from __future__ import annotations

import datetime as dt
import os
import re
import shutil
import subprocess
from pathlib import Path

import openpyxl
import pytest
import xlsxwriter

from sheettool.app.api import evaluate_file
from sheettool.app.pack import build_pack, write_pack
from sheettool.demo.scenario import BUNDLED
from sheettool.settings import Setting
from sheettool.workbook.writer import WriterOptions, write_evaluated_workbook
from tests.writer_cases import attribute_case, cusum_ewma_case, report_for, varying_sizes_case

RECALC = """<?xml version="1.0" encoding="UTF-8"?>
<oor:items xmlns:oor="http://openoffice.org/2001/registry" xmlns:xs="http://www.w3.org/2001/XMLSchema"
 xmlns:xsi="http://www.w3.org/2001/XMLSchema-instance">
<item oor:path="/org.openoffice.Office.Calc/Formula/Load"><prop oor:name="OOXMLRecalcMode" oor:op="fuse">
<value>0</value></prop></item>
</oor:items>
"""


def _soffice() -> str:
    found = shutil.which("soffice")
    if found is None:
        if os.environ.get("SHEETTOOL_REQUIRE_OFFICE") == "1":
            pytest.fail("SHEETTOOL_REQUIRE_OFFICE=1 but LibreOffice (soffice) is not installed")
        pytest.skip("LibreOffice (soffice) is not installed")
    return found


def _convert(files: list[Path], target: str, outdir: Path, profile: Path, recalc: bool = False) -> None:
    if recalc:
        (profile / "user").mkdir(parents=True, exist_ok=True)
        (profile / "user" / "registrymodifications.xcu").write_text(RECALC)
    outdir.mkdir(parents=True, exist_ok=True)
    done = subprocess.run([_soffice(), f"-env:UserInstallation={profile.as_uri()}", "--headless",
                           "--convert-to", target, "--outdir", str(outdir), *map(str, files)],
                          capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr


@pytest.fixture(scope="module")
def outputs(tmp_path_factory) -> dict[str, Path]:
    """One file of each kind: demo as values, demo with formulas and zone rules, built varying/attribute cases."""
    _soffice()
    tmp = tmp_path_factory.mktemp("office")
    demo = tmp / "demo-input.xlsx"
    shutil.copyfile(BUNDLED, demo)
    files = {"demo": tmp / "demo-values.xlsx", "demo-formulas": tmp / "demo-formulas.xlsx",
             "built-formulas": tmp / "built-formulas.xlsx"}
    evaluate_file(demo, files["demo"])
    evaluate_file(demo, files["demo-formulas"], {"rules": Setting("rules", "zones", "option --rules")},
                  writer=WriterOptions(formulas=True))
    files["pack"] = tmp / "pack.xlsx"
    write_pack(build_pack([demo, BUNDLED], {}), files["pack"])
    report = report_for(tmp, [varying_sizes_case(), attribute_case(), cusum_ewma_case()])
    write_evaluated_workbook(report, files["built-formulas"],
                             WriterOptions(formulas=True, timestamp=dt.datetime(2026, 12, 1)))
    probe = tmp / "probe.xlsx"
    book = xlsxwriter.Workbook(str(probe))
    book.add_worksheet("p").write_formula(0, 0, "=1+1", None, 5)  # a wrong cached value on purpose
    book.close()
    files["probe"] = probe
    return files


@pytest.fixture(scope="module")
def pdfs(outputs, tmp_path_factory) -> dict[str, Path]:
    """Every output printed to PDF by LibreOffice, in one call."""
    tmp = tmp_path_factory.mktemp("pdf")
    files = [p for k, p in outputs.items() if k != "probe"]
    _convert(files, "pdf", tmp / "pdf", tmp / "profile")
    return {k: tmp / "pdf" / f"{p.stem}.pdf" for k, p in outputs.items() if k != "probe"}


def test_every_output_converts_to_pdf(pdfs):
    for key, pdf in pdfs.items():
        assert pdf.exists() and pdf.read_bytes()[:5] == b"%PDF-" and pdf.stat().st_size > 10_000, key


def _pages(pdf: Path) -> list[str]:
    """The text of each printed page (poppler's pdftotext; form feeds part the pages)."""
    if shutil.which("pdftotext") is None:
        pytest.skip("poppler (pdftotext) is not installed")
    done = subprocess.run(["pdftotext", "-layout", str(pdf), "-"], capture_output=True, text=True, timeout=60)
    assert done.returncode == 0, done.stderr
    return done.stdout.split("\f")[:-1]


@pytest.mark.parametrize("key", ["demo", "pack"])
def test_summary_is_one_printed_page_per_characteristic_and_pages_say_what_they_show(outputs, pdfs, key):
    book = openpyxl.load_workbook(outputs[key], read_only=True)
    summaries = [n for n in book.sheetnames if n.endswith(" summary") and n != "Review summary"]
    pages = _pages(pdfs[key])
    found = [p for p in pages if re.search(r"sheettool: summary; (section \d+; )?evaluated", p)]
    assert len(found) == len(summaries) == (3 if key == "demo" else 6)  # exactly one page each
    sheets = {"Bore diameter": "Bore diameter", "Leak at 250 bar": "Leak test", "Crimp force": "Crimp force"}
    for page in found:  # the title, then the header: part and characteristic, source, period
        name = next(n for n in sheets if f"{n}: summary" in page)
        assert re.search(rf"H[AF]-220 · {name}", page) and f"sheet {sheets[name]}" in page and ".xlsx" in page
        assert re.search(r"\d{4}-\d\d-\d\d \d\d:\d\d to \d{4}-\d\d-\d\d \d\d:\d\d", page)
    # every page says what it is and where it is: the evaluation date in ISO form and page x of y
    assert all(re.search(r"evaluated \d{4}-\d\d-\d\d", p) and re.search(r"page \d+ of \d+", p) for p in pages)


def test_recalculated_values_equal_sheettools(outputs, tmp_path):
    files = [outputs["demo-formulas"], outputs["built-formulas"], outputs["probe"]]
    _convert(files, "xlsx:Calc MS Excel 2007 XML", tmp_path / "recalc", tmp_path / "profile", recalc=True)
    probe = openpyxl.load_workbook(tmp_path / "recalc" / "probe.xlsx", data_only=True)
    assert probe["p"]["A1"].value == 2  # LibreOffice recalculated instead of keeping the cached 5
    for path in files[:2]:
        formulas = openpyxl.load_workbook(path)
        cached = openpyxl.load_workbook(path, data_only=True)
        office = openpyxl.load_workbook(tmp_path / "recalc" / path.name, data_only=True)
        checked = 0
        for ws in formulas.worksheets:
            for row in ws.iter_rows():
                for cell in row:
                    if cell.data_type != "f":
                        continue
                    mine = cached[ws.title][cell.coordinate].value
                    theirs = office[ws.title][cell.coordinate].value
                    assert isinstance(theirs, int | float), (path.name, ws.title, cell.coordinate, theirs)
                    assert theirs == pytest.approx(mine, rel=1e-9, abs=1e-12), (ws.title, cell.coordinate)
                    checked += 1
        assert checked > 100, path.name  # statistics per subgroup and the limits were formulas
