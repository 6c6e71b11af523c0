"""Shared fixtures: the demo workbook, a CLI runner and input hashing."""

from __future__ import annotations

import hashlib
import json
import shutil
from dataclasses import dataclass
from pathlib import Path

import pytest

from sheettool.cli.main import main
from sheettool.demo.scenario import BUNDLED


@dataclass
class Run:
    code: int
    out: str
    err: str

    @property
    def json(self) -> dict:
        return json.loads(self.out)


@pytest.fixture
def run_cli(capsys):
    """Run the command line in-process and capture its exit code and output."""

    def _run(*args: str | Path) -> Run:
        code = main([str(a) for a in args])
        captured = capsys.readouterr()
        return Run(code, captured.out, captured.err)

    return _run


@pytest.fixture
def demo_copy(tmp_path: Path) -> Path:
    """A private copy of the bundled demo workbook."""
    target = tmp_path / "demo.xlsx"
    shutil.copyfile(BUNDLED, target)
    return target


def sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()
