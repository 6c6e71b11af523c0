"""Design a monitoring scheme against requirements: requirements, calibration, candidates, the search, its words.

The names used outside the package are exported here (`from sheettool.core.design import design, Requirements`).
"""

from sheettool.core.design.calibration import cusum_decision_interval, ewma_limit_width
from sheettool.core.design.candidates import Candidate, Sampling, SearchGrid
from sheettool.core.design.requirements import (
    MET_TOLERANCE,
    REQUIREMENT_KEYS,
    Requirements,
    RequirementsCheck,
    check_requirements,
)
from sheettool.core.design.search import CURVE_SHIFTS, DesignResult, arl_curve, design, leading

__all__ = [
    "CURVE_SHIFTS", "MET_TOLERANCE", "REQUIREMENT_KEYS", "Candidate", "DesignResult", "Requirements",
    "RequirementsCheck", "Sampling", "SearchGrid", "arl_curve", "check_requirements", "cusum_decision_interval",
    "design", "ewma_limit_width", "leading",
]
