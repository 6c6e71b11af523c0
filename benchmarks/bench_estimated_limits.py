"""Time of the estimated-limits computations: the CARL distribution, the adjusted factor and the full report.

Run from the repository root: PYTHONPATH=. python benchmarks/bench_estimated_limits.py
"""

from __future__ import annotations

import time
from collections.abc import Callable

from sheettool.core.estimated_limits import adjusted_factor, carl_distribution, estimated_limits_report

CASES = ((25, 5, "range"), (25, 5, "s-bar"), (25, 5, "pooled"), (25, 1, "moving-range"), (100, 1, "moving-range"))


def best_of(call: Callable[[], object], repeats: int = 5) -> float:
    """Best wall time of several calls, in milliseconds."""
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        call()
        times.append(time.perf_counter() - start)
    return 1000.0 * min(times)


def main() -> None:
    print(f"{'case':<26}{'CARL dist ms':>14}{'L* ms':>9}{'report ms':>11}   mean / p10 / p50 / L*")
    for m, n, method in CASES:
        dist = carl_distribution(m, n, method)
        factor = adjusted_factor(m, n, method).factor
        t_dist = best_of(lambda m=m, n=n, method=method: carl_distribution(m, n, method))
        t_factor = best_of(lambda m=m, n=n, method=method: adjusted_factor(m, n, method))
        t_report = best_of(lambda m=m, n=n, method=method: estimated_limits_report(m, n, method, tolerance=0.1), 2)
        print(f"m={m:<4} n={n:<2} {method:<14}{t_dist:>12.1f}{t_factor:>9.1f}{t_report:>11.1f}   "
              f"{dist.mean:.1f} / {dist.p10:.1f} / {dist.p50:.1f} / {factor:.4f}")


if __name__ == "__main__":
    main()
