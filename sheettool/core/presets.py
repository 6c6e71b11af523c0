"""The rule presets: their names, the rules each holds and what that is in words.

Kept apart from rules.py (and free of numpy) so that the command line can list them in --help at once.
"""

from __future__ import annotations

PRESETS: dict[str, str] = {
    "beyond-limits": "1/1>3",
    "zones": "1/1>3,2/3>2,4/5>1,8/8>0",
    "all": "1/1>3,2/3>2,4/5>1,8/8>0,trend 6,alternate 14,15/15<1,8/8>>1",
}

# What each preset holds, in words (for --rules help, the templates and the docs).
PRESET_WORDS: dict[str, str] = {
    "beyond-limits": "a single point beyond a control limit",
    "zones": "beyond a limit, 2 of 3 beyond 2 standard errors, 4 of 5 beyond 1, 8 in a row on one side",
    "all": "the zones rules, 6 rising or falling, 14 alternating, 15 within 1 standard error, 8 beyond 1 either side",
}
# Preset names of earlier versions, still read: name -> the preset's name now.
EARLIER_PRESETS = {"limits": "beyond-limits"}
DEFAULT_RULES = "beyond-limits"


def presets_help() -> str:
    """The presets and what each holds, for --rules help and the templates."""
    return "; ".join(f"{name}: {words}" for name, words in PRESET_WORDS.items())
