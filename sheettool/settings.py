"""Settings: named values that shape an evaluation, each remembered with where it came from.

Sources, lowest priority first: the built-in default, the workbook's `settings` sheet (whole
workbook, then a per-sheet section), labelled cells above a sheet's header, command-line options.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Setting:
    """A setting's value and its origin, e.g. "cell 'Bore'!B2", "settings sheet row 4",
    "option --rules", "default"."""

    name: str
    value: object
    origin: str


# The settings sheettool knows: name -> plain description (shown in the method notes).
KNOWN_SETTINGS: dict[str, str] = {
    "lsl": "lower specification limit",
    "usl": "upper specification limit",
    "target": "target or nominal value",
    "unit": "unit of measurement",
    "subgroup_size": "readings per subgroup",
    "chart": "chart kind (xbar-r, xbar-s, i-mr, p, np, c, u, ewma, cusum)",
    "rules": "pattern rules or preset (limits, zones, all)",
    "interval_hours": "hours between subgroups (sampling interval)",
    "hours_per_month": "production hours per month",
    "limits_from": "base period that sets the limits (all, first N, a date range)",
    "mean": "standard value of the process mean",
    "sigma": "standard value of the process standard deviation",
    "p0": "standard value of the proportion defective",
    "c0": "standard value of the defects per unit",
    "lambda": "EWMA weight",
    "L": "EWMA limit width in standard errors",
    "k": "CUSUM reference value in sigmas",
    "h": "CUSUM decision interval in sigmas",
    "confidence": "confidence level of intervals",
    "revise": "drop signalling base points and recompute the limits (yes/no)",
}
