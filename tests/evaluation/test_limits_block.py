"""The limits block read back as a whole: bounded, every number finite, limits in order, checksummed; or refused."""

from __future__ import annotations

import json

import numpy as np
import openpyxl
import pytest

from sheettool.base.errors import InputError
from sheettool.core.data import Characteristic, Measurements
from sheettool.evaluation.carried import limits_entry
from sheettool.evaluation.evaluate import fit_characteristic
from sheettool.evaluation.options import EvaluationOptions
from sheettool.workbook.limits_block import (
    LIMITS_SHEET,
    MAX_ENTRIES,
    BlockError,
    checksum,
    limits_rows,
    parse_limits_rows,
    read_limits_block,
)
from tests.workbooks import readings, simple


@pytest.fixture(scope="module")
def entry() -> dict:
    values = np.random.default_rng(3).normal(10.0, 0.1, (20, 4))
    return limits_entry(fit_characteristic(Characteristic("bore", Measurements(values)), "Bore", EvaluationOptions()))


def _rows(*entries: dict, summed: bool = True) -> list[tuple]:
    rows = [tuple(r) for r in limits_rows(list(entries))]
    return rows if summed else [r[:3] for r in rows]


def _tampered(entry: dict, change) -> list[tuple]:
    """The block of one entry changed by `change`, its checksum made to match (tampering that knows the scheme)."""
    changed = json.loads(json.dumps(entry))
    change(changed)
    text = json.dumps(changed)
    return [*_rows(entry)[:2], ("Bore", "xbar-r", text, checksum(text))]


def test_a_block_reads_back_with_and_without_checksums(entry):
    assert parse_limits_rows(_rows(entry))["Bore"] == entry
    assert parse_limits_rows(_rows(entry, summed=False))["Bore"] == entry  # blocks written before the checksum


@pytest.mark.parametrize(("change", "words"), [
    (lambda e: e.update(sigma_within=-1.0), "sigma_within -1.0 is not above zero"),
    (lambda e: e.update(sigma_within=0.0), "sigma_within 0.0 is not above zero"),
    (lambda e: e.update(process_mean="12.0"), "process_mean '12.0' is not a finite number"),
    (lambda e: e.update(process_mean=True), "process_mean True is not a finite number"),
    (lambda e: e["parameters"].update(k="x"), "parameter k 'x' is not a finite number"),
    (lambda e: e["limits"]["mean"].update(lcl=e["limits"]["mean"]["ucl"] + 1), "the limits of mean are out of order"),
    (lambda e: e["limits"]["mean"].update(center="text"), "the limits of mean are not finite numbers"),
    (lambda e: e.update(parameters=[1, 2]), "parameters is not an object"),
    (lambda e: e.update(chart=7), "the entry has no sheet name or chart kind"),
])
def test_an_entry_that_is_not_what_sheettool_writes_is_refused(entry, change, words):
    assert "mean" in entry["limits"]
    with pytest.raises(BlockError, match="cell C3: " + words.replace("(", r"\(").replace(")", r"\)")):
        parse_limits_rows(_tampered(entry, change))


@pytest.mark.parametrize(("text", "words"), [
    ('{"sheet": "Bore", "chart": "xbar-r", "process_mean": NaN}', "NaN is not a finite number"),
    ('{"sheet": "Bore", "chart": "xbar-r", "process_mean": Infinity}', "Infinity is not a finite number"),
    ('{"sheet": "Bore", "chart": "xbar-r", "process_mean": 1e999}', "process_mean inf is not a finite number"),
    ("[" * 9 + "]" * 9, "nested deeper than 8 levels"),
    ("[" * 100_000, "longer than 20,000 characters"),
    ('{"sheet": "Bore", "chart": "xbar-r", "note": "' + "[" * 50 + '"}', ""),  # brackets in a string: not nesting
    ("{not json", "not valid JSON"),
    ("[1, 2]", "not a JSON object"),
    (12.5, "not JSON text"),
])
def test_the_text_is_bounded_and_finite(text, words):
    rows = [*_rows(summed=False), ("Bore", "xbar-r", text)]  # an old block: no checksums, the content still checked
    if not words:
        assert parse_limits_rows(rows)["Bore"]["note"] == "[" * 50
        return
    with pytest.raises(BlockError, match="cell C3: .*" + words):
        parse_limits_rows(rows)


def test_the_block_as_a_whole(entry):
    rows = _rows(entry)
    with pytest.raises(BlockError, match="cell C3: the parameters do not match their checksum in D3"):
        parse_limits_rows([*rows[:2], (rows[2][0], rows[2][1], rows[2][2].replace("10.", "11."), rows[2][3])])
    with pytest.raises(BlockError, match="cell D3: the checksum is missing"):
        parse_limits_rows([*rows[:2], rows[2][:3]])
    with pytest.raises(BlockError, match="cell A4: a second entry for 'Bore'"):
        parse_limits_rows([*rows, rows[2]])
    with pytest.raises(BlockError, match="cell C1: limits block version 2 is not known"):
        parse_limits_rows([(rows[0][0], "version", 2), *rows[1:]])
    with pytest.raises(BlockError, match=r"cell C1: limits block version 1\.5"):
        parse_limits_rows([(rows[0][0], "version", 1.5), *rows[1:]])
    many = [*rows[:2]] + [(f"s{i}", *rows[2][1:]) for i in range(MAX_ENTRIES + 1)]
    with pytest.raises(BlockError, match=f"cell A{MAX_ENTRIES + 3}: more than 10,000 entries"):
        parse_limits_rows(many)


def test_a_tampered_block_is_one_line_naming_file_sheet_and_cell(run_cli, tmp_path):
    source = tmp_path / "a.xlsx"
    simple(source, readings(25, 4))
    earlier = tmp_path / "a-evaluated.xlsx"
    assert run_cli("evaluate", source, "-o", earlier).code == 0
    assert read_limits_block(earlier)["Bore"]["sigma_within"] > 0
    book = openpyxl.load_workbook(earlier)
    ws = book[LIMITS_SHEET]
    assert ws["D2"].value == "SHA-256 of the parameters" and ws["D3"].value == checksum(ws["C3"].value)
    cases = {"sigma": json.dumps({**json.loads(ws["C3"].value), "sigma_within": -1}), "number": 12.5,
             "deep": "[" * 5000 + "]" * 5000}
    for name, value in cases.items():
        ws["C3"] = value
        ws["D3"] = checksum(value) if isinstance(value, str) else None
        book.save(tmp_path / f"{name}.xlsx")
        result = run_cli("evaluate", source, "-o", tmp_path / f"{name}-out.xlsx", "--limits-from",
                         tmp_path / f"{name}.xlsx")
        assert result.code == 3 and "Traceback" not in result.err and len(result.err.splitlines()) == 1, result.err
        assert f"{tmp_path / name}.xlsx: sheet 'limits-block', cell " in result.err
        assert not (tmp_path / f"{name}-out.xlsx").exists()
    with pytest.raises(InputError, match="cell D3: the checksum is missing"):
        read_limits_block(tmp_path / "number.xlsx")


def test_a_block_written_with_the_earlier_individuals_code_still_carries():
    """A block from before the chart codes were renamed holds "i-mr": its limits still apply, to the individuals chart
    (an independent computation: the same limits as those of the entry under today's code)."""
    values = np.random.default_rng(5).normal(40.0, 1.0, (30, 1))
    ch = Characteristic("force", Measurements(values))
    today = limits_entry(fit_characteristic(ch, "Force", EvaluationOptions()))
    earlier = parse_limits_rows(_rows({**today, "chart": "i-mr"}))["Force"]
    fit = fit_characteristic(ch, "Force", EvaluationOptions(carried=earlier)).fit
    assert fit.chart == "individuals"
    assert fit.statistics[0].ucl[0] == pytest.approx(today["limits"][fit.statistics[0].name]["ucl"], rel=1e-12)
