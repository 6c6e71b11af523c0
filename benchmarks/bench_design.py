"""Benchmark: a scheme design over about 300 candidates (target: under 10 s in a fresh process).

Run: PYTHONPATH=. python benchmarks/bench_design.py
"""

from __future__ import annotations

import time

from sheettool.core.design import Requirements, Sampling, SearchGrid, design


def main() -> None:
    """Time the full search once from cold caches, then a second design with a different in-control target."""
    cases = [
        ("ARL0 370.4, shift 0.5, n 1-10, intervals 0.5 and 1 h",
         Requirements(arl_in_control=370.4, shift=0.5, ats_hours=4.0), Sampling(intervals=(0.5, 1.0))),
        ("1 false alarm / 400 h, shift 1, n 1-10, intervals 0.5, 1, 2 h",
         Requirements(false_alarms_per_month=1.0, hours_per_month=400.0, shift=1.0),
         Sampling(intervals=(0.5, 1.0, 2.0))),
    ]
    for words, req, sampling in cases:
        start = time.perf_counter()
        result = design(req, sampling, SearchGrid())
        seconds = time.perf_counter() - start
        print(f"{words}: {len(result.candidates)} candidates in {seconds:.2f} s "
              f"({'some meet every requirement' if result.feasible else 'none meets every requirement'})")


if __name__ == "__main__":
    main()
