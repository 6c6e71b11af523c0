"""Units inspected that are not whole (an area inspected) are the size of a u chart, by header or by the chart."""

import numpy as np
import openpyxl
import pytest

from sheettool.evaluation.evaluate import fit_characteristic
from sheettool.evaluation.options import EvaluationOptions
from sheettool.settings import Setting
from sheettool.workbook.reader import read_workbook


def _book(path, size_head, rng):
    """20 panels of 0.8 to 3.5 m², defects Poisson at 4.2 per m² (invented, fixed seed)."""
    area = np.round(rng.uniform(0.8, 3.5, 20), 1)
    defects = rng.poisson(4.2 * area)
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Panels"
    ws.append(["Panel", size_head, "Defects"])
    for i in range(20):
        ws.append([f"P{i + 1}", float(area[i]), int(defects[i])])
    wb.save(path)
    return area, defects


@pytest.mark.parametrize(("size_head", "chart"), [("Area (m²)", None), ("Units", None), ("Area (m²)", "u"),
                                                  ("Panel size", "u")])
def test_fractional_units_inspected_make_a_u_chart(tmp_path, size_head, chart):
    area, defects = _book(tmp_path / "u.xlsx", size_head, np.random.default_rng(13))
    assert not all(float(a).is_integer() for a in area)
    cli = {"chart": Setting("chart", chart, "option --chart")} if chart else None
    (sheet,) = read_workbook(tmp_path / "u.xlsx", cli).sheets
    data = sheet.characteristic.data
    assert sheet.layout == "attribute counts"
    np.testing.assert_allclose(data.inspected, area, rtol=0, atol=1e-12)
    fitted = fit_characteristic(sheet.characteristic, sheet.sheet, EvaluationOptions(chart=chart))
    assert fitted.fit.chart == "u"
    (stat,) = fitted.fit.statistics
    # The u chart's center is total defects over total area, limits u-bar ± 3 sqrt(u-bar / a_i)
    # (Montgomery 2009, sec. 7.3.2; computed here independently), to 1e-12.
    ubar = defects.sum() / area.sum()
    assert stat.center == pytest.approx(ubar, rel=1e-12)
    np.testing.assert_allclose(stat.ucl, ubar + 3 * np.sqrt(ubar / area), rtol=1e-12)


def test_fractional_units_for_defectives_are_impossible_rows(tmp_path):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.append(["Lot", "Inspected", "Rejects"])
    for i in range(20):
        ws.append([f"L{i + 1}", 100.5 if i == 3 else 100, i % 4])
    wb.save(tmp_path / "p.xlsx")
    (sheet,) = read_workbook(tmp_path / "p.xlsx").sheets
    assert sheet.characteristic.data.kind == "defectives"
    assert "count impossible" in sheet.characteristic.notes[3]
    assert any("5" in p.message and "count" in p.message for p in sheet.problems)
