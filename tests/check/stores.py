"""Ball sweeps for the exit-angle checks of ``sweep.check`` (scenarios of our own)."""

from __future__ import annotations

from pathlib import Path

from tests.conftest import build_store

BALL_SPEC = """
[sweep]
name = "ball-exit"
seed = 11
walkers = 6000
chunk = 3000

[motion]
dimension = {dimension}
diffusivity = 0.5
start = {start}

[time]
dt = 1e-3
horizon = 10.0
{monitoring}

[domain]
shape = "ball"
center = {center}
radius = 1.0
wall = "absorbing"

[record]
survival = {{ stop = 1.0, points = 11 }}
"""


def ball_store(tmp_path: Path, dimension: int, start: list[float], **kw: str) -> Path:
    """A ball of radius 1 centred at (0.25, 0, ...) run from ``start`` into a store in
    ``tmp_path``; ``monitoring`` adds that line to the [time] table."""
    return build_store(
        BALL_SPEC.format(
            dimension=dimension,
            start=start,
            center=[0.25] + [0.0] * (dimension - 1),
            monitoring=kw.get("monitoring", ""),
        ),
        tmp_path / f"ball{dimension}.zarr",
        threads=2,
    )
