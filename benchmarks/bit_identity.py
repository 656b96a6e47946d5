"""Bit-identity check of the walker kernel against another git revision's kernel.

Runs a few hundred small configurations (1-4 dimensions, every wall mix, balls with
absorbing and reflecting surfaces, targets, drift, occupancy snapshots, uniform starts,
endpoint and bridge monitoring, first-passage histograms) through the kernel of a git
revision (default ``main``) and through this checkout's kernel, and demands equal
outputs to the last bit, the same walker-step count and the same generator state after
(both kernels start from the same SFC64 state, ``kernels.rng.initial_state``).
A refactor of the kernel that must not change the numbers is checked with it before
every commit::

    PYTHONPATH=. python benchmarks/bit_identity.py            # against main
    PYTHONPATH=. python benchmarks/bit_identity.py --ref HEAD~1

The revision's ``kernels`` package (walkers.py with its generated loops, generator and
helpers) is written to a cache directory keyed by its content (so numba's on-disk cache
of it survives between runs) and imported from there under a name of its own.
Both kernels get inputs made by this checkout's ``kernels.inputs``; a revision before
the named inputs (a 31-argument ``simulate``) gets them field by field. A change of the
random streams is not a refactor: it fails here by design, and a revision of another
stream version (``kernels.STREAM_VERSION``; version 1 took a numpy ``Generator``) is
refused.
"""

from __future__ import annotations

import argparse
import hashlib
import importlib
import inspect
import itertools
import math
import re
import subprocess
import sys
import tempfile
from pathlib import Path
from types import ModuleType
from typing import Any

import numpy as np

from kernels import inputs, walkers
from kernels.rng import initial_state

ROOT = Path(__file__).resolve().parent.parent
#: Walkers per configuration: enough that every branch (both faces, targets, the
#: bridge's hitting-time draw, rare ziggurat branches) is visited in most of them.
N_WALKERS = 150


#: Import lines that name the kernels package (rewritten to the revision's own copy).
_KERNELS_IMPORT = re.compile(r"^(\s*)(from|import) kernels\b", re.MULTILINE)


def _git_show(ref: str, path: str) -> str:
    return subprocess.run(
        ["git", "show", f"{ref}:{path}"],
        cwd=ROOT, capture_output=True, text=True, check=True,
    ).stdout  # fmt: skip


def reference_module(ref: str) -> ModuleType:
    """Import ``kernels/walkers.py`` as of git revision ``ref``, with the rest of that
    revision's ``kernels`` package (its generated loops, generator and helpers).

    The revision's package is copied to a cache directory keyed by its content (so
    numba's on-disk cache of it survives between runs) under a package name of its
    own, ``kernels_<digest>``, its imports of ``kernels`` rewritten to that name: a
    plain import of the old walkers.py alone would run this checkout's loops
    (``from kernels import _loops``), comparing the checkout with itself.
    """
    names = subprocess.run(
        ["git", "ls-tree", "--name-only", f"{ref}:kernels"],
        cwd=ROOT, capture_output=True, text=True, check=True,
    ).stdout.split()  # fmt: skip
    sources = {
        name: _git_show(ref, f"kernels/{name}")
        for name in names
        if name.endswith(".py")
    }
    h = hashlib.sha256()
    for name in sorted(sources):
        h.update(name.encode() + b"\0" + sources[name].encode() + b"\0")
    digest = h.hexdigest()[:16]
    package = f"kernels_{digest}"
    root = Path(tempfile.gettempdir()) / "brownian-sweep-bit-identity" / digest
    folder = root / package
    folder.mkdir(parents=True, exist_ok=True)
    for name, text in sources.items():
        path = folder / name
        text = _KERNELS_IMPORT.sub(rf"\1\2 {package}", text)
        if not path.exists() or path.read_text() != text:
            path.write_text(text)
    if str(root) not in sys.path:
        sys.path.insert(0, str(root))
    return importlib.import_module(f"{package}.walkers")


def configurations() -> list[dict[str, Any]]:
    """Keyword sets for :func:`run` (geometry, motion and recording builders')."""
    configs: list[dict[str, Any]] = []
    # Boxes: every face mix per axis (absorbing, reflecting, absent), drift, bridge.
    kinds = {"A": (True, 0.0), "R": (False, 0.0), "-": (False, math.inf)}
    mixes = {
        1: ["AA", "AR", "RA", "RR", "A-", "-A", "R-"],
        2: ["AA AA", "AR RA", "RR AR", "A- RR", "-A -R", "AA RR"],
        3: ["AA AA AA", "AR RA RR", "RR RR AR", "A- -- RA", "RR RR RR"],
        4: ["AA AR RR RA", "RR RR RR AA", "A- RR AR --"],
    }
    for d, walls in mixes.items():
        for mix, bridge, drift in itertools.product(walls, (True, False), (0, 1)):
            sides = mix.split()
            lower, upper, abs_lo, abs_hi = [], [], [], []
            for i, (lo, hi) in enumerate(sides):
                width = 1.0 + 0.25 * i
                lower.append(-math.inf if kinds[lo][1] else 0.0)
                upper.append(math.inf if kinds[hi][1] else width)
                abs_lo.append(kinds[lo][0])
                abs_hi.append(kinds[hi][0])
            configs.append(dict(
                lower=lower, upper=upper, absorbing_lower=abs_lo, absorbing_upper=abs_hi,
                start=[0.3 + 0.1 * i for i in range(d)],
                drift=[0.7 * drift * (-1) ** i for i in range(d)] if drift else None,
                diffusivity=0.6, dt=0.004 * (1 + d), n_steps=60, bridge=bridge,
                survival_times=[0.01, 0.05, 0.1, 0.2], fpt_bins=4 if drift else 0,
                fpt_bin_width=0.1,
            ))  # fmt: skip
    # Narrow boxes whose steps (sigma about a box width) often overshoot a face's
    # mirror image past the opposite face: the fold's rare path.
    for bridge, faces in itertools.product((True, False), ("AR", "RR")):
        configs.append(dict(
            lower=[0.0, 0.0, 0.0], upper=[0.05, 0.3, 1.0],
            absorbing_lower=[faces[0] == "A", False, True],
            absorbing_upper=[faces[1] == "A", False, False],
            start=[0.02, 0.1, 0.5], drift=[3.0, -2.0, 0.0], diffusivity=1.0, dt=1e-3,
            n_steps=60, bridge=bridge, survival_times=[0.01, 0.05],
        ))  # fmt: skip
    # Boxes with targets (one, two, seventy), absorbing or reflecting faces, uniform
    # starts, occupancy snapshots (step 0 and repeated steps).
    for d, n_targets, faces, bridge, uniform in itertools.product(
        (1, 2, 3, 4), (1, 2), ("A", "R"), (True, False), (False, True)
    ):
        if d == 1 and n_targets == 2:
            continue
        centers = [[0.7 - 0.4 * k] + [0.5] * (d - 1) for k in range(n_targets)]
        configs.append(dict(
            lower=[0.0] * d, upper=[1.0] * d,
            absorbing_lower=[faces == "A"] * d, absorbing_upper=[False] * d,
            target_center=centers, target_radius=[0.12 + 0.03 * k for k in range(n_targets)],
            start=None if uniform else [0.5] * d, drift=[0.3] * d if bridge else None,
            diffusivity=0.5, dt=0.01, n_steps=50, bridge=bridge,
            survival_times=[0.05, 0.3], occupancy_steps=[0, 10, 10, 40],
            occupancy_bins=3, fpt_bins=3, fpt_bin_width=0.2,
        ))  # fmt: skip
    # Reflecting boxes with steps shorter than half their width (the loop's mirror-only
    # path, kernels/step.py): with and without targets, an absent face, drift,
    # uniform starts, starts on a face.
    for d, n_targets, bridge, variant in itertools.product(
        (1, 2, 3, 4), (0, 1, 2), (True, False), ("plain", "drift", "uniform", "face")
    ):
        if d == 1 and n_targets == 2:
            continue
        centers = [[0.7 - 0.4 * k] + [0.5] * (d - 1) for k in range(n_targets)]
        start = [0.0] + [0.9] * (d - 1) if variant == "face" else [0.04] * d
        configs.append(dict(
            lower=[0.0] * d,
            upper=[1.0] + [1.2] * (d - 1) if variant == "uniform"
            else [1.0] + [1.2] * (d - 2) + [math.inf] * (d > 1),
            absorbing_lower=[False] * d, absorbing_upper=[False] * d,
            target_center=centers, target_radius=[0.15 + 0.03 * k for k in range(n_targets)],
            start=None if variant == "uniform" else start,
            drift=[0.5 * (-1) ** i for i in range(d)] if variant == "drift" else None,
            diffusivity=0.5, dt=1e-3, n_steps=120, bridge=bridge,
            survival_times=[0.05, 0.1], occupancy_steps=[0, 60], occupancy_bins=2,
            fpt_bins=3 if n_targets else 0, fpt_bin_width=0.05,
        ))  # fmt: skip
    rng = np.random.default_rng(7)
    for bridge in (True, False):
        centers = rng.uniform(0.05, 0.95, size=(70, 2)).tolist()
        configs.append(dict(
            lower=[0.0, 0.0], upper=[1.0, 1.0], absorbing_lower=[False, True],
            absorbing_upper=[False, False], target_center=centers,
            target_radius=[0.02] * 70, start=None, diffusivity=0.5, dt=0.01,
            n_steps=60, bridge=bridge, survival_times=[0.1],
        ))  # fmt: skip
    # Balls: absorbing or reflecting surface, with or without targets, drift, uniform
    # starts, snapshots, coarse steps that mirror more than once.
    for d, absorbing, bridge, n_targets, variant in itertools.product(
        (2, 3, 4),
        (True, False),
        (True, False),
        (0, 1, 2),
        ("plain", "drift", "uniform"),
    ):
        center = [0.3, -0.2, 0.1, 0.0][:d]
        radius = 1.0
        targets = [[center[0] + 0.5 - 0.9 * k] + center[1:] for k in range(n_targets)]
        configs.append(dict(
            lower=[c - radius for c in center], upper=[c + radius for c in center],
            absorbing_lower=[False] * d, absorbing_upper=[False] * d,
            ball_center=center, ball_radius=radius, ball_absorbing=absorbing,
            target_center=targets, target_radius=[0.2] * n_targets,
            start=None if variant == "uniform" else [c + 0.1 for c in center],
            drift=[0.8] * d if variant == "drift" else None,
            diffusivity=1.0, dt=0.02 if absorbing else 0.05, n_steps=40, bridge=bridge,
            survival_times=[0.05, 0.2, 0.5], occupancy_steps=[0, 5, 40],
            occupancy_lower=[c - 1.0 for c in center],
            occupancy_upper=[c + 1.0 for c in center], occupancy_bins=2,
            fpt_bins=5 if n_targets else 0, fpt_bin_width=0.1,
        ))  # fmt: skip
    return configs


def _inputs(config: dict[str, Any]) -> tuple[Any, Any, Any]:
    c = dict(config)
    g = inputs.geometry(
        c.pop("lower"), c.pop("upper"), c.pop("absorbing_lower"),
        c.pop("absorbing_upper"), ball_center=c.pop("ball_center", None),
        ball_radius=c.pop("ball_radius", math.inf),
        ball_absorbing=c.pop("ball_absorbing", True),
        target_center=c.pop("target_center", ()), target_radius=c.pop("target_radius", ()),
    )  # fmt: skip
    d = g.lower.shape[0]
    m = inputs.motion(
        c.pop("start"), dimension=d, diffusivity=c.pop("diffusivity"), dt=c.pop("dt"),
        n_steps=c.pop("n_steps"), drift=c.pop("drift", None), bridge=c.pop("bridge"),
    )  # fmt: skip
    r = inputs.recording(d, final=True, **c)
    return g, m, r


def run(module: ModuleType, config: dict[str, Any], seed: int) -> dict[str, Any]:
    """Every output of one run of ``module``'s kernel, and the generator's end state."""
    rng = initial_state(np.random.SeedSequence(seed))  # advanced in place
    g, m, r = _inputs(config)
    out = inputs.allocate(N_WALKERS, g, r)
    if len(inspect.signature(module.simulate).parameters) <= 6:
        steps = module.simulate(rng, N_WALKERS, g, m, r, out)
    else:
        # The 31-argument kernel, fed the same inputs.
        steps = module.simulate(
            rng, N_WALKERS, m.start, m.uniform_start, g.lower, g.upper,
            g.absorbing_lower, g.absorbing_upper, g.ball_center, g.ball_radius,
            g.ball_absorbing, g.target_center, g.target_radius, m.diffusivity, m.drift,
            m.dt, m.n_steps, m.bridge, r.survival_times, r.occupancy_steps,
            r.occupancy_lower, r.occupancy_upper, r.occupancy_bins, out.time, out.wall,
            out.position, out.survival, out.occupancy, out.final, r.fpt_bin_width,
            out.fpt_hist,
        )  # fmt: skip
    result = out._asdict()
    result["steps"] = int(steps)
    result["state"] = rng.copy()
    return result


def _equal(a: Any, b: Any) -> bool:
    """Equal to the last bit (NaN equals NaN; so does a signed zero only itself)."""
    a, b = np.asarray(a), np.asarray(b)
    if a.dtype.kind == "f":
        return a.shape == b.shape and a.tobytes() == b.tobytes()
    return bool(np.array_equal(a, b))


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--ref", default="main", help="git revision (default: main)")
    args = parser.parse_args(argv)
    reference = reference_module(args.ref)
    first = next(iter(inspect.signature(reference.simulate).parameters))
    if first == "rng":
        print(
            f"{args.ref}'s kernel draws from a numpy Generator (stream version 1): "
            "its numbers differ from this kernel's by design; compare with a revision "
            "of stream version 2"
        )
        return 2
    legacy = len(inspect.signature(reference.simulate).parameters) > 6
    configs = configurations()
    failures = 0
    absorbed = 0
    for k, config in enumerate(configs):
        old = run(reference, config, seed=1000 + k)
        new = run(walkers, config, seed=1000 + k)
        absorbed += int(np.count_nonzero(new["wall"] >= 0))
        bad = [name for name in old if not _equal(old[name], new[name])]
        if bad:
            failures += 1
            print(f"configuration {k} differs in {', '.join(bad)}: {config}")
    kind = "31-argument" if legacy else "named-input"
    print(
        f"{len(configs) - failures} of {len(configs)} configurations bit-identical to "
        f"{args.ref}'s ({kind}) kernel; {absorbed} walkers absorbed in all"
    )
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
