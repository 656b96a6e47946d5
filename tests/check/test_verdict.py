"""``sweep.check.verdict``: the verdict and JSON of a store with nothing to compare, and
of an unfinished store."""

from __future__ import annotations

import json
from pathlib import Path

from sweep.check import check_store
from tests.conftest import run_cli


def test_nothing_compared_has_its_own_state_in_json_and_text(
    degenerate_stores: dict[str, Path],
) -> None:
    """A store with no closed form: the JSON says compared 0 and passed null (not
    true), with the text's exit code."""
    out = degenerate_stores["all_on_target"]
    text = run_cli("check", out)
    as_json = run_cli("check", out, "--json")
    assert text.returncode == as_json.returncode == 0, (text.stderr, as_json.stderr)
    report = json.loads(as_json.stdout)
    assert report["compared"] == 0 and report["passed"] is None, report
    assert report["verdict"].startswith("nothing compared")
    assert "nothing compared" in text.stdout and "passed" not in text.stdout


def test_incomplete_store_says_so_in_the_verdict(
    degenerate_stores: dict[str, Path],
) -> None:
    out = degenerate_stores["one_task"]
    report = check_store(out)
    assert report.rows and report.passed
    assert not report.complete and (report.tasks_done, report.tasks_total) == (1, 8)
    assert "INCOMPLETE: 1 of 8 tasks done" in report.verdict()
    text = run_cli("check", out)
    assert "1 of 8 tasks done" in text.stdout and "finished walkers only" in text.stdout
    as_json = json.loads(run_cli("check", out, "--json").stdout)
    assert as_json["complete"] is False and as_json["tasks_done"] == 1
