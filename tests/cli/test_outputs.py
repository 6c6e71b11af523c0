"""Output names: distinct, never a file read (however spelled), and sheettool's own outputs recognised and skipped."""

from __future__ import annotations

import os
import shutil
import zipfile
from pathlib import Path

import openpyxl
import pytest

from sheettool.app.outputs import is_sheettool_output, plan_outputs, same_file
from sheettool.workbook.limits_block import LIMITS_SHEET
from tests.conftest import sha256
from tests.workbooks import readings, simple


@pytest.fixture
def earlier(run_cli, tmp_path) -> tuple[Path, Path]:
    """A measurement workbook A.xlsx and the output an earlier run wrote beside it, A-evaluated.xlsx."""
    a = tmp_path / "A.xlsx"
    simple(a, readings(25, 4))
    assert run_cli("evaluate", a).code == 0
    return a, tmp_path / "A-evaluated.xlsx"


def test_an_output_is_recognised_by_its_limits_block(earlier, run_cli, tmp_path):
    a, evaluated = earlier
    assert is_sheettool_output(evaluated) and not is_sheettool_output(a)
    pack = tmp_path / "pack.xlsx"
    assert run_cli("pack", a, "-o", pack).code == 0
    assert is_sheettool_output(pack)
    resaved = tmp_path / "resaved.xlsx"  # saved again by another program: other part names, still recognised
    openpyxl.load_workbook(evaluated).save(resaved)
    assert is_sheettool_output(resaved)
    # a sheet of that name without the marker is someone's data, not ours
    lookalike = tmp_path / "lookalike.xlsx"
    simple(lookalike, readings(25, 4), extra={LIMITS_SHEET: [["our own notes"]]})
    assert not is_sheettool_output(lookalike)
    damaged = tmp_path / "damaged.xlsx"
    damaged.write_bytes(evaluated.read_bytes()[:3000])
    assert not is_sheettool_output(damaged) and not is_sheettool_output(tmp_path / "missing.xlsx")


def test_the_marker_is_read_without_reading_whole_parts(earlier, tmp_path):
    _, evaluated = earlier
    broken = tmp_path / "broken-tail.xlsx"  # shared strings that turn to garbage after the last entry
    with zipfile.ZipFile(evaluated) as source, zipfile.ZipFile(broken, "w", zipfile.ZIP_DEFLATED) as target:
        for info in source.infolist():
            data = source.read(info.filename)
            if info.filename == "xl/sharedStrings.xml":
                data = data.replace(b"</sst>", b"<no <end " * 200_000)
            target.writestr(info.filename, data)
    assert is_sheettool_output(broken)  # streamed up to the marker's entry: the garbage after it is never parsed


def test_evaluate_never_writes_over_a_second_input(earlier, run_cli, tmp_path):
    a, evaluated = earlier
    before = sha256(evaluated)
    result = run_cli("evaluate", a, evaluated, "--json")
    assert result.code == 0, result.err
    assert sha256(evaluated) == before
    (report,) = result.json["evaluations"]
    assert report["output"] == str(tmp_path / "A-xlsx-evaluated.xlsx")
    assert Path(report["output"]).exists()
    (skipped,) = result.json["skipped"]
    assert skipped["input"] == str(evaluated) and "an output of sheettool" in skipped["message"]
    assert f"written to {tmp_path / 'A-xlsx-evaluated.xlsx'}, as A-evaluated.xlsx is an input" in result.err
    alone = run_cli("evaluate", evaluated)
    assert alone.code == 3 and "an output of sheettool" in alone.err


def test_two_inputs_with_one_stem_get_two_outputs(run_cli, tmp_path):
    book, text = tmp_path / "in.xlsx", tmp_path / "in.csv"
    simple(book, readings(25, 4))
    text.write_text("Reading\n" + "\n".join(f"{v:.3f}" for v in readings(30, 1, seed=8)[:, 0]) + "\n")
    result = run_cli("evaluate", book, text, "--json")
    assert result.code == 0, result.err
    outputs = [e["output"] for e in result.json["evaluations"]]
    assert outputs == [str(tmp_path / "in-evaluated.xlsx"), str(tmp_path / "in-csv-evaluated.xlsx")]
    assert all(Path(o).exists() for o in outputs)
    assert "in-evaluated.xlsx is the output of in.xlsx" in result.err


def test_outputs_never_replace_a_file_read_however_spelled(earlier, run_cli, tmp_path):
    a, evaluated = earlier
    (tmp_path / "sub").mkdir()
    (tmp_path / "link.xlsx").symlink_to(evaluated)
    os.link(evaluated, tmp_path / "hard.xlsx")
    spellings = [evaluated, tmp_path / "sub" / ".." / "A-evaluated.xlsx", tmp_path / "link.xlsx",
                 tmp_path / "hard.xlsx"]
    before = sha256(evaluated)
    for spelled in spellings:
        for command in ("evaluate", "pack"):
            result = run_cli(command, a, "--limits-from", evaluated, "-o", spelled)
            assert result.code == 2, (command, spelled, result.err)
            assert str(spelled) in result.err and f"the limits file {evaluated}" in result.err
    assert sha256(evaluated) == before
    # a pack whose output is a workbook found in its folder is refused before anything is evaluated
    folder = tmp_path / "month"
    folder.mkdir()
    shutil.copyfile(a, folder / "existing.xlsx")
    simple(folder / "other.xlsx", readings(25, 4, seed=2))
    kept = sha256(folder / "existing.xlsx")
    result = run_cli("pack", folder, "-o", folder / "existing.xlsx")
    assert result.code == 2 and f"an input {folder / 'existing.xlsx'}" in result.err
    assert sha256(folder / "existing.xlsx") == kept


def test_last_months_pack_in_the_folder_is_skipped(run_cli, tmp_path):
    folder = tmp_path / "month"
    folder.mkdir()
    simple(folder / "bore.xlsx", readings(25, 4), title="Bore")
    assert run_cli("pack", folder, "-o", tmp_path / "october.xlsx").code == 0
    shutil.copyfile(tmp_path / "october.xlsx", folder / "october-pack.xlsx")
    result = run_cli("pack", folder, "-o", tmp_path / "november.xlsx", "--json")
    assert result.code == 0, result.err
    assert [(c["source"], c["sheet"]) for c in result.json["characteristics"]] == [("bore.xlsx", "Bore")]
    (skipped,) = result.json["skipped"]
    assert skipped["source"] == "october-pack.xlsx" and "an output of sheettool" in skipped["message"]
    plain = run_cli("pack", folder, "-o", tmp_path / "again.xlsx")
    assert f"skipped: {folder / 'october-pack.xlsx'}: an output of sheettool" in plain.err
    summary = list(openpyxl.load_workbook(tmp_path / "again.xlsx")["Review summary"].iter_rows(values_only=True))
    assert ("october-pack.xlsx", "skipped") in [(r[0], r[13]) for r in summary]
    # writing the new pack over the earlier one in the same folder is a re-run, not an input overwritten
    assert run_cli("pack", folder, "-o", folder / "october-pack.xlsx").code == 0


def test_planned_names(tmp_path):
    a, b = tmp_path / "x.xlsx", tmp_path / "x.csv"
    read = [(a, "an input"), (b, "an input"), (tmp_path / "x-evaluated.xlsx", "the limits file")]
    planned = plan_outputs([a, b], read)
    assert [p.name for p, _ in planned] == ["x-xlsx-evaluated.xlsx", "x-csv-evaluated.xlsx"]
    assert planned[0][1] == "x-evaluated.xlsx is the limits file"
    taken = [(tmp_path / "x-csv-evaluated.xlsx", "an input"), (b, "an input")]
    assert plan_outputs([b, b], taken)[1][0].name == "x-csv-evaluated-2.xlsx"
    assert same_file(tmp_path / "." / "x.xlsx", a) and not same_file(a, b)
