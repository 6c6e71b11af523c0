"""The parameters of the time-weighted charts, one type per kind, shared by the fitted chart and the scheme.

Their defaults are written here and nowhere else. The names outside Python (settings, JSON, the limits block, the
command line) are those of `NAMES`: "lambda" and "L" for the EWMA, "k" and "h" for the CUSUM; in Python the EWMA
weight is `lam` (lambda is a keyword).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, fields
from typing import ClassVar, TypeVar


@dataclass(frozen=True)
class EwmaParameters:
    """EWMA weight lambda in (0, 1] and limit width L in standard errors (Lucas and Saccucci 1990)."""

    lam: float = 0.2
    L: float = 3.0
    NAMES: ClassVar[dict[str, str]] = {"lam": "lambda", "L": "L"}

    def __post_init__(self) -> None:
        if not 0.0 < self.lam <= 1.0:
            raise ValueError(f"the EWMA weight lambda must be above 0 and at most 1, got {self.lam:g}")
        if not self.L > 0:
            raise ValueError(f"the EWMA limit width L must be positive, got {self.L:g}")

    def as_mapping(self) -> dict[str, float]:
        """The parameters by their names: {"lambda": 0.2, "L": 3.0}."""
        return _as_mapping(self)

    @classmethod
    def from_mapping(cls, values: Mapping[str, float]) -> EwmaParameters:
        """The parameters named in `values` (others and missing ones: defaults)."""
        return _from_mapping(cls, values)


@dataclass(frozen=True)
class CusumParameters:
    """Two-sided tabular CUSUM reference value k and decision interval h, in standard errors (Page 1954)."""

    k: float = 0.5
    h: float = 5.0
    NAMES: ClassVar[dict[str, str]] = {"k": "k", "h": "h"}

    def __post_init__(self) -> None:
        if not self.k >= 0:
            raise ValueError(f"the CUSUM reference value k must be zero or more (k >= 0, in sigmas), got {self.k:g}")
        if not self.h > 0:
            raise ValueError(f"the CUSUM decision interval h must be positive (h > 0, in sigmas), got {self.h:g}")

    def as_mapping(self) -> dict[str, float]:
        """The parameters by their names: {"k": 0.5, "h": 5.0}."""
        return _as_mapping(self)

    @classmethod
    def from_mapping(cls, values: Mapping[str, float]) -> CusumParameters:
        """The parameters named in `values` (others and missing ones: defaults)."""
        return _from_mapping(cls, values)


ChartParameters = EwmaParameters | CusumParameters
_P = TypeVar("_P", EwmaParameters, CusumParameters)
# setting name -> (parameter type, field)
PARAMETER_SETTINGS: dict[str, tuple[type[ChartParameters], str]] = {
    name: (cls, attr) for cls in (EwmaParameters, CusumParameters) for attr, name in cls.NAMES.items()
}


def _as_mapping(parameters: ChartParameters) -> dict[str, float]:
    return {parameters.NAMES[f.name]: float(getattr(parameters, f.name)) for f in fields(parameters)}


def _from_mapping(cls: type[_P], values: Mapping[str, float]) -> _P:
    return cls(**{attr: float(values[name]) for attr, name in cls.NAMES.items() if name in values})
