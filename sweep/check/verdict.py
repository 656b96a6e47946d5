"""The outcome of ``sweep check``: one row per comparison, the report of a store, its
verdict (passed, failed, or nothing compared; complete or not) and its JSON form.

A comparison passes when ``|z| <= Z_PASS``, ``z = (simulated - exact) / stderr``; a
consistency row (``sweep.check.twin``), whose reference is a companion run with its own
standard error, divides by ``sqrt(stderr² + reference_stderr²)``.
"""

from __future__ import annotations

import json
import math
from dataclasses import asdict, dataclass

#: |z| above this fails a check. With a handful of statistics per point and thousands
#: of points, 5 standard errors keeps false alarms rare (two-sided 5.7e-7 per check).
Z_PASS = 5.0


@dataclass(frozen=True)
class CheckRow:
    """One comparison of a simulated statistic with its exact value."""

    point: int
    statistic: str
    simulated: float
    stderr: float
    exact: float
    z: float
    passed: bool
    source: str
    #: Expected discretisation bias of the simulated value (shifted-wall prediction for
    #: endpoint monitoring; 0 where the scheme is exact). Reported beside the verdict,
    #: never folded into the tolerance.
    allowance: float = 0.0
    #: Standard error of ``exact`` when it is itself an estimate: the companion run of
    #: a consistency row (``sweep.check.twin``); 0 for a closed form. ``z`` divides by
    #: sqrt(stderr² + reference_stderr²).
    reference_stderr: float = 0.0
    #: For a consistency row, the companion run ``exact`` comes from ("reflecting
    #: twin: 4000 walkers, seed 7, chunks of 1000"); "" for a closed form.
    companion: str = ""


@dataclass(frozen=True)
class CheckReport:
    """All comparisons of a store, plus the points that have none."""

    store: str
    rows: tuple[CheckRow, ...]
    unchecked: tuple[tuple[int, str], ...]
    #: Tasks with a completion marker, and all tasks of the sweep: a check of an
    #: unfinished store covers the finished tasks only, and its verdict says so.
    tasks_done: int = 0
    tasks_total: int = 0

    @property
    def compared(self) -> int:
        """How many comparisons were made (0: nothing had a closed form)."""
        return len(self.rows)

    @property
    def passed(self) -> bool | None:
        """True when every comparison passed, False when one failed, None when nothing
        was compared (which is not a pass)."""
        if not self.rows:
            return None
        return all(r.passed for r in self.rows)

    @property
    def complete(self) -> bool:
        return self.tasks_done >= self.tasks_total

    @property
    def exit_code(self) -> int:
        """1 when a comparison failed, else 0 (also when nothing was compared)."""
        return 1 if self.passed is False else 0

    def verdict(self) -> str:
        """One line: all passed, how many failed, or that nothing could be compared
        (no point has a closed form), which is not a pass; an unfinished store adds
        how many tasks are done and what that means."""
        return self.outcome() + self.incomplete_note()

    def outcome(self) -> str:
        """The verdict without the note on an unfinished store."""
        if not self.rows:
            text = (
                "nothing compared: no point could be checked (the reason is given "
                "for each point)"
            )
        elif self.passed:
            text = f"all {len(self.rows)} checks passed"
        else:
            failed = sum(not r.passed for r in self.rows)
            text = f"{failed} of {len(self.rows)} checks FAILED"
        return text

    def incomplete_note(self) -> str:
        """ "" for a finished store, else what an unfinished one means for the verdict."""
        if self.complete:
            return ""
        return (
            f"; store INCOMPLETE: {self.tasks_done} of {self.tasks_total} tasks done, "
            "so these checks cover the finished walkers only (points without any are "
            "not checked); rerun `sweep run` to finish"
        )

    def to_json(self) -> str:
        return json.dumps(
            {
                "store": self.store,
                "compared": self.compared,
                "passed": self.passed,
                "verdict": self.verdict(),
                "complete": self.complete,
                "tasks_done": self.tasks_done,
                "tasks_total": self.tasks_total,
                "z_pass": Z_PASS,
                "rows": [_finite(_json_row(r)) for r in self.rows],
                "unchecked": [{"point": p, "reason": why} for p, why in self.unchecked],
            },
            indent=2,
        )


def _json_row(row: CheckRow) -> dict[str, object]:
    """The row's fields; a closed form's row leaves out the consistency fields, so
    its JSON is what it was before consistency rows existed."""
    fields = asdict(row)
    if not row.companion:
        del fields["reference_stderr"], fields["companion"]
    return fields


def _finite(row: dict[str, object]) -> dict[str, object]:
    return {
        k: (None if isinstance(v, float) and not math.isfinite(v) else v)
        for k, v in row.items()
    }
