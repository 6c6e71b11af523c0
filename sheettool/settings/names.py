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
    "chart": "chart code (xbar-r, xbar-s, individuals, p, np, c, u, ewma, cusum)",
    "rules": "pattern rules or preset (beyond-limits, zones, all)",
    "interval_hours": "hours between subgroups (sampling interval)",
    "hours_per_month": "production hours per month",
    "base_period": "base period: the subgroups that set the limits (all, first N, a date range)",
    "mean": "standard value of the process mean",
    "sigma": "standard value of the process standard deviation",
    "p0": "standard value of the proportion defective",
    "c0": "standard value of the defects per unit",
    "lambda": "EWMA weight of the newest point, lambda",
    "L": "EWMA limit width, L, in standard errors of the EWMA",
    "k": "CUSUM reference value, k, in standard errors",
    "h": "CUSUM decision interval, h, in standard errors",
    "confidence": "confidence level of intervals",
    "revise": "drop signalling base points and recompute the limits (yes/no)",
    "new_limits": "set the limits from this workbook's own base period, not carried from an earlier output "
                  "(yes/no; sheettool watch)",
}
KNOWN_SETTINGS["part"] = "part number or name, as written above the header"
KNOWN_SETTINGS["characteristic"] = ("the characteristic measured (with the part and sheet, what identifies it "
                                    "month to month)")
# What the monitoring scheme must achieve (the keys of sheettool.core.design.REQUIREMENT_KEYS).
KNOWN_SETTINGS.update({
    "arl_in_control": "required in-control ARL (points between false alarms, at least)",
    "false_alarms_per_month": "allowed false alarms per month (at most)",
    "shift": "shift to detect (process standard deviations)",
    "shift_in_units": "shift to detect (in the characteristic's unit)",
    "arl_at_shift": "ARL at the shift to detect (points, at most)",
    "ats_hours": "ATS at the shift to detect: hours to signal it (at most)",
})

# Words a technician may write for a setting, after `label_key` (lower case, letters and digits
# only). The canonical names map to themselves, so "LSL", "lsl" and "L.S.L." all find "lsl".
SYNONYMS: dict[str, str] = {
    **{"".join(ch for ch in name.lower() if ch.isalnum()): name for name in KNOWN_SETTINGS},  # as label_key
    # Not "min"/"max", "upper limit" or "tolerance": above a header those are often observed
    # extremes, control limits or deviations from nominal, not specification limits.
    "lowerspec": "lsl", "lowerspeclimit": "lsl", "lowerspecification": "lsl",
    "lowerspecificationlimit": "lsl", "lowerspecificationlimitlsl": "lsl",
    "upperspec": "usl", "upperspeclimit": "usl", "upperspecification": "usl",
    "upperspecificationlimit": "usl", "upperspecificationlimitusl": "usl",
    "nominal": "target", "nominalvalue": "target", "nom": "target", "targetvalue": "target",
    "units": "unit", "uom": "unit", "unitofmeasure": "unit", "unitofmeasurement": "unit",
    "samplesize": "subgroup_size", "subgroupsize": "subgroup_size", "n": "subgroup_size",
    "readingspersubgroup": "subgroup_size", "partspersubgroup": "subgroup_size",
    "charttype": "chart", "chartkind": "chart", "controlchart": "chart",
    "rule": "rules", "rulestouse": "rules", "patternrules": "rules",
    "interval": "interval_hours", "samplinginterval": "interval_hours", "samplingintervalh": "interval_hours",
    "intervalh": "interval_hours", "intervalhours": "interval_hours", "samplingintervalhours": "interval_hours",
    "samplingintervalmin": "interval_minutes", "intervalmin": "interval_minutes",
    "samplingintervalminutes": "interval_minutes", "intervalminutes": "interval_minutes",
    "hourspermonth": "hours_per_month", "productionhourspermonth": "hours_per_month",
    "monthlyhours": "hours_per_month", "hoursmonth": "hours_per_month",
    "limitsbaseperiod": "base_period", "limitperiod": "base_period", "limitsbase": "base_period",
    "partnumber": "part", "partno": "part", "partnr": "part", "partname": "part", "partid": "part",
    "ewmalambda": "lambda", "ewmaweight": "lambda", "ewmal": "L", "cusumk": "k", "cusumh": "h",
    "standardmean": "mean", "standardsigma": "sigma", "confidencelevel": "confidence",
    # Requirements. A plain "Shift" is no label (above a header it is usually the work shift).
    "requiredincontrolarl": "arl_in_control", "incontrolarlatleast": "arl_in_control",
    "incontrolarl": "arl_in_control", "minimumincontrolarl": "arl_in_control", "requiredarl0": "arl_in_control",
    "falsealarmspermonthatmost": "false_alarms_per_month", "allowedfalsealarmspermonth": "false_alarms_per_month",
    "falsealarmspermonth": "false_alarms_per_month", "maxfalsealarmspermonth": "false_alarms_per_month",
    "shifttodetect": "shift", "shiftthatmatters": "shift", "shifttodetectsigma": "shift",
    "shifttodetectsd": "shift", "shiftinsigma": "shift",
    "shifttodetectunits": "shift_in_units", "shiftthatmattersunits": "shift_in_units", "shiftinunits": "shift_in_units",
    "requiredarlatshift": "arl_at_shift", "detectwithinpoints": "arl_at_shift", "arlatshiftatmost": "arl_at_shift",
    "arlatshift": "arl_at_shift",
    "detectwithinhours": "ats_hours", "timetodetect": "ats_hours", "timetodetecth": "ats_hours",
    "hourstodetect": "ats_hours", "timetodetecthours": "ats_hours", "hourstosignal": "ats_hours",
    "atsatmost": "ats_hours", "atsatmosthours": "ats_hours", "atsh": "ats_hours", "atsatshift": "ats_hours",
    "atsatshifthours": "ats_hours", "atsmin": "ats_minutes", "atsminutes": "ats_minutes",
    "detectwithinminutes": "ats_minutes", "timetodetectmin": "ats_minutes",
    "timetodetectminutes": "ats_minutes",
}
# Labels of earlier versions (as label_key) -> (setting, the label to write now): still read, with a note.
EARLIER_LABELS: dict[str, tuple[str, str]] = {
    "limitsfrom": ("base_period", "Base period"), "shiftunits": ("shift_in_units", "shift_in_units"),
    "detecthours": ("ats_hours", "ats_hours"), "detectarl": ("arl_at_shift", "arl_at_shift"),
}
SYNONYMS.update({key: name for key, (name, _) in EARLIER_LABELS.items()})
# Label forms with a value in minutes, converted to the hours setting by the reader of the setting.
MINUTE_FORMS: dict[str, str] = {"interval_minutes": "interval_hours", "ats_minutes": "ats_hours"}
# A setting in process standard deviations whose label names another unit in brackets ("Shift to detect (mm)")
# means the same in the characteristic's unit.
_IN_UNITS: dict[str, str] = {"shift": "shift_in_units"}
_SIGMA_WORDS = {"sigma", "sigmas", "sd", "σ", "standarddeviations", "standarddeviation", "s"}


def label_key(text: str) -> str:
    """A label reduced for matching: lower case, letters and digits only ("Sampling interval (h)" ->
    "samplingintervalh")."""
    return "".join(ch for ch in text.lower() if ch.isalnum())


def setting_name(label: str) -> str | None:
    """The canonical setting a label names, or None. The MINUTE_FORMS names are label forms only: their
    value is converted to hours by the reader of the setting."""
    key = label_key(label)
    if key in SYNONYMS:
        return SYNONYMS[key]
    # A unit in brackets after the words, e.g. "USL (mm)": match the words alone.
    words, _, unit = label.replace("[", "(").partition("(")
    bare = label_key(words)
    name = SYNONYMS.get(bare) if bare else None
    if name in _IN_UNITS and label_key(unit) not in _SIGMA_WORDS:
        return _IN_UNITS[name]
    return name


def earlier_label_note(label: str) -> str | None:
    """A note when `label` is a setting's earlier name (read all the same), saying what to write now; else None."""
    key = label_key(label.replace("[", "(").partition("(")[0])
    if key not in EARLIER_LABELS:
        return None
    _, now = EARLIER_LABELS[key]
    return f"the label '{label.strip()}' is an earlier name, read as '{now}'; write '{now}' instead"
