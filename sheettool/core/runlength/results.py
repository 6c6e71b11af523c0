"""What the run-length engine reports for a fitted chart: `ShiftArl` per shift and `Performance` overall.

They live in the core so that `performance_of` returns them without reaching up into the pipeline;
`sheettool.evaluation` re-exports both names.
"""

from __future__ import annotations

from dataclasses import dataclass, field


@dataclass(frozen=True)
class ShiftArl:
    """ARL after a mean shift of `shift` process standard deviations; ATS where the interval is known.

    For attribute charts `shift` is in standard errors of the plotted rate and `rate` is the rate itself.
    """

    shift: float
    arl: float
    ats_hours: float | None = None
    sdrl: float | None = None
    percentiles: dict[int, float] | None = None  # 5th, 50th and 95th percentile of the run length
    steady_state_arl: float | None = None  # conditional steady state (see core/runlength/markov.py)
    ci: tuple[float, float] | None = None  # 95% interval of the ARL where it is simulated
    rate: float | None = None


@dataclass
class Performance:
    """How the scheme in use behaves: in-control ARL, false alarms, ARL at standard mean shifts."""

    method: str
    arl_in_control: float
    shifts: list[ShiftArl]
    components: dict[str, float] = field(default_factory=dict)  # in-control ARL per chart alone
    interval_hours: float | None = None
    false_alarms_per_month: float | None = None
    curve: list[ShiftArl] = field(default_factory=list)  # ARL over a fine grid, for the performance tab
    shift_unit: str = "process standard deviations"
