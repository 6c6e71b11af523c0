"""Signals are points: each signalled point once per statistic with every rule it broke and its subgroup's note;
consecutive signalled points form events; carried limits are matched by identity."""

import numpy as np
import pytest

from sheettool.core.data import Characteristic, Measurements
from sheettool.evaluation.carried import match_entry
from sheettool.evaluation.evaluate import fit_characteristic
from sheettool.evaluation.events import attach_log, identity_of
from sheettool.evaluation.options import EvaluationOptions

SIGMA = 1.0


def _individuals(values: np.ndarray, notes: list[str] | None = None) -> Characteristic:
    return Characteristic("bore", Measurements(np.asarray(values, float)[:, None]), notes=notes or [])


def _standard(rules: str) -> EvaluationOptions:
    return EvaluationOptions(rules=rules, standard={"mean": 0.0, "sigma": SIGMA})


def test_a_point_breaking_two_rules_is_one_signal_and_runs_are_events():
    values = np.zeros(30)
    values[9] = 2.5  # beyond 2 sigma: with point 11, 2/3>2 completes at point 11 (and again at 12)
    values[10:12] = 3.5, 3.2  # points 11 and 12 are also beyond 3 sigma
    values[20] = -3.4  # a lone point beyond 3 sigma
    notes = [""] * 30
    notes[10] = "gauge dropped"
    fitted = fit_characteristic(_individuals(values, notes), "Bore", _standard("1/1>3,2/3>2"))
    located = [s for s in fitted.signals if s.statistic == "individual"]
    # independent count with the standard values: |x - 0| / sigma beyond 3, and the 2-of-3 beyond 2 on one side
    # (common practice: the 3-sigma limit and the two-of-three zone test)
    beyond = {i + 1 for i in np.flatnonzero(np.abs(values) > 3 * SIGMA)}
    assert beyond == {11, 12, 21}
    assert [(s.point, s.rules) for s in located] == [(11, ("1/1>3", "2/3>2")), (12, ("1/1>3", "2/3>2")),
                                                     (21, ("1/1>3",))]
    assert located[0].note == "gauge dropped" and located[1].note == ""
    assert fitted.points_signalled == len({s.point for s in fitted.signals})
    runs = [(e.first_point, e.last_point) for e in fitted.events]
    assert runs[0] == (11, 12) and (21, 21) in runs
    assert fitted.events[0].note == "gauge dropped" and fitted.events_open == len(fitted.events)


def test_the_log_goes_back_on_the_same_event_or_stays_as_an_earlier_one():
    values = np.zeros(30)
    values[4] = 4.0
    fitted = fit_characteristic(_individuals(values), "Bore", _standard("1/1>3"))
    (event,) = [e for e in fitted.events if e.first_point == 5]
    entries = [{"identity": "Bore", "first_label": "5", "first_point": "5", "last_point": "5", "cause": "burr",
                "closed": "yes", "found_in": "bore.xlsx"},
               {"identity": "Bore", "first_label": "12", "first_point": "12", "last_point": "13", "cause": "",
                "closed": "", "found_in": "bore-2026-03.xlsx"}]
    now, earlier = attach_log(list(fitted.events), entries, "bore.xlsx", dated=False)
    mine = next(e for e in now if e.first_point == event.first_point)
    assert (mine.cause, mine.is_open) == ("burr", False)
    (old,) = earlier
    assert (old.first_point, old.last_point, old.points, old.is_open, old.found_in) == (
        12, 13, (12, 13), True, "bore-2026-03.xlsx")


@pytest.mark.parametrize(("entries", "how", "warned"), [
    ({"Bore": {"identity": "HF-220 / bore diameter / Bore"}}, "identity", False),
    ({"old.xlsx :: Bore": {"sheet": "Bore"}}, "file name", True),  # a block written before identities: by name
    ({"Bore": {"identity": "Bore"}}, "file name", True),  # a part cell added since: by name, said
    ({"Bore": {"identity": "HF-300 / seal groove / Bore"}}, "", True),  # another part: never carried
])
def test_carried_limits_match_by_identity_then_by_name(entries, how, warned):
    match = match_entry(entries, identity_of("HF-220", "Bore diameter", "Bore"), "Bore", "old.xlsx")
    assert match.how == how and bool(match.warning) == warned
    assert (match.entry is None) == (how == "")
