"""Every sub-command's --json output against the published contract, docs/json-schema.json (JSON Schema 2020-12)."""

from __future__ import annotations

import contextlib
import copy
import io
import json
import shutil
from pathlib import Path

import pytest
from jsonschema import Draft202012Validator

from sheettool.cli.main import main
from sheettool.demo.scenario import BUNDLED

SCHEMA = json.loads((Path(__file__).parents[2] / "docs" / "json-schema.json").read_text(encoding="utf-8"))
STAMP = ("--timestamp", "2026-12-01T08:00")


def _validator(definition: str) -> Draft202012Validator:
    """A validator for one command's definition, its references resolved within the same file."""
    return Draft202012Validator({"$ref": f"#/$defs/{definition}", "$defs": SCHEMA["$defs"]})


def _errors(definition: str, doc: dict) -> list[str]:
    return [f"{list(e.absolute_path)}: {e.message}" for e in _validator(definition).iter_errors(doc)]


def _run_json(*args: str | Path) -> tuple[int, dict]:
    """Run the command line in this process; its exit code and the JSON it printed."""
    out = io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(io.StringIO()):
        code = main([str(a) for a in args])
    return code, json.loads(out.getvalue())


def _valid(definition: str, doc: dict) -> None:
    assert _errors(definition, doc) == []
    assert list(Draft202012Validator(SCHEMA).iter_errors(doc)) == []  # the top level picks the same one


@pytest.fixture(scope="module")
def demo_json(tmp_path_factory) -> dict:
    """evaluate --json of the bundled demo, once for the module."""
    folder = tmp_path_factory.mktemp("demo")
    code, doc = _run_json("evaluate", BUNDLED, "-o", folder / "demo-evaluated.xlsx", *STAMP, "--json")
    assert code == 0
    return doc


def test_the_schema_is_a_valid_draft_2020_12_schema():
    Draft202012Validator.check_schema(SCHEMA)
    assert SCHEMA["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    assert {"evaluate", "evaluate_several", "pack", "runlength", "design"} <= set(SCHEMA["$defs"])


def test_evaluate_one_input(demo_json):
    _valid("evaluate", demo_json)
    charts = {c["sheet"]: c["chart"] for c in demo_json["characteristics"]}
    assert charts == {"Bore diameter": "xbar-r", "Leak test": "p", "Crimp force": "individuals"}
    # both capability forms (variables indices, attribute rate) and the reader's account are exercised
    assert {"cpk" in c["capability"] for c in demo_json["characteristics"]} == {True, False}
    assert all("read" in c and "settings" in c for c in demo_json["characteristics"])


def test_evaluate_several_inputs(tmp_path):
    good = tmp_path / "line-a.xlsx"
    shutil.copyfile(BUNDLED, good)
    broken = tmp_path / "broken.xlsx"
    broken.write_bytes(b"not a workbook")
    code, doc = _run_json("evaluate", good, broken, "--jobs", "1", "--quiet", *STAMP, "--json")
    assert code == 3  # the highest of the inputs' codes
    _valid("evaluate_several", doc)
    assert [Path(e["input"]).name for e in doc["evaluations"]] == ["line-a.xlsx"]
    assert [(Path(f["input"]).name, f["exit_code"]) for f in doc["failed"]] == [("broken.xlsx", 3)]


def test_pack_of_the_demo_folder(tmp_path):
    code, doc = _run_json("pack", BUNDLED.parent, "-o", tmp_path / "pack.xlsx", "--jobs", "1", "--quiet", *STAMP,
                          "--json")
    assert code == 0
    _valid("pack", doc)
    assert len(doc["characteristics"]) == 3 and doc["failed"] == []
    assert all(p["file"] == BUNDLED.name for p in doc["problems"])


@pytest.mark.parametrize("args", [
    ("--chart", "xbar", "--n", "5", "--rules", "zones", "--interval", "1", "--hours-per-month", "400"),
    ("--chart", "ewma", "--weight", "0.2", "--limit-width", "2.962", "--shift", "0,1"),
    ("--chart", "cusum", "--reference", "0.5", "--decision-interval", "4", "--shift", "0,1"),
    ("--chart", "p", "--n", "100", "--p0", "0.05"),
], ids=["shewhart", "ewma", "cusum", "p"])
def test_runlength(args):
    code, doc = _run_json("runlength", *args, "--json")
    assert code == 0
    _valid("runlength", doc)
    assert doc["scheme"]["chart"] == args[1]


def test_design_on_a_small_grid():
    code, doc = _run_json("design", "--shift", "1", "--arl-at-shift", "5", "--sizes", "1,4", "--intervals", "1",
                          "--presets", "beyond-limits,zones", "--weights", "0.2", "--references", "0.5", "--json")
    assert code == 0
    _valid("design", doc)
    # every chart kind of the search is there: 2 presets, one EWMA, one CUSUM, at each of 2 sizes
    assert sorted({c["scheme"]["chart"] for c in doc["candidates"]}) == ["cusum", "ewma", "shewhart"]
    assert len(doc["candidates"]) == 8


def test_the_schema_rejects_what_the_contract_does_not_hold(demo_json):
    # The objects are closed and their keys required: a stray key, a missing key or a wrong type is refused.
    stray = copy.deepcopy(demo_json)
    stray["characteristics"][0]["colour"] = "red"
    missing = copy.deepcopy(demo_json)
    del missing["problems"][0]["severity"]
    wrong = copy.deepcopy(demo_json)
    wrong["characteristics"][0]["signals"][0]["point"] = "5"
    unknown_setting = copy.deepcopy(demo_json)
    unknown_setting["characteristics"][0]["settings"]["colour"] = {"value": "red", "origin": "default"}
    for doc in (stray, missing, wrong, unknown_setting):
        assert _errors("evaluate", doc)
