"""Data-entry templates: the bundled files never drift, and a filled template evaluates."""

from pathlib import Path

import pytest

from sheettool.workbook.templates import bundled_templates, write_template

TEMPLATES = Path(__file__).parents[2] / "templates"


@pytest.mark.parametrize("name", sorted(bundled_templates()))
def test_bundled_template_is_rebuilt_identically(name, tmp_path):
    fresh = tmp_path / name
    write_template(bundled_templates()[name], fresh)
    assert fresh.read_bytes() == (TEMPLATES / name).read_bytes(), "run python -m sheettool.workbook.templates templates"


def test_template_command_refuses_to_overwrite(run_cli, tmp_path):
    target = tmp_path / "t.xlsx"
    assert run_cli("template", "subgroups", "-o", target).code == 0
    again = run_cli("template", "subgroups", "-o", target)
    assert again.code == 2 and "already exists" in again.err


def test_template_refuses_a_name_that_is_not_xlsx(run_cli, tmp_path):
    result = run_cli("template", "counts", "-o", tmp_path / "x.ods")
    assert result.code == 2 and "x.xlsx" in result.err and not (tmp_path / "x.ods").exists()


def test_template_bad_size(run_cli, tmp_path):
    result = run_cli("template", "subgroups", "--n", "1", "-o", tmp_path / "x.xlsx")
    assert result.code == 2 and "--n" in result.err


def _fill(path: Path, kind: str, rows: int = 25) -> None:
    """Type data under the worked row, as a technician would (fixed seed)."""
    import datetime as dt

    import numpy as np
    import openpyxl

    rng = np.random.default_rng(5)
    book = openpyxl.load_workbook(path)
    ws = book.worksheets[0]
    worked = next(r for r in range(1, ws.max_row + 1) if ws.cell(r, ws.max_column).value == "worked example - exclude")
    values = ws.max_column - 3
    for i in range(rows):
        r = worked + 1 + i
        ws.cell(r, 1, dt.datetime(2026, 11, 2, 6) + dt.timedelta(hours=i))
        ws.cell(r, 2, "T. Lind")
        if kind in ("subgroups", "individuals"):
            for c in range(values):
                ws.cell(r, 3 + c, float(np.round(rng.normal(10.0, 0.01), 3)))
        else:
            inspected = 200 if kind == "proportions" else 50
            rate = 0.02 if kind == "proportions" else 0.1
            ws.cell(r, 3, inspected)
            found = rng.binomial(inspected, rate) if kind == "proportions" else rng.poisson(inspected * rate)
            ws.cell(r, 4, int(found))
    book.save(path)


@pytest.mark.parametrize(("name", "kind", "chart"), [
    ("subgroups-5.xlsx", "subgroups", "xbar-r"), ("individuals.xlsx", "individuals", "individuals"),
    ("proportions.xlsx", "proportions", "np"), ("counts.xlsx", "counts", "c"),
])
def test_filled_template_evaluates(run_cli, tmp_path, name, kind, chart):
    import shutil

    path = tmp_path / name
    shutil.copyfile(TEMPLATES / name, path)
    _fill(path, kind)
    result = run_cli("evaluate", path, "--json")
    assert result.code == 0, result.err
    (char,) = result.json["characteristics"]
    assert char["chart"] == chart
    assert char["subgroups"] == 25  # the worked row is never evaluated nor plotted ...
    assert char["read"]["first_row"] > char["read"]["header_row"] + 1 and not char["read"]["excluded"]
    assert len(char["base_period_points"]) == 25
    assert any("worked example was left out" in p["message"] for p in result.json["problems"])  # ... and said
