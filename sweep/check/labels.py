"""Words for a sweep's parameters and points: column names and headers with units,
table cells, per-point labels, and a two-line description of what the sweep simulates.

Used by ``sweep check``'s table, ``sweep report``, ``sweep compare`` and the CLI.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

from sweep.plan import coordinate_columns
from sweep.spec import Domain, Sweep, key_quantity


def parameters(sweep: Sweep) -> dict[str, list[object]]:
    """Every swept parameter by its one name, the store's coordinate name
    (``diffusivity``, ``upper_x``, ``target_0_radius``), with its value per point;
    vectors split per axis as in the store. Tables, legends and plots use these."""
    return coordinate_columns(sweep)


def parameter_header(name: str, sweep: Sweep) -> str:
    """``name [unit]`` for a parameter with units, else the bare name."""
    quantity = key_quantity(name)
    return sweep.units.label(name, quantity) if quantity else name


def show_value(value: object) -> str:
    """A parameter value as a table cell (shortest exact float form)."""
    if isinstance(value, float):
        return f"{value:.6g}"
    return str(value)


def point_labels(sweep: Sweep) -> list[str]:
    """``name=value, ...`` per point (legends and point lists), in parameter names;
    columns that do not vary (the fixed axes of a swept vector) are left out."""
    columns = {
        k: v
        for k, v in parameters(sweep).items()
        if len({show_value(x) for x in v}) > 1
    }
    if not columns:
        return ["point 0"] * sweep.n_points
    return [
        ", ".join(f"{k}={show_value(v[p])}" for k, v in columns.items())
        for p in range(sweep.n_points)
    ]


def wall_words(dom: Domain) -> list[str]:
    """Per wall of ``dom.wall_names()``: "reactive (κ ...)" or "periodic", "" for
    the plain kinds (the caller names those)."""
    periodic = dom.periodic or (False,) * dom.dimension
    words = []
    for index, kappa in enumerate(dom.wall_reactivity()):
        if kappa is not None:
            words.append(f"reactive (reactivity {kappa:g})")
        elif dom.shape == "box" and index < 2 * dom.dimension and periodic[index // 2]:
            words.append("periodic")
        else:
            words.append("")
    return words


def describe(sweep: Sweep) -> str:
    """What the sweep simulates, in two lines with units: the domain and its walls,
    the motion, the time stepping, and which parameters vary (values of point 0
    for those)."""
    p0 = sweep.points[0]
    m, dom, tm, u = p0.motion, p0.domain, p0.timing, sweep.units

    def unit(quantity: str) -> str:
        text = u.of(quantity)
        return "" if text == "definition units" else f" {text}"

    def vec(values: Sequence[float]) -> str:
        return "[" + ", ".join(show_value(float(v)) for v in values) + "]"

    kinds = dict(zip(dom.wall_names(), dom.wall_absorbing(), strict=True))
    names = dict(zip(dom.wall_names(), wall_words(dom), strict=True))
    if dom.shape == "ball":
        plain = "absorbing" if dom.surface_absorbing else "reflecting"
        where = (
            f"{m.dimension}-D ball, centre {vec(dom.center)}, radius "
            f"{show_value(dom.radius)}{unit('length')}, "
            f"{names['wall'] or plain} wall"
        )
    else:
        sides = ", ".join(
            f"{name} {names[name] or ('absorbing' if kinds[name] else 'reflecting')}"
            for name, lo_hi in zip(
                dom.wall_names(),
                [v for pair in zip(dom.lower, dom.upper, strict=True) for v in pair],
                strict=False,
            )
            if math.isfinite(lo_hi)
        )
        where = (
            f"{m.dimension}-D box from {vec(dom.lower)} to {vec(dom.upper)}"
            f"{unit('length')} ({sides})"
        )
    if dom.targets:
        plain = all(t.reactivity is None for t in dom.targets)
        where += ("; absorbing targets " if plain else "; targets ") + ", ".join(
            f"target_{i} at {vec(t.center)} radius {show_value(t.radius)}"
            + (
                f" reactivity {show_value(t.reactivity)}{unit('velocity')}"
                if t.reactivity is not None
                else ""
            )
            for i, t in enumerate(dom.targets)
        )
    if dom.obstacles:
        where += "; reflecting obstacles " + ", ".join(
            f"at {vec(o.center)} radius {show_value(o.radius)}" for o in dom.obstacles
        )
    start = "uniform" if m.start is None else vec(m.start)
    motion = (
        f"walkers from {start}, diffusivity {show_value(m.diffusivity)}"
        f"{unit('diffusivity')}"
    )
    if any(m.drift):
        motion += f", drift {vec(m.drift)}{unit('velocity')}"
    motion += (
        f"; dt {show_value(tm.dt)}{unit('time')}, horizon "
        f"{show_value(tm.horizon)}{unit('time')}"
    )
    varied = (
        f"; varied: {', '.join(parameters(sweep))} (values above: point 0)"
        if sweep.swept
        else ""
    )
    return (
        f"{sweep.name}: {sweep.n_points} point(s) x {sweep.walkers:,} walkers; "
        f"{where}\n{motion}{varied}"
    )
