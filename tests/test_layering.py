"""The layering of ``sweep/`` and ``kernels/``, read from the source (nothing imported).

Every import statement of every module is read with :mod:`ast` (imports inside
functions and under ``TYPE_CHECKING`` included) and checked against the declared
order: a stage imports only stages before it (and its own package's modules); only
``sweep.execute`` imports dask/distributed; only ``sweep.store`` imports zarr;
``kernels`` imports nothing from ``sweep``. ``sweep.X`` and ``sweep.X.sub`` are both
stage X, whether X is a module or a package.
"""

from __future__ import annotations

import ast
from collections.abc import Iterator
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent

#: The stages of ``sweep``, lowest first: each imports only stages before it.
#: ``__init__`` is the facade (``import sweep``), which may import every stage.
ORDER = (
    "errors",
    "text",
    "potentials",  # the force fields' families (issue 22): spec's model holds a Force
    "precision",  # the precision target's model (issue 23): spec's model holds one
    "spec",
    "exit_times",
    "plan",
    "growth",
    "store",
    "simulate",
    "memory",
    "execute",
    "stats",
    "analytic",
    "check",
    "sizing",
    "precision_plan",
    "compare",
    "export",
    "views",
    "report_force",  # the escape-time figure (issue 22), called by report
    "report",
    "bench",
    "cli",
    "__init__",
)

#: Top-level packages only one stage may import (the rest reach them through it).
CONFINED = {
    "dask": "execute",
    "distributed": "execute",
    "dask_jobqueue": "execute",
    "zarr": "store",
}

#: Imports against the order tolerated while other work in flight removes them: the
#: lead deletes each entry as the branch fixing it is merged, and
#: test_known_exceptions_are_still_needed says when one is no longer needed.
#: (importing module, imported module), as dotted names. Empty since issue #20's
#: merges (plan imported analytic, stats imported dask.array).
KNOWN_EXCEPTIONS: set[tuple[str, str]] = set()


def modules() -> Iterator[tuple[str, Path]]:
    """(dotted name, file) of every module under ``sweep/`` and ``kernels/``."""
    for package in ("sweep", "kernels"):
        for path in sorted((ROOT / package).rglob("*.py")):
            parts = list(path.relative_to(ROOT).with_suffix("").parts)
            if parts[-1] == "__init__":
                parts.pop()
            yield ".".join(parts), path


def is_package(path: Path) -> bool:
    return path.name == "__init__.py"


def _exists(dotted: str) -> bool:
    base = ROOT.joinpath(*dotted.split("."))
    return base.with_suffix(".py").is_file() or (base / "__init__.py").is_file()


def imports(name: str, path: Path) -> Iterator[tuple[int, str]]:
    """(line, imported module) of every import in ``path`` (module ``name``)."""
    tree = ast.parse(path.read_text(), filename=str(path))
    package = name if is_package(path) else name.rpartition(".")[0]
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            for alias in node.names:
                yield node.lineno, alias.name
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package.split(".")
                base = base[: len(base) - (node.level - 1)]
                module = ".".join([*base, *([node.module] if node.module else [])])
            else:
                module = node.module or ""
            for alias in node.names:
                # `from sweep import store` imports the module sweep.store.
                sub = f"{module}.{alias.name}"
                yield node.lineno, sub if _exists(sub) else module


def stage(module: str) -> str | None:
    """The stage of a ``sweep`` module (``sweep.X`` and ``sweep.X.sub`` are X;
    ``sweep`` itself is the facade), None outside ``sweep``."""
    parts = module.split(".")
    if parts[0] != "sweep":
        return None
    return parts[1] if len(parts) > 1 else "__init__"


def violations() -> list[tuple[str, str, str]]:
    """(where, imported, why) of every import against the layering."""
    out = []
    for name, path in modules():
        own = stage(name)
        for line, imported in imports(name, path):
            where = f"{path.relative_to(ROOT) if path.is_relative_to(ROOT) else path}:{line}"
            top = imported.split(".")[0]
            if name.startswith("kernels"):
                if top == "sweep":
                    out.append((name, imported, f"{where}: kernels import sweep"))
                continue
            if top in CONFINED and own != CONFINED[top]:
                out.append(
                    (
                        name,
                        imported,
                        f"{where}: only sweep.{CONFINED[top]} imports {top}",
                    )
                )
            target = stage(imported)
            if target is None or target == own:
                continue
            if own not in ORDER:
                continue  # test_every_sweep_module_belongs_to_a_declared_stage
            if target not in ORDER:
                out.append(
                    (name, imported, f"{where}: {imported} is no declared stage")
                )
            elif ORDER.index(target) > ORDER.index(own):
                out.append(
                    (name, imported, f"{where}: {own} imports the later stage {target}")
                )
    return out


def test_every_sweep_module_belongs_to_a_declared_stage() -> None:
    undeclared = [
        name
        for name, _ in modules()
        if stage(name) is not None and stage(name) not in ORDER
    ]
    assert not undeclared, f"add these stages to ORDER (and the plan): {undeclared}"


def test_imports_follow_the_declared_order() -> None:
    bad = [
        why
        for name, imported, why in violations()
        if (name, imported) not in KNOWN_EXCEPTIONS
    ]
    assert not bad, "imports against the layering:\n" + "\n".join(bad)


def test_known_exceptions_are_still_needed() -> None:
    found = {(name, imported) for name, imported, _ in violations()}
    stale = KNOWN_EXCEPTIONS - found
    assert not stale, f"fixed: remove from KNOWN_EXCEPTIONS: {sorted(stale)}"


@pytest.mark.parametrize(
    ("source", "importer", "expected"),
    [
        ("import dask.array as da", "sweep.stats", "only sweep.execute imports dask"),
        ("from distributed import Client", "sweep.report", "only sweep.execute"),
        ("import zarr", "sweep.execute.runner", "only sweep.store imports zarr"),
        ("from sweep import check", "sweep.plan", "plan imports the later stage check"),
        ("from sweep.check.verdicts import x", "sweep.store", "later stage check"),
        ("def f():\n    from sweep.cli import main", "sweep.stats", "later stage cli"),
        ("import sweep.sizing", "sweep.memory", "memory imports the later stage"),
        ("from sweep import SweepError", "sweep.spec", "later stage __init__"),
        ("from sweep.elsewhere import y", "sweep.cli", "no declared stage"),
        ("from sweep.errors import SweepError", "kernels.step", "kernels import sweep"),
    ],
)
def test_the_checker_finds_each_kind_of_violation(
    source: str,
    importer: str,
    expected: str,
    tmp_path: Path,
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    """The checker itself, on one-line modules (a layering test that finds nothing
    would pass as well)."""
    path = tmp_path / "module.py"
    path.write_text(source + "\n")
    monkeypatch.setattr(f"{__name__}.modules", lambda: iter([(importer, path)]))
    found = [why for _, _, why in violations()]
    assert any(expected in why for why in found), found


@pytest.mark.parametrize(
    ("source", "importer"),
    [
        ("from sweep.errors import SweepError", "sweep.text"),
        ("from sweep.execute.options import RunOptions", "sweep.execute.runner"),
        ("from . import options", "sweep.execute.runner"),
        ("import dask", "sweep.execute.cluster"),
        ("import zarr", "sweep.store"),
        ("from sweep.analytic import free", "sweep.check"),
        ("import numpy", "kernels.step"),
        ("from sweep import cli, stats", "sweep"),
    ],
)
def test_the_checker_allows_the_declared_order(
    source: str, importer: str, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    path = tmp_path / ("__init__.py" if importer == "sweep" else "module.py")
    path.write_text(source + "\n")
    monkeypatch.setattr(f"{__name__}.modules", lambda: iter([(importer, path)]))
    assert not violations()
