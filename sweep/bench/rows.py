"""A bench row (the fastest rates of one case) and the throughput targets it is
held to."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Targets of the kernel issue (#18), as ratios: every plain kernel and every option
#: combination in normals per second vs the limit; the 1-D interval with the bridge
#: and every 3-D case vs numpy's bulk normal rate (in normals: a 3-D walker-step uses
#: three); two threads vs one; a ``sweep run --threads 1`` vs the bench rate.
TARGET_PLAIN = 0.60
TARGET_OPTIONS = 0.45
TARGET_BULK_1D = 2.0
TARGET_BULK_3D = 2.5
TARGET_THREADS = 1.8
TARGET_END_TO_END = 0.80


@dataclass(frozen=True)
class BenchRow:
    """Fastest rates of one case over the repetitions.

    Attributes
    ----------
    case, options : str
    dimension : int
        Normals per walker-step.
    kernel_rate : float
        Walker-steps/s.
    limit_rate, bulk_rate : float
        Normals/s of the limit and of numpy's bulk sampler.
    ceiling_rate, numpy_rate : float
        Walker-steps/s of the former ceiling and of the vectorised numpy walk.
    spread : float
        How far the median run fell short of the fastest, kernel or limit (whichever
        is larger): a measure of how busy the machine was.
    """

    case: str
    options: str
    dimension: int
    kernel_rate: float
    limit_rate: float
    bulk_rate: float
    ceiling_rate: float
    numpy_rate: float
    spread: float = 0.0

    @property
    def of_limit(self) -> float:
        """Normals/s the kernel consumes over the limit's normals/s."""
        return self.kernel_rate * self.dimension / self.limit_rate

    @property
    def over_bulk(self) -> float:
        """Normals/s the kernel consumes over numpy's bulk normals/s."""
        return self.kernel_rate * self.dimension / self.bulk_rate

    @property
    def of_ceiling(self) -> float:
        """Former ratio: walker-steps/s over the bit-generator ceiling's."""
        return self.kernel_rate / self.ceiling_rate

    @property
    def over_numpy(self) -> float:
        """Former ratio: walker-steps/s over the vectorised numpy walk's."""
        return self.kernel_rate / self.numpy_rate


def is_plain(row: BenchRow) -> bool:
    """Whether ``row`` is a plain kernel: endpoint monitoring, no occupancy. The bridge
    test (the default monitoring) is an option like occupancy: it adds work, a uniform
    draw and a hitting time for steps near an absorbing surface."""
    return row.options == "endpoint"


def target_of(row: BenchRow) -> float:
    """The share of the limit (in normals) that ``row`` should reach:
    :data:`TARGET_PLAIN` for a plain kernel, :data:`TARGET_OPTIONS` for any other
    option combination."""
    return TARGET_PLAIN if is_plain(row) else TARGET_OPTIONS


def bulk_target_of(row: BenchRow) -> float | None:
    """The multiple of numpy's bulk normal rate that ``row`` should reach, if any:
    :data:`TARGET_BULK_1D` for the 1-D interval with the bridge (no occupancy; the
    issue names that one case), :data:`TARGET_BULK_3D` for every 3-D case."""
    if row.case.startswith("interval") and row.options == "bridge":
        return TARGET_BULK_1D
    if row.dimension == 3:
        return TARGET_BULK_3D
    return None


def is_short(row: BenchRow) -> bool:
    """Whether ``row`` misses one of its targets."""
    bulk = bulk_target_of(row)
    return row.of_limit < target_of(row) or (bulk is not None and row.over_bulk < bulk)


def _spread(rates: list[float]) -> float:
    """1 - median / fastest of one rate's runs (0 when they agree)."""
    return 1.0 - float(np.median(rates)) / max(rates)
