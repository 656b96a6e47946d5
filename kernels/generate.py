"""Specialise the step template ``kernels/step.py`` into ``kernels/_loops.py``.

Run after editing ``kernels/step.py`` or ``kernels/walkers.py``::

    python -m kernels.generate

``tests/kernels/test_generated.py`` regenerates the text and fails if the checked-in
module differs. The rules the template follows are in its docstring: ``for i in AXES``
unrolled per axis (``name_i`` -> ``name0``, ``name1``, ...),
``sum``/``min``/``all``/``tuple`` of ``E for i in AXES`` written out, ``if static(...)``
decided per kind of domain and dimension, every template function emitted once per
(kind, dimension) under a suffixed name. The generated module's header carries a digest of the template, of this file,
of ``kernels/walkers.py`` and of ``kernels/rng.py``: numba's on-disk cache keys a
function by its own file only, so an edit of a helper in walkers.py or of the
generator must change ``_loops.py`` too (the test insists) for the cached loops to be
recompiled.
"""

from __future__ import annotations

import ast
import hashlib
import re
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
TEMPLATE = HERE / "step.py"
#: The template's second part (curved-surface helpers), appended to the first.
TEMPLATE_SURFACES = HERE / "step_surfaces.py"
OUTPUT = HERE / "_loops.py"
#: Kinds of domain: name in generated functions, value of KIND (kernels.walkers).
KINDS = {"box": 0, "box_targets": 1, "ball": 2}
#: Dimensions with a compiled loop (sweep.spec.MAX_DIMENSION); a ball needs two axes.
DIMENSIONS = range(1, 9)
#: Names the template imports from kernels/walkers.py.
HELPERS = (
    "BRIDGE_CUTOFF", "NORMAL_BOUND", "REACH", "SURFACE_MARGIN", "_band", "_cell_next", "_crossing",
    "_earliest", "_fold", "_free", "_outside", "_random_state", "_react",
    "_slope", "_store_state", "draw_normal", "draw_uniform",
)  # fmt: skip

_STATIC_IF = re.compile(r"^(\s*)(if|elif) static\((.*)\):\s*$")
_ELSE = re.compile(r"^(\s*)else:\s*$")
_FOR_AXES = re.compile(r"^(\s*)for i in AXES:\s*$")
_FOLD = re.compile(r"\b(sum|min|all|tuple)\(")
_TAIL = re.compile(r"\s+for i in AXES\s*$")


def _indent(line: str) -> int:
    return len(line) - len(line.lstrip())


def _block(lines: list[str], start: int, indent: int) -> int:
    """Index after the block whose header is ``lines[start]`` at ``indent``."""
    end = start + 1
    while end < len(lines) and (not lines[end].strip() or _indent(lines[end]) > indent):
        end += 1
    while end > start + 1 and not lines[end - 1].strip():
        end -= 1
    return end


def _dedent(lines: list[str], by: int) -> list[str]:
    return [line[by:] if line.strip() else "" for line in lines]


_CONDITION = re.compile(
    r"^\s*(KIND|DIM|FORCE|SURFACES|DRIFT)\s*(==|!=|>=|<=|>|<)\s*(\w+)\s*$"
)
_COMPARE = {
    "==": int.__eq__, "!=": int.__ne__, ">=": int.__ge__, "<=": int.__le__,
    ">": int.__gt__, "<": int.__lt__,
}  # fmt: skip


def _decide(condition: str, env: dict[str, int]) -> bool:
    """A ``static(...)`` condition: ``KIND`` or ``DIM``, a comparison, a name or an
    integer (parsed, not evaluated)."""
    match = _CONDITION.match(condition)
    if not match:
        raise ValueError(f"static({condition}): expected e.g. KIND == BALL or DIM >= 2")
    left, op, right = match.groups()
    value = int(right) if right.isdigit() else env[right]
    return bool(_COMPARE[op](env[left], value))


def _statics(lines: list[str], env: dict[str, int]) -> list[str]:
    """Resolve every ``if static(...)`` / ``elif static(...)`` / ``else`` chain."""
    out: list[str] = []
    n = 0
    while n < len(lines):
        match = _STATIC_IF.match(lines[n])
        if not match or match.group(2) != "if":
            out.append(lines[n])
            n += 1
            continue
        indent = len(match.group(1))
        chosen: list[str] | None = None
        while True:
            end = _block(lines, n, indent)
            header = lines[n]
            branch = _STATIC_IF.match(header)
            taken = _decide(branch.group(3), env) if branch else True
            if chosen is None and taken:
                chosen = _dedent(lines[n + 1 : end], 4)
            n = end
            if n < len(lines) and _indent(lines[n]) == indent:
                nxt = _STATIC_IF.match(lines[n])
                if (nxt and nxt.group(2) == "elif") or _ELSE.match(lines[n]):
                    continue
            break
        out.extend(_statics(chosen or [], env))
    return out


def _axis(text: str, k: int) -> str:
    """``text`` for axis ``k``: ``name_i`` -> ``name{k}``, a bare ``i`` -> ``k``."""
    text = re.sub(r"\b([A-Za-z][A-Za-z0-9]*)_i\b", rf"\g<1>{k}", text)
    return re.sub(r"\bi\b", str(k), text)


def _unroll(lines: list[str], dim: int) -> list[str]:
    """Write out every ``for i in AXES:`` block once per axis."""
    out: list[str] = []
    n = 0
    while n < len(lines):
        match = _FOR_AXES.match(lines[n])
        if not match:
            out.append(lines[n])
            n += 1
            continue
        end = _block(lines, n, len(match.group(1)))
        body = _unroll(_dedent(lines[n + 1 : end], 4), dim)
        for k in range(dim):
            out.extend(_axis(line, k) for line in body)
        n = end
    return out


def _folds(text: str, dim: int) -> str:
    """Write out ``sum``/``min``/``all``/``tuple`` of ``E for i in AXES``."""
    pos = 0
    while True:
        match = _FOLD.search(text, pos)
        if not match:
            return text
        depth, end = 1, match.end()
        while depth:
            depth += {"(": 1, ")": -1}.get(text[end], 0)
            end += 1
        inner = text[match.end() : end - 1]
        tail = _TAIL.search(inner)
        if not tail:
            pos = match.end()
            continue
        expr = " ".join(inner[: tail.start()].split())
        parts = [_axis(expr, k) for k in range(dim)]
        kind = match.group(1)
        if kind == "sum":
            new = "(" + " + ".join(parts) + ")"
        elif kind == "min":
            new = f"min({', '.join(parts)})" if dim > 1 else f"({parts[0]})"
        elif kind == "all":
            # Booleans joined by &: one branch on the whole, not one per axis.
            new = "(" + " & ".join(f"({part})" for part in parts) + ")"
        else:
            new = "(" + ", ".join(parts) + ",)"
        text = text[: match.start()] + new + text[end:]
        pos = match.start() + len(new)


def _functions(source: str) -> list[tuple[str, str]]:
    """(name, source) of each top-level function of the template."""
    tree = ast.parse(source)
    lines = source.splitlines()
    return [
        (node.name, "\n".join(lines[node.lineno - 1 : node.end_lineno]))
        for node in tree.body
        if isinstance(node, ast.FunctionDef)
    ]


def specialise(
    source: str, kind: str, dim: int, force: int = 0, surfaces: int = 1, drift: int = 1
) -> str:
    """Every template function for one kind of domain and dimension, without (0) or
    with (1) a force field, without (0) or with (1) the code of reactive, periodic
    and obstacle surfaces, without (0) or with (1) a drift."""
    env = {
        "KIND": KINDS[kind], "DIM": dim, "FORCE": force, "SURFACES": surfaces,
        "DRIFT": drift, **KINDS_CONSTANTS,
    }  # fmt: skip
    suffix = f"_{kind}{dim}" + VARIANTS[force, surfaces, drift][0]
    functions = _functions(source)
    out = []
    for _, text in functions:
        lines = _statics(text.splitlines(), env)
        lines = _unroll(lines, dim)
        body = _folds("\n".join(lines), dim)
        body = re.sub(
            r"static\(([^()]*)\)",
            lambda m: repr(_decide(m.group(1), env)),
            body,
        )
        body = re.sub(r"\bDIM\b", str(dim), body)
        for other, _ in functions:
            body = re.sub(rf"\b{other}\(", f"{other}{suffix}(", body)
        out.append("@njit(nogil=True, cache=True)\n" + body)
    # The loop first; a helper only if this variant calls it, directly or through
    # another helper (a box has no mirror).
    calls = out[0]
    used: list[str] = []
    grew = True
    while grew:
        grew = False
        for (name, _), text in zip(functions[1:], out[1:]):
            if text not in used and f"{name}{suffix}(" in calls:
                used.append(text)
                calls += text
                grew = True
    used.sort(key=out.index)
    return "\n\n\n".join([out[0], *used])


#: (FORCE, SURFACES, DRIFT) -> (suffix of the generated names, name of their table in
#: _loops.py). Loops without surfaces or drift are the fast common case, and plain
#: geometries with a drift have their own; the surfaces' and a force's loops keep the
#: drift (their steps cost more than its add), a force's the surfaces' code too.
VARIANTS = {
    (0, 0, 0): ("", "LOOPS"),
    (0, 0, 1): ("_drift", "DRIFT_LOOPS"),
    (0, 1, 1): ("_surfaces", "SURFACE_LOOPS"),
    (1, 1, 1): ("_force", "FORCE_LOOPS"),
}

#: The template's names of the kinds (values of KIND).
KINDS_CONSTANTS = {"BOX": 0, "BOX_TARGETS": 1, "BALL": 2}


def digest() -> str:
    """sha256 of the template, this generator, kernels/walkers.py and kernels/rng.py
    (the generator the seam calls)."""
    h = hashlib.sha256()
    for path in (
        TEMPLATE, TEMPLATE_SURFACES, Path(__file__).resolve(), HERE / "walkers.py",
        HERE / "rng.py",
    ):  # fmt: skip
        h.update(path.read_bytes())
    return h.hexdigest()[:32]


def generate() -> str:
    """The text of ``kernels/_loops.py``."""
    # Only top-level functions are taken (_functions): the second file's header and
    # docstring drop out.
    source = TEMPLATE.read_text() + "\n\n" + TEMPLATE_SURFACES.read_text()
    parts = [
        '"""GENERATED by ``python -m kernels.generate`` from ``kernels/step.py``: DO NOT',
        "EDIT (edit the template and regenerate; tests/kernels/test_generated.py checks).",
        "",
        "One step loop per kind of domain and dimension; ``LOOPS[kind, dim]`` holds them,",
        "``DRIFT_LOOPS[kind, dim]`` those with a drift, ``SURFACE_LOOPS[kind, dim]``",
        "those for reactive, periodic or obstacle surfaces, ``FORCE_LOOPS[kind, dim]``",
        "those with a force field (and any surface).",
        f"Digest of template, generator, kernels/walkers.py and rng.py: {digest()}",
        '"""',
        "",
        "# ruff: noqa",
        "# fmt: off",
        "import math",
        "",
        "import numpy as np",
        "from numba import njit",
        "",
        "from kernels.walkers import (",
        *(f"    {name}," for name in HELPERS),
        ")",
    ]
    tables: list[tuple[str, list[str]]] = []
    for (force, surfaces, drift), (tail, table) in VARIANTS.items():
        rows = []
        for kind, value in KINDS.items():
            for dim in DIMENSIONS:
                if kind == "ball" and dim < 2:
                    continue
                parts += ["", "", specialise(source, kind, dim, force, surfaces, drift)]
                rows.append(f"    ({value}, {dim}): simulate_loop_{kind}{dim}{tail},")
        tables.append((table, rows))
    for table, rows in tables:
        parts += [
            "",
            "",
            f"#: (kind, dimension) -> its compiled loop ({table}).",
            f"{table} = {{",
            *rows,
            "}",
        ]
    return "\n".join(parts) + "\n"


def main() -> int:
    OUTPUT.write_text(generate())
    print(f"wrote {OUTPUT}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
