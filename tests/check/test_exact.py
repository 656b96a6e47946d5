"""``sweep.check.exact``: the expected bias of endpoint monitoring, from the closed forms
at the domain with its absorbing walls shifted outward (Broadie, Glasserman & Kou 1997;
``docs/analytic-reference.md`` section F)."""

from __future__ import annotations

from pathlib import Path

from sweep.check import check_store
from tests.check.stores import ball_store
from tests.conftest import SMALL_SPEC, build_store, run_cli
from tests.tolerances import Z_STAT

#: The small sweep checked at step ends only, with a coarse step and more walkers so
#: that the discretisation bias stands out of the noise.
ENDPOINT_SPEC = (
    SMALL_SPEC.replace("horizon = 3.0", 'horizon = 3.0\nmonitoring = "endpoint"')
    .replace("walkers = 3000", "walkers = 20000")
    .replace("chunk = 500", "chunk = 5000")
    .replace("dt = 1e-3", "dt = 4e-3")
)


def test_check_reports_endpoint_bias_separately(tmp_path: Path) -> None:
    out = build_store(ENDPOINT_SPEC, tmp_path / "e.zarr", threads=2)
    report = check_store(out)
    mean_rows = [r for r in report.rows if r.statistic == "mean first-passage time"]
    assert mean_rows and all(r.allowance > 0 for r in mean_rows)
    # The shifted-wall prediction (Broadie, Glasserman & Kou 1997) explains the bias:
    # simulated minus (exact + allowance) is within Z_STAT standard errors.
    for r in mean_rows:
        assert abs(r.simulated - r.exact - r.allowance) <= Z_STAT * r.stderr
    text = run_cli("check", out).stdout
    assert "expected dt bias" in text


def test_check_exit_angle_endpoint_allowance(tmp_path: Path) -> None:
    # Checking the surface only at step ends acts like a ball enlarged by
    # 0.5826 sqrt(2 D dt) (Broadie, Glasserman & Kou 1997): the angle's mean shrinks.
    out = ball_store(tmp_path, 2, [0.85, 0.0], monitoring='monitoring = "endpoint"')
    rows = [r for r in check_store(out).rows if r.statistic == "E[cos exit angle]"]
    assert len(rows) == 1 and rows[0].allowance < 0
