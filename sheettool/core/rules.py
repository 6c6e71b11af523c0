"""Pattern rules: one grammar, parsed into Rule objects and applied to standardized points.

Grammar (comma separated):
  K/M>Z    K of the last M points more than Z standard errors from the center, all on one side
  K/M<Z    K of the last M points within Z standard errors of the center
  K/M>>Z   K of the last M points more than Z standard errors from the center, either side
  trend N      N points in a row, each higher than the one before (or each lower)
  alternate N  N points in a row alternating up and down
Presets: "beyond-limits", "zones", "all" (see PRESETS). While fewer than M points exist, the window is
what there is, as in the Markov-chain treatment of Champ and Woodall (1987).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from sheettool.core.presets import EARLIER_PRESETS, PRESETS

_ZONE = re.compile(r"^(\d+)\s*/\s*(\d+)\s*(>>|>|<)\s*(\d+(?:\.\d*)?|\.\d+)$")
_RUN = re.compile(r"^(trend|alternate)\s+(\d+)$")
LIMIT_ULPS = 4  # a value this close to a limit, in units in the last place, lies on it


@dataclass(frozen=True)
class Rule:
    """A parsed rule. kind is "same_side", "within", "either_side", "trend" or "alternate"."""

    kind: str
    k: int
    m: int
    z: float = 0.0

    @property
    def text(self) -> str:
        """The rule in the grammar's own spelling."""
        if self.kind == "trend" or self.kind == "alternate":
            return f"{self.kind} {self.m}"
        op = {"same_side": ">", "within": "<", "either_side": ">>"}[self.kind]
        return f"{self.k}/{self.m}{op}{_decimal(self.z)}"

    @property
    def words(self) -> str:
        """The rule explained in plain words."""
        if self.kind == "trend":
            return f"{self.m} points in a row each higher than the one before, or each lower"
        if self.kind == "alternate":
            return f"{self.m} points in a row alternating up and down"
        z = f"{_decimal(self.z)} standard error{'s' if self.z != 1 else ''}"
        if self.k == self.m == 1 and self.kind == "same_side":
            return f"a point more than {z} from the center line"
        lead = f"{self.k} of the last {self.m} points" if self.k < self.m else f"{self.m} points in a row"
        if self.kind == "same_side":
            if self.z == 0:
                return f"{lead} on the same side of the center line"
            return f"{lead} more than {z} from the center line, on the same side"
        if self.kind == "within":
            return f"{lead} within {z} of the center line"
        return f"{lead} more than {z} from the center line, on either side"

    @property
    def is_zone(self) -> bool:
        """True for the K/M forms, whose run length has an exact Markov chain."""
        return self.kind in ("same_side", "within", "either_side")


def _decimal(value: float) -> str:
    """A number as plain decimals (never exponent notation), so the spelling parses back."""
    return np.format_float_positional(value, trim="-")


def parse_rules(text: str) -> list[Rule]:
    """Parse a comma-separated rule list or preset name; raise ValueError naming the bad part."""
    if not text or not text.strip():
        raise ValueError(f"no rules given; use a preset ({', '.join(PRESETS)}) or rules like 1/1>3")
    rules: list[Rule] = []
    for raw in text.split(","):
        part = " ".join(raw.strip().lower().split())
        part = EARLIER_PRESETS.get(part, part)
        if part in PRESETS:
            rules.extend(r for r in parse_rules(PRESETS[part]) if r not in rules)
            continue
        rule = _parse_one(part)
        if rule not in rules:
            rules.append(rule)
    return rules


def _parse_one(part: str) -> Rule:
    zone = _ZONE.match(part)
    if zone:
        k, m, op, z = int(zone[1]), int(zone[2]), zone[3], float(zone[4])
        if not 1 <= k <= m:
            raise ValueError(f"rule '{part}': K must be from 1 to M (K of the last M points)")
        if m > 200:
            raise ValueError(f"rule '{part}': M may be at most 200 points")
        if z <= 0 and op != ">":
            raise ValueError(f"rule '{part}': Z must be a positive number of standard errors")
        kind = {">": "same_side", "<": "within", ">>": "either_side"}[op]
        return Rule(kind, k, m, z)
    run = _RUN.match(part)
    if run:
        n = int(run[2])
        if n < 3 or n > 200:
            raise ValueError(f"rule '{part}': the run length must be from 3 to 200 points")
        return Rule(run[1], n, n)
    raise ValueError(
        f"rule '{part}' is not understood; write K/M>Z, K/M<Z, K/M>>Z, 'trend N' or "
        f"'alternate N', or a preset: {', '.join(PRESETS)}"
    )


@dataclass(frozen=True)
class Hit:
    """A rule's pattern completed at `point` (0-based), formed by `points` (0-based)."""

    rule: Rule
    point: int
    points: tuple[int, ...]


def find_hits(z: np.ndarray, rules: list[Rule]) -> list[Hit]:
    """Apply rules to standardized points z ((x - center) / standard error); NaNs are skipped."""
    z = np.asarray(z, dtype=float)
    present = np.flatnonzero(~np.isnan(z))
    zc = z[present]
    hits: list[Hit] = []
    for rule in rules:
        for end, members in _rule_hits(zc, rule):
            hits.append(Hit(rule, int(present[end]), tuple(int(present[i]) for i in members)))
    hits.sort(key=lambda h: (h.point, rules.index(h.rule)))
    return hits


def on_limit(values: np.ndarray, limit: np.ndarray | float) -> np.ndarray:
    """True where a value equals a limit as computed, to LIMIT_ULPS units in the last place of the larger (a
    reading stored as the displayed limit lies on it, whatever the rounding of the limit's arithmetic)."""
    values, limit = np.asarray(values, dtype=float), np.asarray(limit, dtype=float)
    with np.errstate(invalid="ignore"):
        return np.abs(values - limit) <= LIMIT_ULPS * np.spacing(np.maximum(np.abs(values), np.abs(limit)))


def standardized(values: np.ndarray, center: np.ndarray, se: np.ndarray, rules: list[Rule]) -> np.ndarray:
    """(values - center) / se for the rules, with a point on a rule's threshold center ± Z se (compared in data
    units by `on_limit`) set to exactly ±Z: on a limit is neither beyond nor within, for every rule alike."""
    values = np.asarray(values, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        z = (values - center) / se
    for level in sorted({r.z for r in rules if r.is_zone}):
        for sign in (1.0, -1.0) if level > 0 else (1.0,):
            z = np.where(on_limit(values, center + sign * level * se), sign * level, z)
    return z


def zone_flags(rule: Rule, z: np.ndarray) -> list[np.ndarray]:
    """Which points count toward a K/M rule: one flag array per side that is counted separately.

    A same-side rule counts the upper and the lower side apart; the others have one flag.
    Comparisons are strict, so a point exactly on Z is neither beyond nor within.
    """
    z = np.asarray(z, dtype=float)
    if rule.kind == "same_side":
        return [z > rule.z, z < -rule.z]
    if rule.kind == "within":
        return [np.abs(z) < rule.z]
    if rule.kind == "either_side":
        return [np.abs(z) > rule.z]
    raise ValueError(f"rule '{rule.text}' is not a K/M rule")


def _rule_hits(z: np.ndarray, rule: Rule) -> list[tuple[int, np.ndarray]]:
    if rule.kind == "trend" or rule.kind == "alternate":
        return _run_hits(z, rule)
    out: list[tuple[int, np.ndarray]] = []
    for flag in zone_flags(rule, z):
        csum = np.concatenate([[0], np.cumsum(flag)])
        idx = np.arange(len(z))
        start = np.maximum(idx - rule.m + 1, 0)
        count = csum[idx + 1] - csum[start]
        for end in np.flatnonzero(flag & (count >= rule.k)):
            window = np.arange(start[end], end + 1)
            out.append((int(end), window[flag[window]]))
    return out


def _run_hits(z: np.ndarray, rule: Rule) -> list[tuple[int, np.ndarray]]:
    steps = np.sign(np.diff(z))
    # a trend of N points is N - 1 steps one way; an alternation of N points, N - 2 sign changes
    good = [steps > 0, steps < 0] if rule.kind == "trend" else [(steps[1:] * steps[:-1]) < 0]
    need = rule.m - 1 if rule.kind == "trend" else rule.m - 2
    out: list[tuple[int, np.ndarray]] = []
    for flag in good:
        run = 0
        for i, ok in enumerate(flag):
            run = run + 1 if ok else 0
            if run >= need:
                end = i + (1 if rule.kind == "trend" else 2)
                out.append((end, np.arange(end - rule.m + 1, end + 1)))
    return out
