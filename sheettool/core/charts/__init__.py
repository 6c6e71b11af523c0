"""Chart kinds: from a characteristic's data to the plotted statistics and their control limits.

Each kind is a small class (variables.py, attributes.py, timeweighted.py) sharing the result
types and helpers of base.py; the registry `CHART_KINDS` maps the JSON name of a kind to its
class, so adding a kind is one class and one registry line.
"""

from __future__ import annotations

from sheettool.core.charts.attributes import CChart, NPChart, PChart, UChart
from sheettool.core.charts.base import ChartFit, ChartKind, PlottedStatistic, beyond_limits
from sheettool.core.charts.timeweighted import Cusum, Ewma
from sheettool.core.charts.variables import IndividualsMR, XbarR, XbarS

CHART_KINDS: dict[str, type[ChartKind]] = {
    cls.name: cls for cls in (XbarR, XbarS, IndividualsMR, PChart, NPChart, CChart, UChart, Ewma, Cusum)
}


def chart_kind(name: str) -> ChartKind:
    """The chart kind of a JSON name; ValueError listing the known names otherwise."""
    key = str(name).strip().lower()
    if key not in CHART_KINDS:
        raise ValueError(f"chart '{name}' is not known; use one of: {', '.join(CHART_KINDS)}")
    return CHART_KINDS[key]()


__all__ = ["CHART_KINDS", "ChartFit", "ChartKind", "PlottedStatistic", "beyond_limits", "chart_kind"]
