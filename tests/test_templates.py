"""Data-entry templates: the bundled files never drift, and a filled template evaluates."""

from pathlib import Path

import pytest

from sheettool.workbook.templates import bundled_templates, write_template

TEMPLATES = Path(__file__).parents[1] / "templates"


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


def test_template_bad_size(run_cli, tmp_path):
    result = run_cli("template", "subgroups", "--n", "1", "-o", tmp_path / "x.xlsx")
    assert result.code == 2 and "--n" in result.err
