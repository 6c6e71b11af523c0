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
    "shift_units": "shift to detect (in the characteristic's unit)",
    "detect_arl": "required ARL at the shift to detect (points, at most)",
    "detect_hours": "time to detect the shift (hours, at most)",
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
    "limitsfrom": "limits_from", "limitsbase": "limits_from", "baseperiod": "limits_from",
    "limitsbaseperiod": "limits_from", "limitperiod": "limits_from",
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
    "shifttodetectunits": "shift_units", "shiftthatmattersunits": "shift_units", "shiftinunits": "shift_units",
    "requiredarlatshift": "detect_arl", "detectwithinpoints": "detect_arl", "arlatshiftatmost": "detect_arl",
    "arlatshift": "detect_arl",
    "detectwithinhours": "detect_hours", "timetodetect": "detect_hours", "timetodetecth": "detect_hours",
    "hourstodetect": "detect_hours", "timetodetecthours": "detect_hours",
    "detectwithinminutes": "detect_minutes", "timetodetectmin": "detect_minutes",
    "timetodetectminutes": "detect_minutes",
}
# Label forms with a value in minutes, converted to the hours setting by the reader of the setting.
MINUTE_FORMS: dict[str, str] = {"interval_minutes": "interval_hours", "detect_minutes": "detect_hours"}
# A setting in process standard deviations whose label names another unit in brackets ("Shift to detect (mm)")
# means the same in the characteristic's unit.
_IN_UNITS: dict[str, str] = {"shift": "shift_units"}
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
