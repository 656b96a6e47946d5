"""Which closed form applies to a stored point, and its exact values.

For each point: whether :mod:`sweep.analytic` has a closed form for it
(:func:`unsupported` says why not), the exact survival, mean first-passage time,
splitting probability and exit-angle geometry, and the point with its absorbing walls
shifted outward (:func:`shifted`), whose closed forms give the expected bias of endpoint
monitoring. Formulas and sources: ``docs/analytic-reference.md``.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable

import numpy as np

from sweep import analytic
from sweep.spec import PointSpec


def unsupported(point: PointSpec) -> str:
    """Why a point has no analytic counterpart ("" when it has one)."""
    m, dom = point.motion, point.domain
    if m.start is None:
        return "uniform start: no closed form implemented"
    if dom.targets:
        return "absorbing targets: no closed form"
    if not any(dom.wall_absorbing()):
        return "no absorbing wall: every walker is censored"
    if dom.shape == "ball":
        if not dom.surface_absorbing:
            return "reflecting ball: nothing absorbs"
        if any(v != 0.0 for v in m.drift):
            return "ball with drift: no closed form"
        if m.dimension not in (2, 3):
            return "ball in d > 3: no closed form implemented"
        return ""
    for i in range(m.dimension):
        reflecting = (math.isfinite(dom.lower[i]) and not dom.absorbing_low[i]) or (
            math.isfinite(dom.upper[i]) and not dom.absorbing_high[i]
        )
        absorbing = dom.absorbing_low[i] or dom.absorbing_high[i]
        if m.drift[i] != 0.0 and reflecting and absorbing:
            return "drift toward a reflecting wall: mirror reflection is not exact"
    return ""


def _walls(point: PointSpec) -> list[tuple[str, str]]:
    dom = point.domain
    kind = {True: "absorbing", False: "reflecting"}
    return [
        (kind[lo], kind[hi]) for lo, hi in zip(dom.absorbing_low, dom.absorbing_high)
    ]


def shifted(point: PointSpec) -> PointSpec | None:
    """The point with absorbing walls moved outward by beta sqrt(2 D dt), or None.

    Checking walls only at step ends behaves like a continuously monitored domain
    enlarged by that shift (Broadie, Glasserman & Kou 1997, Math. Finance 7(4)); the
    difference of the closed forms at the two domains is the expected bias.
    """
    if point.timing.monitoring != "endpoint":
        return None
    delta = analytic.discrete_monitoring_shift(
        point.motion.diffusivity, point.timing.dt
    )
    dom = point.domain
    if dom.shape == "ball":
        moved = dataclasses.replace(dom, radius=dom.radius + delta)
    else:
        moved = dataclasses.replace(
            dom,
            lower=tuple(
                lo - delta if a else lo for lo, a in zip(dom.lower, dom.absorbing_low)
            ),
            upper=tuple(
                hi + delta if a else hi for hi, a in zip(dom.upper, dom.absorbing_high)
            ),
        )
    return dataclasses.replace(point, domain=moved)


def _allowance(
    point: PointSpec, statistic: Callable[[PointSpec], float], exact: float
) -> float:
    moved = shifted(point)
    if moved is None:
        return 0.0
    return statistic(moved) - exact


def exact_survival(point: PointSpec, t: np.ndarray) -> np.ndarray:
    """Closed-form S(t) of a point that :func:`unsupported` accepts; raises
    NotImplementedError where the analytic library has no form."""
    m, dom = point.motion, point.domain
    assert m.start is not None
    if dom.shape == "ball":
        r0 = math.dist(m.start, dom.center)
        return np.asarray(
            analytic.ball_survival(t, r0, dom.radius, m.diffusivity, m.dimension)
        )
    return np.asarray(
        analytic.box_survival(
            t, m.start, dom.lower, dom.upper, _walls(point), m.diffusivity, m.drift
        )
    )


def exact_mean(point: PointSpec) -> float:
    """Closed-form mean first-passage time of a point :func:`unsupported` accepts."""
    m, dom = point.motion, point.domain
    assert m.start is not None
    if dom.shape == "ball":
        r0 = math.dist(m.start, dom.center)
        return float(
            analytic.ball_mean_exit_time(r0, dom.radius, m.diffusivity, m.dimension)
        )
    return float(
        analytic.box_mean_exit_time(
            m.start, dom.lower, dom.upper, _walls(point), m.diffusivity, m.drift
        )
    )


def _absorbing_axis(point: PointSpec) -> int | None:
    """The one axis of a box whose two faces absorb while no other face does, else
    None. Axes are independent in a box (analytic reference D), so the walker leaves
    through that axis' upper face with the 1-D interval's splitting probability along
    it, whatever the other axes (reflecting or unbounded) do."""
    m, dom = point.motion, point.domain
    if dom.shape != "box" or dom.targets or m.start is None:
        return None
    absorbing = [
        i for i in range(m.dimension) if dom.absorbing_low[i] or dom.absorbing_high[i]
    ]
    if len(absorbing) != 1:
        return None
    i = absorbing[0]
    return i if dom.absorbing_low[i] and dom.absorbing_high[i] else None


def _exact_splitting(point: PointSpec) -> float:
    m, dom = point.motion, point.domain
    axis = _absorbing_axis(point)
    assert m.start is not None and axis is not None
    length = dom.upper[axis] - dom.lower[axis]
    return float(
        analytic.interval_splitting(
            m.start[axis] - dom.lower[axis], length, m.diffusivity, m.drift[axis]
        )
    )


def concentric(point: PointSpec) -> bool:
    """An absorbing ball (d = 2, 3, no drift, a point start) around one target at its
    centre: the splitting between the two has a closed form (analytic reference J6),
    though survival and the mean first-passage time have none here."""
    m, dom = point.motion, point.domain
    return (
        dom.shape == "ball"
        and dom.surface_absorbing
        and m.dimension in (2, 3)
        and m.start is not None
        and all(v == 0.0 for v in m.drift)
        and len(dom.targets) == 1
        and tuple(dom.targets[0].center) == tuple(dom.center)
    )


def _exit_geometry(
    point: PointSpec,
) -> tuple[np.ndarray, np.ndarray, float, float] | None:
    """(center, unit start direction, start radius r0, ball radius) of an
    absorbing-ball point with an off-centre start, else None: the points whose exit
    angle has a closed-form mean."""
    m, dom = point.motion, point.domain
    if dom.shape != "ball" or m.start is None or unsupported(point):
        return None
    center = np.asarray(dom.center, dtype=float)
    r0 = math.dist(m.start, dom.center)
    if r0 == 0.0:
        return None
    return center, (np.asarray(m.start) - center) / r0, r0, dom.radius
