"""Notebook access: tolerant selection, the grid view, and the example notebook."""

from __future__ import annotations

import runpy
import sys
from pathlib import Path

import pytest

import sweep

ROOT = Path(__file__).resolve().parent.parent


def test_select_tolerates_float_noise(small_store: Path) -> None:
    ds = sweep.open(small_store)
    one = sweep.select(ds, diffusivity=0.5 + 1e-13)
    assert "point" not in one.dims and float(one.diffusivity) == 0.5
    with pytest.raises(KeyError, match=r"no point has diffusivity = 0.7"):
        sweep.select(ds, diffusivity=0.7)
    with pytest.raises(KeyError, match="not a swept parameter"):
        sweep.select(ds, radius=1.0)


def test_grid_view_unstacks_product(small_store: Path) -> None:
    grid = sweep.grid_view(sweep.open(small_store))
    assert set(grid.first_passage_time.dims) == {"walker", "diffusivity"}
    assert list(grid.diffusivity.values) == [0.5, 1.0]
    assert grid.first_passage_time.chunks is not None  # still lazy


def test_example_notebook_runs(
    small_store: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setattr(sys, "argv", ["explore_results.py", str(small_store)])
    runpy.run_path(str(ROOT / "docs" / "explore_results.py"), run_name="__main__")
    assert small_store.with_suffix(".survival.png").exists()
