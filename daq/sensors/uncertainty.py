"""Uncertainty budgets per JCGM 100:2008 (GUM), vectorised over readings.

Each input quantity contributes ``u_i = |c_i| · x_i / d_i``: a half-width or
standard uncertainty ``x_i`` (in its own unit), the divisor ``d_i`` of its
distribution (√3 for a rectangular bound, GUM 4.3.7; ``k`` for a stated
expanded uncertainty, GUM 4.3.3; √12 on a full quantisation step, GUM F.2.2.1)
and the sensitivity coefficient ``c_i`` (here ∂t/∂R = 1/(dR/dt) for inputs in
ohm). Uncorrelated inputs combine by root-sum-square (GUM 5.1.2, eq. 10); the
expanded uncertainty is U = k·u_c with k = 2 (GUM 6.2, 6.3).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np
import numpy.typing as npt

__all__ = [
    "Contribution",
    "Budget",
    "RECTANGULAR",
    "COVERAGE_K",
    "rectangular",
    "normal",
    "combine",
]

FloatArray = npt.NDArray[np.float64]
Distribution = Literal["rectangular", "normal", "quantisation"]

RECTANGULAR = math.sqrt(3.0)
"""Divisor of a rectangular bound ±a: u = a/√3 (GUM 4.3.7)."""

COVERAGE_K = 2.0
"""Coverage factor for the expanded uncertainty (GUM 6.3.3: about 95 %)."""


@dataclass(frozen=True)
class Contribution:
    """One line of an uncertainty budget, for every reading at once.

    Attributes:
        name: short key (``sensor_tolerance``, ``meter``, ``leads`` …).
        description: what the input is, in words, for a printed budget.
        distribution: how ``value`` is to be read.
        value: the half-width or standard uncertainty in ``unit``.
        unit: unit of ``value`` (``ohm`` or ``K``).
        divisor: √3, k or 1, so that value/divisor is a standard uncertainty.
        sensitivity: |∂t/∂x| in K per ``unit``.
    """

    name: str
    description: str
    distribution: Distribution
    value: FloatArray
    unit: str
    divisor: float
    sensitivity: FloatArray

    @property
    def u_k(self) -> FloatArray:
        """Standard uncertainty of the temperature from this input, in K."""
        return np.abs(self.sensitivity) * self.value / self.divisor


def rectangular(
    name: str,
    description: str,
    half_width: npt.ArrayLike,
    unit: str,
    sensitivity: npt.ArrayLike = 1.0,
) -> Contribution:
    """A bound ±a, every value inside equally likely (GUM 4.3.7)."""
    return Contribution(
        name,
        description,
        "rectangular",
        np.asarray(half_width, dtype=np.float64),
        unit,
        RECTANGULAR,
        np.asarray(sensitivity, dtype=np.float64),
    )


def normal(
    name: str,
    description: str,
    expanded: npt.ArrayLike,
    k: float,
    unit: str,
    sensitivity: npt.ArrayLike = 1.0,
) -> Contribution:
    """A stated expanded uncertainty U with its coverage factor k (GUM 4.3.3)."""
    if not k > 0:
        raise ValueError(f"coverage factor must be positive, got {k!r}")
    return Contribution(
        name,
        description,
        "normal",
        np.asarray(expanded, dtype=np.float64),
        unit,
        float(k),
        np.asarray(sensitivity, dtype=np.float64),
    )


@dataclass(frozen=True)
class Budget:
    """The contributions and their root-sum-square combination."""

    contributions: tuple[Contribution, ...]
    combined_k: FloatArray
    k: float = COVERAGE_K

    @property
    def expanded_k(self) -> FloatArray:
        """U = k·u_c in K."""
        return self.k * self.combined_k

    def by_name(self) -> dict[str, FloatArray]:
        return {c.name: c.u_k for c in self.contributions}


def combine(contributions: Sequence[Contribution], *, k: float = COVERAGE_K) -> Budget:
    """Root-sum-square of uncorrelated contributions (GUM 5.1.2, eq. 10)."""
    if not contributions:
        raise ValueError("a budget needs at least one contribution")
    total = np.zeros(np.broadcast(*[c.u_k for c in contributions]).shape, dtype=np.float64)
    for c in contributions:
        total = total + c.u_k**2
    return Budget(tuple(contributions), np.sqrt(total), k)
