"""Plain-words descriptions of each chart kind: its name, its formulas and the published methods,
for the evaluation tab's header and the method notes. A kind not listed is named by its JSON name.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Method:
    """How a chart kind is described in the workbook."""

    words: str  # the chart kind in words
    formulas: str  # its limits and plotted statistics
    published: str  # the published methods behind it


METHODS: dict[str, Method] = {
    "xbar-r": Method(
        "X-bar and R: subgroup means and subgroup ranges",
        "center X-bar-bar, limits X-bar-bar +/- A2 R-bar; range chart D3 R-bar to D4 R-bar; sigma within = "
        "R-bar / d2. d2 and d3 by numerical integration of the range of normal samples; A2 = 3 / (d2 sqrt n), "
        "D3 = max(0, 1 - 3 d3 / d2), D4 = 1 + 3 d3 / d2",
        "Shewhart (1931); range distribution: Tippett (1925); constants as in ASTM E2587"),
    "xbar-s": Method(
        "X-bar and S: subgroup means and subgroup standard deviations",
        "center X-bar-bar, limits X-bar-bar +/- A3 S-bar; S chart B3 S-bar to B4 S-bar; sigma within = S-bar / c4; "
        "where subgroup sizes vary, the limits are worked out point by point from each subgroup's size",
        "Shewhart (1931); c4 from the gamma function; constants as in ASTM E2587"),
    "individuals": Method(
        "individuals and moving range",
        "center X-bar, limits X-bar +/- E2 MR-bar with E2 = 3 / d2(2); moving-range chart up to D4 MR-bar; "
        "sigma within = MR-bar / d2(2)",
        "Shewhart (1931); moving-range estimate as in ASTM E2587"),
    "p": Method(
        "p: proportion defective per subgroup",
        "center p-bar, limits p-bar +/- 3 sqrt(p-bar (1 - p-bar) / n_i), point by point for each subgroup's size, "
        "a negative lower limit shown as zero",
        "binomial model; Shewhart (1931)"),
    "np": Method(
        "np: number defective per subgroup",
        "center n p-bar, limits n p-bar +/- 3 sqrt(n p-bar (1 - p-bar))",
        "binomial model; Shewhart (1931)"),
    "c": Method(
        "c: defects per subgroup",
        "center c-bar, limits c-bar +/- 3 sqrt(c-bar)",
        "Poisson model; Shewhart (1931)"),
    "u": Method(
        "u: defects per unit",
        "center u-bar, limits u-bar +/- 3 sqrt(u-bar / n_i), point by point for each subgroup's size",
        "Poisson model; Shewhart (1931)"),
    "ewma": Method(
        "EWMA: exponentially weighted moving average",
        "z_i = lambda x_i + (1 - lambda) z_(i-1); limits mu0 +/- L sigma sqrt(lambda / (2 - lambda) "
        "(1 - (1 - lambda)^(2i))), widening over the first points",
        "Roberts (1959); run lengths: Lucas and Saccucci (1990)"),
    "cusum": Method(
        "CUSUM: cumulative sums above and below the target",
        "C+_i = max(0, x_i - (mu0 + k sigma) + C+_(i-1)), C-_i = max(0, (mu0 - k sigma) - x_i + C-_(i-1)); "
        "signal when either passes h sigma (sigma of the plotted point: a standard error)",
        "Page (1954); run lengths: Brook and Evans (1972), Siegmund (1985)"),
}


def method(chart: str) -> Method:
    """The description of a chart kind (its JSON name when it is not described here)."""
    return METHODS.get(chart, Method(chart, f"see the chart kind '{chart}'", ""))
