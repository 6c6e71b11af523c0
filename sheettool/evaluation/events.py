"""Signalled points taken together as events, and what the action log wrote of earlier events put back on them.

An event is a run of consecutive signalled points (on any statistic): what a technician looks into once. The action
log of an earlier output is read back as entries (dicts with the Event field names); an entry is put back on this
evaluation's event with the same first point (its first label, for dated points or the same input file), the others
are kept as earlier events, so what the technician wrote is never lost and an open event stays open until closed.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any

from sheettool.evaluation.results import Event, Signal

LOG_FIELDS = ("cause", "action", "by", "date", "closed")  # what the technician fills in, per event


def identity_of(part: str, characteristic: str, sheet: str) -> str:
    """A characteristic's identity: part, characteristic and sheet name joined by " / " (the empty ones left out, and
    a sheet named like its characteristic said once)."""
    parts: list[str] = []
    for text in (part, characteristic, sheet):
        text = (text or "").strip()
        if text and text.lower() not in (p.lower() for p in parts):
            parts.append(text)
    return " / ".join(parts)


def identity_key(identity: str) -> str:
    """An identity as matched: lower case, spaces and separators evened out."""
    return " / ".join(" ".join(part.lower().split()) for part in str(identity).split("/") if part.strip())


def events_of(signals: list[Signal], labels: list[str], notes: list[str]) -> list[Event]:
    """Runs of consecutive signalled points as events, each with its rules ("statistic: rule") and the input's
    notes of its subgroups."""
    by_point: dict[int, list[str]] = {}
    for s in signals:
        by_point.setdefault(s.point, []).extend(f"{s.statistic}: {r}" for r in s.rules)
    runs: list[list[int]] = []
    for point in sorted(by_point):
        if runs and point == runs[-1][-1] + 1:
            runs[-1].append(point)
        else:
            runs.append([point])
    events = []
    for run in runs:
        rules = tuple(dict.fromkeys(r for p in run for r in by_point[p]))
        note = "; ".join(dict.fromkeys(notes[p - 1] for p in run if notes[p - 1]))
        events.append(Event(first_point=run[0], last_point=run[-1], points=tuple(run), rules=rules, note=note,
                            first_label=labels[run[0] - 1], last_label=labels[run[-1] - 1]))
    return events


def attach_log(events: list[Event], entries: list[dict[str, Any]], file: str, dated: bool
               ) -> tuple[list[Event], list[Event]]:
    """(this evaluation's events with their log entries, the earlier events) from the entries of one identity.

    An entry belongs to an event of this evaluation when it starts at the same label and the labels are dates, or
    it was found in this same file; otherwise it is an earlier event, kept as written.
    """
    now = list(events)
    earlier: list[Event] = []
    for entry in entries:
        found = str(entry.get("found_in") or "")
        same = next((i for i, e in enumerate(now) if e.first_label == str(entry.get("first_label") or "")
                     and (dated or found == file) and not e.found_in), None)
        written = {k: str(entry.get(k) or "") for k in LOG_FIELDS}
        if same is not None:
            now[same] = replace(now[same], **written, found_in=found or file)
        else:
            first, last = _whole(entry.get("first_point")), _whole(entry.get("last_point"))
            earlier.append(Event(
                first_point=first, last_point=last, points=tuple(range(first, max(first, last) + 1)) if first else (),
                rules=tuple(r for r in str(entry.get("rules") or "").split("; ") if r),
                note=str(entry.get("note") or ""), first_label=str(entry.get("first_label") or ""),
                last_label=str(entry.get("last_label") or ""), found_in=found, **written))
    return now, earlier


def _whole(text: object) -> int:
    """A point number read back from the log (0 where it is not a whole number)."""
    try:
        return max(0, int(float(str(text))))
    except ValueError:
        return 0
