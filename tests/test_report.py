"""`sweep report`: figures and an HTML page, for 1-D and 2-D stores."""

from __future__ import annotations

from pathlib import Path

from sweep.execute import RunOptions, run
from sweep.report import write_report
from tests.conftest import SMALL_SPEC

PLANE = """
[sweep]
name = "plane"
seed = 3
walkers = 2000
[motion]
dimension = 2
diffusivity = 0.5
start = [0.3, 0.5]
[time]
dt = 2e-3
horizon = 2.0
[domain]
lower = [0.0, 0.0]
upper = [1.0, 1.0]
walls = { x_low = "absorbing", x_high = "absorbing", y_low = "reflecting", y_high = "reflecting" }
[record]
occupancy = { times = [0.05, 0.3], bins = 12 }
[grid]
"domain.upper" = [[1.0, 1.0], [2.0, 1.0]]
"""


def _report(tmp_path: Path, text: str) -> str:
    spec = tmp_path / "s.toml"
    spec.write_text(text)
    out = tmp_path / "s.zarr"
    assert run(spec, out, RunOptions(threads=2, progress=False)).complete
    page = write_report(out, tmp_path / "report")
    for name in ("survival.png", "fpt_density.png", "splitting.png", "occupancy.png"):
        png = tmp_path / "report" / name
        assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n", name
    return page.read_text()


def test_report_1d_has_figures_and_check_table(tmp_path: Path) -> None:
    text = _report(tmp_path, SMALL_SPEC)
    assert "all analytic checks passed" in text
    assert "survival S(t=" in text and "need convergence checks" in text


def test_report_2d_has_heat_maps_and_checks(tmp_path: Path) -> None:
    text = _report(tmp_path, PLANE)
    assert "analytic checks passed" in text
    assert "occupancy.png" in text
