"""`sweep plan`: sizes, the run-time estimate from the measured speed, warnings."""

from __future__ import annotations

from pathlib import Path

from sweep.plan import make_plan
from sweep.sizing import size
from sweep.spec import parse_spec
from tests.conftest import SMALL_SPEC, run_cli


def test_plan_prints_sizes_and_estimate(small_spec: Path) -> None:
    result = run_cli("plan", str(small_spec), "--cores", "4")
    assert result.returncode == 0, result.stderr
    for fragment in (
        "points:          2",
        "tasks:           12",
        "walker-steps:",
        "disk:",
        "memory per task:",
        "on 4 cores",
    ):
        assert fragment in result.stdout


def test_plan_warns_about_coarse_dt_and_short_horizon(tmp_path: Path) -> None:
    text = (
        SMALL_SPEC.replace("dt = 1e-3", "dt = 0.02")
        .replace("horizon = 3.0", "horizon = 0.2")
        .replace("stop = 1.0", "stop = 0.2")
        .replace("times = [0.2, 0.05]", "times = [0.1]")
    )
    sizing = size(make_plan(parse_spec(text, source="coarse.toml")))
    joined = "\n".join(sizing.warnings)
    assert "is coarse" in joined and "domain width" in joined
    assert "horizon 0.2 is short" in joined
