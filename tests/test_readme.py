"""The README's two commands are what CI runs, and every example sweep is valid."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from sweep.plan import make_plan
from sweep.spec import load_spec

ROOT = Path(__file__).resolve().parent.parent


def readme_commands() -> list[str]:
    text = (ROOT / "README.md").read_text()
    section = text.split("## Two commands", 1)[1].split("\n## ", 1)[0]
    return re.findall(r"```bash\n(.+?)\n```", section, flags=re.S)


def test_readme_has_exactly_two_commands() -> None:
    commands = readme_commands()
    assert len(commands) == 2
    assert all("\n" not in c for c in commands)


def test_ci_runs_the_readme_commands_verbatim() -> None:
    ci = (ROOT / ".ci" / "run").read_text().splitlines()
    for command in readme_commands():
        assert command in ci, f".ci/run does not run the README command {command!r}"


def test_readme_states_convergence_checks() -> None:
    text = (ROOT / "README.md").read_text()
    assert "need convergence checks" in text


@pytest.mark.parametrize(
    "path", sorted((ROOT / "sweeps").glob("*.toml")), ids=lambda p: p.name
)
def test_example_sweeps_are_valid(path: Path) -> None:
    sweep = load_spec(path)
    assert make_plan(sweep).n_tasks > 0
