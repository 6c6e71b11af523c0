"""Read one sheet, step by step: the grid of cell values, where the data sits, what each column means,
the subgroups in the sheet's layout, and the findings; each step is a module of its own.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from sheettool.base.errors import InputError
from sheettool.base.problems import Problem
from sheettool.core.data import Characteristic
from sheettool.settings import Setting
from sheettool.settings.convert import merge
from sheettool.workbook.reader.cell_grid import CellGrid, cell_grid, fill_merged, value_cells
from sheettool.workbook.reader.columns import Columns, columns_meaning, sheet_columns, unit_of
from sheettool.workbook.reader.findings import account, example_rows, exclusions, problems
from sheettool.workbook.reader.header import Frame, find_header, frame_of
from sheettool.workbook.reader.labels import labelled_settings, unknown_labels
from sheettool.workbook.reader.layouts import subgroups
from sheettool.workbook.reader.model import SheetRead
from sheettool.workbook.reader.raw_sheet import RawSheet

_READER_SETTINGS = ("unit", "subgroup_size", "chart")  # the settings the reader itself needs


@dataclass
class SheetParts:
    """What the first steps found in one sheet, handed to the steps that make the SheetRead."""

    raw: RawSheet
    grid: CellGrid
    frame: Frame
    columns: Columns
    labelled: dict[str, Setting]  # labelled cells above the header
    resolved: dict[str, Setting]  # unit, subgroup size and chart, from all the layers
    renamed: list[Problem]  # notes on labels written under a setting's earlier name


def read_sheet(raw: RawSheet, workbook_layer: dict[str, Setting], cli_layer: dict[str, Setting]) -> SheetRead:
    """Read one sheet. The settings sheet's and the command line's settings are given for the two
    the reader itself needs (unit, subgroup size), beside the sheet's labelled cells found here."""
    grid = cell_grid(raw.rows)
    header, units_row = find_header(grid)  # before merged cells are filled: a wide title must not win
    if header is not None:
        fill_merged(grid, raw.merged, header + 1)
    labelled, renamed = labelled_settings(raw.title, grid.rows, header or 0)
    resolved = _reader_settings(workbook_layer, labelled, cli_layer)
    frame = frame_of(grid, header, units_row)
    chart = resolved["chart"].value if "chart" in resolved else None
    columns = sheet_columns(grid, header, frame.data, chart)
    return _sheet_read(SheetParts(raw=raw, grid=grid, frame=frame, columns=columns, labelled=labelled,
                                  resolved=resolved, renamed=renamed))


def _reader_settings(*layers: dict[str, Setting]) -> dict[str, Setting]:
    """The unit and subgroup size merged from the layers, later layers winning."""
    try:
        return merge(*[{k: s for k, s in layer.items() if k in _READER_SETTINGS} for layer in layers])
    except ValueError as exc:
        raise InputError(str(exc)) from None


def _sheet_read(parts: SheetParts) -> SheetRead:
    """The subgroups, their exclusions and the findings, put together as a SheetRead."""
    title, frame, columns = parts.raw.title, parts.frame, parts.columns
    examples = example_rows(parts.grid.rows, columns.first("note"), frame.data)
    if examples:
        frame = replace(frame, data=[r for r in frame.data if r not in examples])
        if not frame.data:
            raise InputError(f"only the template's worked example (row {examples[0] + 1}) holds data; type the "
                             "readings in the rows below it")
    cells = value_cells(parts.grid, title, frame.data, columns.values)
    shape = subgroups(parts.grid, columns, cells, parts.resolved.get("subgroup_size"))
    out = exclusions(shape)
    seen = account(parts.raw, frame, columns, cells)
    unit = parts.resolved["unit"].value if "unit" in parts.resolved else unit_of(
        columns.names, parts.grid.rows, frame.units_row, cells.columns if columns.count is None else [])
    characteristic = Characteristic(name=title, data=shape.data, labels=shape.labels, unit=str(unit),
                                    excluded=out.excluded, notes=out.notes, dates=shape.dates)
    return SheetRead(
        sheet=title, characteristic=characteristic, header_row=_one_based(frame.header), first_row=frame.first,
        last_row=frame.last, columns=columns_meaning(columns.names, columns.roles, shape.layout),
        header=shape.header, rows=shape.rows, layout=shape.layout, settings=parts.labelled,
        readings=shape.readings, blanks=cells.blanks, blank_rows=frame.blank_rows, not_numbers=seen.not_numbers,
        hidden_rows=seen.hidden_rows, hidden_columns=seen.hidden_columns, short_subgroups=out.short,
        units_row=_one_based(frame.units_row), formulas_without_value=seen.formulas_without_value,
        problems=[*parts.renamed, *problems(title, seen, shape, out)] + [
            Problem("note", "the template's worked example was left out: it is not data", sheet=title,
                    cell=f"row {r + 1}") for r in examples] + unknown_labels(title, parts.grid.rows, frame.header or 0),
    )


def _one_based(row: int | None) -> int:
    """A 0-based row index as a sheet row number; 0 for none."""
    return row + 1 if row is not None else 0
