"""`sweep compare`: two stores of one study, point by point (the README's convergence
advice: rerun at dt / 2 and with more walkers, and see what moves)."""

from __future__ import annotations

import json
import subprocess
from pathlib import Path

import pytest

from sweep.compare import compare_stores
from sweep.errors import CompareError
from sweep.execute import RunOptions, run
from tests.conftest import PATIENCE, SMALL_SPEC, sweep_command


def _store(tmp_path: Path, name: str, spec_text: str) -> Path:
    spec = tmp_path / f"{name}.toml"
    spec.write_text(spec_text)
    out = tmp_path / f"{name}.zarr"
    assert run(spec, out, RunOptions(threads=2, progress=False)).complete
    return out


def _cli(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [*sweep_command(), *args], capture_output=True, text=True, timeout=PATIENCE
    )


def test_refined_time_step_is_not_flagged(tmp_path: Path) -> None:
    # Bridge monitoring makes the interval's first passage exact up to the timestamp,
    # so halving dt must not move any statistic beyond the Bonferroni bound (the two
    # stores' streams are independent: dt enters every task's seed).
    a = _store(tmp_path, "a", SMALL_SPEC)
    b = _store(tmp_path, "b", SMALL_SPEC.replace("dt = 1e-3", "dt = 5e-4"))
    result = compare_stores(a, b)
    assert not result.flagged
    assert result.changed == {"dt": ("0.001", "0.0005")}
    assert {r.point_a for r in result.rows} == {0, 1}
    assert all(r.point_a == r.point_b for r in result.rows)
    done = _cli("compare", str(a), str(b))
    assert done.returncode == 0, done.stderr
    assert "no statistic differs" in done.stdout


def test_coarse_endpoint_store_is_flagged(tmp_path: Path) -> None:
    # Endpoint monitoring at a coarse step lets walkers slip out and back between
    # steps: the mean exit time is biased by about +0.58 sqrt(2 D dt) L / (2 D)
    # (shifted-wall estimate; see docs and the check's bias column), far beyond the
    # intervals of 3000 walkers, so the comparison must flag it and exit 1.
    a = _store(tmp_path, "a", SMALL_SPEC)
    coarse = SMALL_SPEC.replace("dt = 1e-3", 'dt = 2e-2\nmonitoring = "endpoint"')
    spec = tmp_path / "c.toml"
    spec.write_text(coarse)
    c = tmp_path / "c.zarr"
    assert run(spec, c, RunOptions(threads=2, progress=False)).complete
    result = compare_stores(a, c)
    flagged = {r.statistic for r in result.flagged}
    assert "mean first-passage time" in flagged
    done = _cli("compare", str(a), str(c), "--json")
    assert done.returncode == 1, done.stderr
    payload = json.loads(done.stdout)
    assert payload["differ"] == len(result.flagged) > 0
    assert payload["compared"] == len(result.rows)


def test_more_walkers_with_one_seed_is_noted(tmp_path: Path) -> None:
    a = _store(tmp_path, "a", SMALL_SPEC)
    b = _store(tmp_path, "b", SMALL_SPEC.replace("walkers = 3000", "walkers = 6000"))
    result = compare_stores(a, b)
    assert result.changed == {"walkers": ("3000", "6000")}
    assert any("one seed" in note for note in result.notes)


def test_stores_of_other_studies_are_refused(tmp_path: Path) -> None:
    a = _store(tmp_path, "a", SMALL_SPEC)
    half_line = (
        SMALL_SPEC.replace("upper = [1.0]", 'upper = ["inf"]')
        .replace(
            'walls = { x_lower = "absorbing", x_upper = "absorbing" }',
            'walls = { x_lower = "absorbing" }',
        )
        .replace("bins = 8 }", "bins = 8, lower = [0.0], upper = [4.0] }")
    )
    b = _store(tmp_path, "b", half_line)
    with pytest.raises(CompareError, match="not stores of one study"):
        compare_stores(a, b)
    done = _cli("compare", str(a), str(b))
    assert done.returncode == 2
    assert "not stores of one study" in done.stderr
    assert "Traceback" not in done.stderr
