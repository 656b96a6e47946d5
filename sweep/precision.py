"""Precision targets: read ``[sweep] precision``, and decide when a point has enough.

``precision = { statistic = "mean_first_passage_time", relative_halfwidth = 0.01,
max_walkers = 10_000_000 }`` or ``{ statistic = "splitting", wall = "x_upper",
absolute_halfwidth = 0.005, max_walkers = ... }``: each point runs until the 95 %
interval of its statistic is that narrow, or until it has ``max_walkers`` walkers.

The stopping rule is reproducible: a point's decision depends only on a *prefix* of
its chunks in chunk order, never on which tasks finished first. The point is judged
only at the checkpoints ``m_0 < m_1 < ...`` (chunk counts: the first round's chunks,
then doubling, capped at the store's chunks per point), each time over exactly chunks
``0 .. m_k - 1`` once all of them are finished; it stops at the first checkpoint
where the target is met. A rerun, a resume, another thread count or another cluster
therefore gives every point the same chunks, and the same bits.

Per-chunk sums come from the completion markers (``fpt_moments``: walkers absorbed,
their mean first-passage time and the sum of squared deviations from it; the
markers' ``walkers`` and ``absorbed_by`` for splitting), combined in chunk order by
the pairwise update of Chan, Golub & LeVeque (1983, "Algorithms for computing the
sample variance", The American Statistician 37:242, eq. 2.1), so a decision reads no
walker data.

Imports only :mod:`sweep.errors` of the stages (it sits before ``spec`` in the layering).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from sweep.errors import SpecError

STATISTICS = ("mean_first_passage_time", "splitting")
#: The half-width each statistic takes, and the other keys it allows.
TARGET_KEY = {
    "mean_first_passage_time": "relative_halfwidth",
    "splitting": "absolute_halfwidth",
}
KEYS = ("statistic", "relative_halfwidth", "absolute_halfwidth", "max_walkers", "wall")
#: Confidence level of the intervals a target refers to (as sweep.stats.LEVEL).
LEVEL = 0.95
#: Two-sided standard-normal quantile of LEVEL: scipy.special.ndtri(0.975).
Z = 1.959963984540054
#: Walkers of the first round when ``walkers`` is not given (then one checkpoint per
#: doubling): enough for a first variance estimate at every point.
DEFAULT_FIRST_WALKERS = 40_000


@dataclass(frozen=True)
class Precision:
    """A validated precision target.

    Attributes
    ----------
    statistic : str
        ``"mean_first_passage_time"`` or ``"splitting"``.
    first_walkers : int
        Walkers per point of the first round (the first checkpoint).
    halfwidth : float
        The target: relative half-width of the mean's 95 % interval (a fraction of
        the mean), or absolute half-width of the splitting probability's.
    max_walkers : int
        Walkers per point at most (the store's walker dimension).
    wall : str or None
        The wall or target whose splitting probability is targeted.
    """

    statistic: str
    halfwidth: float
    max_walkers: int
    wall: str | None = None
    #: Walkers of the first round (``sweep.walkers``, or a default).
    first_walkers: int = DEFAULT_FIRST_WALKERS

    def canonical(self) -> dict[str, Any]:
        out: dict[str, Any] = {
            "statistic": self.statistic,
            TARGET_KEY[self.statistic]: self.halfwidth,
            "max_walkers": self.max_walkers,
        }
        if self.wall is not None:
            out["wall"] = self.wall
        out["first_walkers"] = self.first_walkers
        return out

    def describe(self) -> str:
        """The target in words, e.g. ``mean first-passage time ± 1% (95 %)``."""
        if self.statistic == "splitting":
            return f"splitting at {self.wall} ± {self.halfwidth:g}"
        return f"mean first-passage time ± {self.halfwidth:.3g} relative"


def from_canonical(canonical: Mapping[str, Any] | None) -> Precision | None:
    """The target a store's canonical ``sweep.precision`` holds (None: none)."""
    if not canonical:
        return None
    statistic = canonical["statistic"]
    return Precision(
        statistic,
        float(canonical[TARGET_KEY[statistic]]),
        int(canonical["max_walkers"]),
        canonical.get("wall"),
        int(canonical["first_walkers"]),
    )


def planned_chunks(
    target: Precision,
    wall_index: int,
    chunk: int,
    n_chunks: int,
    done: Mapping[int, Mapping[str, Any]],
) -> tuple[int, bool, Estimate | None]:
    """(chunks the point has or needs next, whether that is final, last estimate)."""
    first = -(-target.first_walkers // chunk)
    decision = decide(target, wall_index, first, n_chunks, done)
    return decision.chunks, decision.final, decision.last


def parse(raw: Any, source: str) -> Precision:
    """Validate ``[sweep] precision`` (one message per refusal; the wall is checked
    later by :func:`check_wall`, once the domain is known)."""

    def fail(key: str, message: str) -> SpecError:
        return SpecError(f"{source}: [sweep.precision{key}] {message}")

    example = (
        '{ statistic = "mean_first_passage_time", relative_halfwidth = 0.01, '
        "max_walkers = 10_000_000 }"
    )
    if not isinstance(raw, dict):
        raise fail("", f"must be a table like {example}; got {raw!r}.")
    unknown = sorted(set(raw) - set(KEYS))
    if unknown:
        raise fail(
            f".{unknown[0]}",
            f"is not a key of sweep.precision; allowed: {', '.join(KEYS)}.",
        )
    statistic = raw.get("statistic")
    if statistic not in STATISTICS:
        raise fail(
            ".statistic",
            f"must be one of {', '.join(repr(s) for s in STATISTICS)}; got "
            f"{statistic!r}.",
        )
    wanted = TARGET_KEY[statistic]
    for key in TARGET_KEY.values():
        if key in raw and key != wanted:
            raise fail(
                f".{key}",
                f"does not apply to statistic {statistic!r}, which takes {wanted}.",
            )
    if wanted not in raw:
        raise fail(f".{wanted}", f"is missing; statistic {statistic!r} needs it.")
    target = raw[wanted]
    if (
        isinstance(target, bool)
        or not isinstance(target, int | float)
        or not math.isfinite(target)
        or target <= 0
        or (statistic == "splitting" and target >= 0.5)
    ):
        allowed = "between 0 and 0.5" if statistic == "splitting" else "above 0"
        raise fail(
            f".{wanted}",
            f"must be a finite number {allowed} (the 95 % interval's half-width); "
            f"got {target!r}.",
        )
    if "max_walkers" not in raw:
        raise fail(
            ".max_walkers",
            "is missing: a target needs a ceiling on walkers per point.",
        )
    ceiling = raw["max_walkers"]
    if isinstance(ceiling, bool) or not isinstance(ceiling, int) or ceiling < 1:
        raise fail(".max_walkers", f"must be a positive whole number; got {ceiling!r}.")
    wall = raw.get("wall")
    if statistic == "splitting":
        if not isinstance(wall, str):
            raise fail(
                ".wall",
                "must name the wall or target whose splitting probability is the "
                f'target, e.g. wall = "x_upper"; got {wall!r}.',
            )
    elif wall is not None:
        raise fail(".wall", f"applies only to statistic 'splitting'; got {wall!r}.")
    return Precision(statistic, float(target), ceiling, wall)


def check_wall(precision: Precision, walls: Sequence[str], source: str) -> None:
    """Refuse a splitting target on a wall the domain does not have or that does not
    absorb (``walls``: the absorbing walls' names, in store order)."""
    if precision.wall is not None and precision.wall not in walls:
        raise SpecError(
            f"{source}: [sweep.precision.wall] names no absorbing wall or target of "
            f"the domain; allowed: {', '.join(walls) or 'none'}; got "
            f"{precision.wall!r}."
        )


def wall_index(sweep: Any) -> int:
    """Index of ``sweep``'s (a ``Sweep``) target wall among the store's walls, as
    markers' ``absorbed_by`` counts them (0 without a splitting target)."""
    target = sweep.precision
    if target is None or target.wall is None:
        return 0
    return list(sweep.points[0].domain.wall_names()).index(target.wall)


def checkpoints(first_chunks: int, n_chunks: int) -> list[int]:
    """Chunk counts at which a point is judged: first_chunks, doubling, capped.

    Always ends with ``n_chunks`` (the ceiling)."""
    m = max(1, min(first_chunks, n_chunks))
    out = [m]
    while m < n_chunks:
        m = min(2 * m, n_chunks)
        out.append(m)
    return out


def wilson_halfwidth(p: Any, n: Any, z: float = Z) -> Any:
    """Half the width of the Wilson score interval of a binomial proportion (Wilson
    1927, "Probable inference, the law of succession, and statistical inference",
    JASA 22:209).

    The one copy of the formula: :func:`estimate` judges splitting targets with it
    and :func:`sweep.stats.wilson_interval` builds its intervals on it (this stage
    sits before both).

    Parameters
    ----------
    p : float or array
        Observed proportion ``successes / n`` (dimensionless, in [0, 1]).
    n : int, float or array
        Trials behind ``p`` (walkers); broadcasts with ``p`` as their type does.
    z : float
        Two-sided standard-normal quantile of the level (default :data:`Z`, 95 %).

    Returns
    -------
    float or array
        The half-width (dimensionless), of the broadcast shape of ``p`` and ``n``;
        a numpy scalar for scalar input. NaN where ``n`` is NaN.
    """
    return z / (1 + z * z / n) * np.sqrt(p * (1 - p) / n + z * z / (4 * n * n))


@dataclass(frozen=True)
class Estimate:
    """A point's statistic over a prefix of its chunks.

    ``halfwidth`` is in the target's terms (relative for the mean); NaN when it
    cannot be told yet (fewer than two walkers absorbed). ``censored`` walkers keep
    a mean target from being met.
    """

    chunks: int
    walkers: int
    estimate: float
    halfwidth: float
    censored: int
    met: bool


def estimate(
    precision: Precision, wall_index: int, markers: Sequence[Mapping[str, Any]]
) -> Estimate:
    """The statistic over ``markers`` (the markers of chunks 0..m-1, in order)."""
    walkers = sum(int(m["walkers"]) for m in markers)
    censored = sum(int(m["censored"]) for m in markers)
    if precision.statistic == "splitting":
        hits = 0
        for m in markers:
            absorbed = m["absorbed_by"]
            hits += int(absorbed[wall_index]) if wall_index < len(absorbed) else 0
        p = hits / walkers
        # The Wilson half-width, as sweep.stats reports it; finite at p = 0 and 1,
        # unlike the normal one.
        half = float(wilson_halfwidth(p, walkers))
        return Estimate(
            len(markers), walkers, p, half, censored, half <= precision.halfwidth
        )
    n, mean, m2 = 0, 0.0, 0.0
    for m in markers:
        nb, mean_b, m2_b = m["fpt_moments"]
        if nb == 0:
            continue
        total = n + nb
        delta = mean_b - mean
        mean += delta * nb / total
        m2 += m2_b + delta * delta * n * nb / total
        n = total
    if n < 2 or mean <= 0:
        rel = math.nan
    else:
        rel = Z * math.sqrt(m2 / (n - 1) / n) / mean
    met = censored == 0 and rel <= precision.halfwidth
    return Estimate(len(markers), walkers, mean if n else math.nan, rel, censored, met)


@dataclass(frozen=True)
class Decision:
    """Where a point stands: ``final`` once its chunk count is decided.

    ``chunks``: the chunks it has (final) or needs before its next judgement.
    ``last``: the estimate at its latest judged checkpoint (None before the first).
    """

    chunks: int
    final: bool
    last: Estimate | None


def decide(
    precision: Precision,
    wall_index: int,
    first_chunks: int,
    n_chunks: int,
    done: Mapping[int, Mapping[str, Any]],
) -> Decision:
    """Judge one point from its finished chunks ``done`` (chunk → marker).

    Walks the checkpoints in order; at each whose chunks are all finished, the
    statistic over exactly those chunks decides. Chunks finished beyond the deciding
    checkpoint (none, when this rule scheduled them) are ignored.
    """
    last = None
    for m in checkpoints(first_chunks, n_chunks):
        if any(c not in done for c in range(m)):
            return Decision(m, False, last)
        last = estimate(precision, wall_index, [done[c] for c in range(m)])
        if last.met or m == n_chunks:
            return Decision(m, True, last)
    raise AssertionError("checkpoints end with n_chunks")  # pragma: no cover


def chunk_moments(times: Any) -> list[Any]:
    """``[absorbed, mean, sum of squared deviations]`` of one chunk's first-passage
    times (NaN: censored), exactly rounded sums (``math.fsum``) so they do not
    depend on how numpy vectorises a sum on this machine."""
    t = np.ascontiguousarray(times, dtype=np.float64)
    t = t[np.isfinite(t)]
    n = int(t.size)
    if n == 0:
        return [0, 0.0, 0.0]
    mean = exactly_rounded_sum(t) / n
    return [n, mean, exactly_rounded_sum((t - mean) ** 2)]


def exactly_rounded_sum(values: np.ndarray) -> float:
    """``math.fsum(values)`` (float64 (n,), contiguous), compiled.

    Non-negative finite values (times, squared deviations) go through the
    superaccumulator (``kernels.sums.nonnegative_sum_buckets``, about 0.2 ms per
    10^5 values): its buckets are the exact sum's binary digits, Python's integer
    true division rounds that sum once, correctly (half to even), which is
    ``math.fsum``'s value bit for bit. Anything else goes through the compiled
    partials (``kernels.sums.exact_sum``, 1.5 ms), and beyond their range through
    ``math.fsum`` itself. Like ``math.fsum``, raises OverflowError when the sum
    exceeds the doubles.
    """
    # Imported here, so the commands that never run a task do not load numba.
    from kernels.sums import SCALE_BITS, nonnegative_sum_buckets
    from kernels.sums import exact_sum as partials_sum

    buckets, ok = nonnegative_sum_buckets(values.view(np.int64))
    if ok:
        total = 0
        for b in np.flatnonzero(buckets).tolist():  # every bucket is 0 or 1
            total += 1 << b
        return total / (1 << SCALE_BITS)
    result = float(partials_sum(values))
    if not math.isfinite(result):  # beyond the compiled loop's range: the reference
        result = math.fsum(values.tolist())
    return result


def describe_estimate(precision: Precision, est: Estimate | None) -> str:
    """``1.2% > 1% target`` / ``met`` / ``censored`` in words for status lines."""
    if est is None:
        return "-"
    if precision.statistic == "mean_first_passage_time":
        if est.censored:
            return (
                f"not met: {est.censored} censored (raise time.horizon)"
                if math.isfinite(est.halfwidth)
                else f"not met: {est.censored} censored"
            )
        if not math.isfinite(est.halfwidth):
            return "not yet estimable"
        shown = f"±{est.halfwidth:.2%}"
        goal = f"{precision.halfwidth:.2%}"
    else:
        shown = f"±{est.halfwidth:.2g}"
        goal = f"{precision.halfwidth:.2g}"
    return f"{shown} {'<=' if est.met else '>'} {goal}"
