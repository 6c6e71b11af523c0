"""Print how long evaluate() takes per chart kind on a large month of invented data (fixed seed).

Run: PYTHONPATH=. python benchmarks/charts_speed.py [SUBGROUPS]
"""

from __future__ import annotations

import sys
import time

import numpy as np

from sheettool.core.data import Characteristic, Counts, Measurements
from sheettool.evaluation.evaluate import evaluate
from sheettool.evaluation.options import EvaluationOptions


def main(m: int = 10_000) -> None:
    """Time each chart kind on m subgroups, with capability and revision on."""
    rng = np.random.default_rng(20261202)
    cases = {
        "xbar-r": Measurements(rng.normal(10, 1, (m, 5))),
        "xbar-s": Measurements(rng.normal(10, 1, (m, 12))),
        "individuals": Measurements(rng.normal(10, 1, (m, 1))),
        "ewma": Measurements(rng.normal(10, 1, (m, 5))),
        "cusum": Measurements(rng.normal(10, 1, (m, 5))),
        "p": Counts(rng.binomial(200, 0.05, m), rng.integers(150, 250, m)),
        "u": Counts(rng.poisson(4, m), rng.integers(1, 6, m), "defects"),
    }
    for chart, data in cases.items():
        options = EvaluationOptions(chart=chart, lsl=5.0, usl=15.0, revise=True)
        start = time.perf_counter()
        evaluate(Characteristic(chart, data), "bench", options)
        print(f"{chart:7s} {m} subgroups: {time.perf_counter() - start:.3f} s")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 10_000)
