"""The spheres scheme end to end: definition, run, resume, check, plan.

Kernel accuracy is tested in ``tests/kernels/test_spheres.py``; here the scheme goes
through the real stack (definition -> plan -> Dask threads -> numba -> zarr).
"""

from __future__ import annotations

import math
import signal
import subprocess
import time
from pathlib import Path

import numpy as np
import pytest

import sweep
from sweep import store
from sweep.errors import SpecError
from sweep.execute import RunOptions, run
from sweep.spec import parse_spec
from tests.conftest import PATIENCE, SMALL_SPEC, assert_stores_identical, sweep_command
from tests.tolerances import Z_STAT

#: A reflecting square with an absorbing target, both schemes side by side.
BOTH_SCHEMES = """
[sweep]
name = "both"
seed = 3
walkers = 6000
chunk = 3000

[motion]
dimension = 2
diffusivity = 1.0
start = [0.2, 0.8]

[time]
dt = 1e-4
horizon = 20.0

[domain]
lower = [0.0, 0.0]
upper = [1.0, 1.0]
walls = { x_lower = "reflecting", x_upper = "reflecting", y_lower = "reflecting", y_upper = "absorbing" }
targets = [{ center = [0.6, 0.4], radius = 0.1 }]

[record]
survival = { stop = 2.0, points = 5 }

[grid]
"time.scheme" = ["steps", "spheres"]
"""

#: A spheres sweep whose tasks take long enough to be killed mid-run: a reflecting
#: cube with a small target (about 300 jumps per walker), 12 tasks.
SLOW_SPHERES = """
[sweep]
name = "slow-spheres"
seed = 5
walkers = 120000
chunk = 10000

[motion]
dimension = 3
diffusivity = 1.0
start = "uniform"

[time]
dt = 2e-6
horizon = 1000.0
scheme = "spheres"

[domain]
lower = [-1.0, -1.0, -1.0]
upper = [1.0, 1.0, 1.0]
walls = { x_lower = "reflecting", x_upper = "reflecting", y_lower = "reflecting", y_upper = "reflecting", z_lower = "reflecting", z_upper = "reflecting" }
targets = [{ center = [0.0, 0.0, 0.0], radius = 0.02 }]

[record]
survival = { stop = 100.0, points = 11 }
"""


def _spheres(text: str) -> str:
    return text.replace("[time]\n", '[time]\nscheme = "spheres"\n', 1)


def test_scheme_defaults_to_steps_and_keeps_the_hash() -> None:
    plain = parse_spec(SMALL_SPEC, source="a.toml")
    explicit = parse_spec(
        SMALL_SPEC.replace("[time]\n", '[time]\nscheme = "steps"\n'), source="a.toml"
    )
    assert plain.points[0].timing.scheme == "steps"
    # Definitions written before the key existed keep their hash and their streams.
    assert plain.spec_hash == explicit.spec_hash
    spheres = parse_spec(
        _spheres(SMALL_SPEC).replace(
            "occupancy = { times = [0.2, 0.05], bins = 8 }", ""
        ),
        source="a.toml",
    )
    assert spheres.points[0].timing.scheme == "spheres"
    assert spheres.spec_hash != plain.spec_hash


@pytest.mark.parametrize(
    ("text", "fragments"),
    [
        (
            SMALL_SPEC.replace("[time]\n", '[time]\nscheme = "jumps"\n'),
            ["[time.scheme]", "'steps' or 'spheres'", "jumps"],
        ),
        (
            _spheres(SMALL_SPEC),
            ["[record.occupancy]", 'scheme = "spheres"', 'time.scheme = "steps"'],
        ),
        (
            _spheres(SMALL_SPEC)
            .replace("occupancy = { times = [0.2, 0.05], bins = 8 }", "")
            .replace("start = [0.3]", "start = [0.3]\ndrift = [0.5]"),
            ["[motion.drift]", "must be zero", 'time.scheme = "steps"', "[0.5]"],
        ),
    ],
    ids=["unknown scheme", "occupancy", "drift"],
)
def test_what_spheres_cannot_do_is_refused(text: str, fragments: list[str]) -> None:
    with pytest.raises(SpecError) as err:
        parse_spec(text, source="bad.toml")
    message = str(err.value)
    assert "bad.toml" in message
    for fragment in fragments:
        assert fragment in message, message


def test_refusal_exits_2_with_one_message(tmp_path: Path) -> None:
    spec = tmp_path / "bad.toml"
    spec.write_text(_spheres(SMALL_SPEC))
    result = subprocess.run(
        [*sweep_command(), "run", str(spec), "--store", str(tmp_path / "s.zarr")],
        capture_output=True,
        text=True,
        timeout=PATIENCE,
    )
    assert result.returncode == 2
    assert "record.occupancy" in result.stderr and "Traceback" not in result.stderr
    assert not (tmp_path / "s.zarr").exists()


def test_both_schemes_agree_within_their_errors(tmp_path: Path) -> None:
    spec = tmp_path / "both.toml"
    spec.write_text(BOTH_SCHEMES)
    out = tmp_path / "both.zarr"
    assert run(spec, out, RunOptions(threads=2, progress=False)).complete
    ds = sweep.open(out)
    assert list(ds.scheme.values) == ["steps", "spheres"]
    times = ds.first_passage_time.values
    walls = ds.absorbing_wall.values
    assert (walls >= 0).all(), "the horizon should leave nobody free"
    means = times.mean(axis=1)
    ses = times.std(axis=1, ddof=1) / math.sqrt(times.shape[1])
    z = (means[1] - means[0]) / math.hypot(*ses)
    print(
        f"mean first-passage time: steps {means[0]:.5g}, spheres {means[1]:.5g}, z {z:+.2f}"
    )
    assert abs(z) <= Z_STAT
    # Splitting between the target (wall 4) and the absorbing top face (wall 3).
    p = (walls == 4).mean(axis=1)
    z = (p[1] - p[0]) / math.sqrt(p.mean() * (1 - p.mean()) * 2 / walls.shape[1])
    print(f"P(target): steps {p[0]:.4f}, spheres {p[1]:.4f}, z {z:+.2f}")
    assert abs(z) <= Z_STAT
    # Survival curves: counts of walkers whose first-passage time exceeds each time.
    s = ds.survival.values
    n = walls.shape[1]
    for k in range(s.shape[1]):
        q = s[:, k].mean()
        if 0 < q < 1:
            assert abs(s[1, k] - s[0, k]) <= Z_STAT * math.sqrt(q * (1 - q) * 2 / n)
    # Exit positions lie on the surface that absorbed the walker.
    pos = ds.exit_position.values
    on_target = np.linalg.norm(pos[walls == 4] - [0.6, 0.4], axis=1)
    np.testing.assert_allclose(on_target, 0.1, rtol=1e-9)
    np.testing.assert_array_equal(pos[walls == 3][:, 1], 1.0)


def test_check_works_unchanged_on_a_sphere_store(tmp_path: Path) -> None:
    # The interval [0, 1] with absorbing ends has closed forms (survival, mean exit
    # time, splitting), which `sweep check` compares as for any store.
    spec = tmp_path / "interval.toml"
    spec.write_text(
        _spheres(SMALL_SPEC).replace(
            "occupancy = { times = [0.2, 0.05], bins = 8 }", ""
        )
    )
    out = tmp_path / "interval.zarr"
    assert run(spec, out, RunOptions(threads=2, progress=False)).complete
    result = subprocess.run(
        [*sweep_command(), "check", str(out)],
        capture_output=True,
        text=True,
        timeout=PATIENCE,
    )
    assert result.returncode == 0, result.stdout + result.stderr
    assert "nothing compared" not in result.stdout


def test_resume_after_lost_tasks_is_bit_identical(tmp_path: Path) -> None:
    spec = tmp_path / "both.toml"
    spec.write_text(BOTH_SCHEMES)
    full, partial = tmp_path / "full.zarr", tmp_path / "partial.zarr"
    assert run(spec, full, RunOptions(threads=2, progress=False)).complete
    assert run(spec, partial, RunOptions(threads=1, progress=False)).complete
    markers = sorted((partial / "_tasks").iterdir())
    for marker in markers[1::2]:
        marker.unlink()
    summary = run(spec, partial, RunOptions(threads=2, progress=False))
    assert summary.completed == len(markers[1::2])
    assert_stores_identical(full, partial)


def test_sigkilled_sphere_run_resumes_bit_identical(
    tmp_path: Path, cli_env: dict[str, str]
) -> None:
    spec = tmp_path / "slow.toml"
    spec.write_text(SLOW_SPHERES)
    reference = tmp_path / "reference.zarr"
    assert run(spec, reference, RunOptions(threads=2, progress=False)).complete
    out = tmp_path / "killed.zarr"
    proc = subprocess.Popen(
        [*sweep_command(), "run", str(spec), "--store", str(out), "--threads", "2",
         "--quiet"],
        env=cli_env,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )  # fmt: skip
    deadline = time.monotonic() + PATIENCE
    while time.monotonic() < deadline and proc.poll() is None:
        if len(store.done_tasks(out)) >= 3:
            break
        time.sleep(0.01)
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    killed_done = len(store.done_tasks(out))
    assert killed_done < 12, "the run finished before it could be killed"
    result = subprocess.run(
        [*sweep_command(), "run", str(spec), "--store", str(out), "--quiet"],
        env=cli_env,
        capture_output=True,
        text=True,
        timeout=PATIENCE,
    )
    assert result.returncode == 0, result.stderr
    assert_stores_identical(reference, out)


def test_plan_estimates_sphere_sweeps(tmp_path: Path) -> None:
    spec = tmp_path / "both.toml"
    spec.write_text(BOTH_SCHEMES)
    result = subprocess.run(
        [*sweep_command(), "plan", str(spec)],
        capture_output=True,
        text=True,
        timeout=PATIENCE,
    )
    assert result.returncode == 0, result.stderr
    assert "spheres scheme:  1 point(s), about" in result.stdout
    assert "jumps and" in result.stdout
    # The spheres point is priced by its pilot: jumps (weighted) plus layer steps.
    from sweep.sizing import JUMP_STEPS, _expected_per_point, sphere_moves

    parsed = parse_spec(BOTH_SCHEMES, source="both.toml")
    jumps, steps = sphere_moves(parsed.points[1])
    assert jumps >= 1 and steps >= 0
    assert _expected_per_point(parsed)[1] == JUMP_STEPS * jumps + steps


def test_compare_finds_no_difference_between_the_schemes(tmp_path: Path) -> None:
    # The same study with steps and with spheres, in two stores: `sweep compare`
    # pairs the points and names the scheme as what changed.
    text = BOTH_SCHEMES.split("[grid]")[0]
    stores = []
    for scheme in ("steps", "spheres"):
        spec = tmp_path / f"{scheme}.toml"
        spec.write_text(text.replace("[time]\n", f'[time]\nscheme = "{scheme}"\n'))
        out = tmp_path / f"{scheme}.zarr"
        assert run(spec, out, RunOptions(threads=2, progress=False)).complete
        stores.append(str(out))
    result = subprocess.run(
        [*sweep_command(), "compare", *stores],
        capture_output=True,
        text=True,
        timeout=PATIENCE,
    )
    assert result.returncode == 0, result.stdout + result.stderr
    assert "scheme" in result.stdout and "no statistic differs" in result.stdout
