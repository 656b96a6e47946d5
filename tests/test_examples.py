"""Every example sweep runs (with fewer walkers) and passes `sweep check`."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from sweep.check import check_store, format_table
from sweep.execute import RunOptions, run
from sweep.spec import load_spec

ROOT = Path(__file__).resolve().parent.parent
#: Walkers per point in these smoke runs: enough for meaningful z-scores, few enough
#: for CI. The checks' standard errors widen accordingly.
WALKERS = 400


@pytest.mark.parametrize(
    "path", sorted((ROOT / "sweeps").glob("*.toml")), ids=lambda p: p.name
)
def test_example_sweep_runs_and_checks(path: Path, tmp_path: Path) -> None:
    text = re.sub(r"(?m)^walkers = .*$", f"walkers = {WALKERS}", path.read_text())
    text = re.sub(r"(?m)^chunk = .*$", f"chunk = {WALKERS // 2}", text)
    small = tmp_path / path.name
    small.write_text(text)
    out = tmp_path / "out.zarr"
    assert run(small, out, RunOptions(threads=2, progress=False)).complete
    report = check_store(out)
    table = format_table(report)
    assert report.exit_code == 0, table  # passed, or nothing to compare (None)
    sweep = load_spec(small)
    assert len({r.point for r in report.rows}) + len(report.unchecked) == sweep.n_points
