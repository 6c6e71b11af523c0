"""The scheme in use, judged whole: pattern rules on the location chart only, and the same figures in `design`."""

import numpy as np

from sheettool.core.data import Characteristic, Measurements
from sheettool.core.rules import find_hits, parse_rules
from sheettool.evaluation.evaluate import fit_characteristic
from sheettool.evaluation.options import EvaluationOptions


def test_pattern_rules_apply_to_the_location_chart_only():
    # Subgroups of 5 whose ranges climb slowly above their center for a stretch (4 of 5 beyond 1 sigma on the R
    # chart, no range beyond its upper limit) while the means stay put: under the zones rules the R chart keeps
    # its limit rule alone, so no range signal (the pattern rules assume normal, independent points).
    rng = np.random.default_rng(3)
    base = rng.normal(0.0, 1.0, (30, 5))
    base -= base.mean(axis=1, keepdims=True)  # every mean exactly 0: no location signal
    base[20:26] *= 1.6  # ranges about 1.6 times their usual size: beyond 1 sigma of the R chart, within its limits
    fitted = fit_characteristic(Characteristic("bore", Measurements(base)), "s", EvaluationOptions(rules="zones"))
    ranges = next(s for s in fitted.fit.statistics if s.name == "range")
    z = (ranges.values - ranges.center) / ranges.sigma
    assert find_hits(z, parse_rules("zones")) and np.all(z < 3.0)  # the pattern is there on the R chart
    assert [s for s in fitted.signals if s.statistic == "range"] == []
    assert fitted.signals == []
