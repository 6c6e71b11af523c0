"""Time of the data-shape checks for a typical base period (125 readings as 25 subgroups of 5, or 100 individuals).

Run from the repository root: PYTHONPATH=. python benchmarks/bench_data_shape.py
"""

from __future__ import annotations

import time

import numpy as np
from scipy import signal

from sheettool.core.data_shape import data_shape_report


def main() -> None:
    rng = np.random.default_rng(2026)
    cases = {
        "25 x 5 normal": (rng.normal(10.0, 0.1, (25, 5)), 5),
        "25 x 5 lognormal": (np.exp(rng.normal(0.0, 0.5, (25, 5))), 5),
        "100 individuals normal": (rng.normal(10.0, 0.1, 100), 1),
        "100 individuals AR(1) 0.7": (signal.lfilter([1.0], [1.0, -0.7], rng.standard_normal(100)), 1),
    }
    print(f"{'case':<28}{'seconds':>9}  family / shape ARL / r1 / AR(1) ARL")
    for name, (readings, n) in cases.items():
        start = time.perf_counter()
        report = data_shape_report(readings, n)
        elapsed = time.perf_counter() - start
        print(f"{name:<28}{elapsed:>9.2f}  {report.shape.family} / {report.shape.arl_shape:.0f} / "
              f"{report.dependence.r1:.2f} / {report.dependence.arl_ar1:.0f}")


if __name__ == "__main__":
    main()
