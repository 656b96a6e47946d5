"""Shared by the tests of ``sweep.spec``: a small TOML writer, edits of definitions (as
TOML documents or as text), and the check that a bad definition is refused with the
expected message. The definitions edited are in :mod:`tests.spec.bases`.
"""

from __future__ import annotations

import copy
import datetime
import math
import re
from typing import Any

import pytest

from sweep.errors import SpecError
from sweep.spec import Sweep, parse_spec
from tests.spec.bases import SOURCE

_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+\Z")


def _toml_string(text: str) -> str:
    """A TOML basic string; everything outside printable ASCII is \\U-escaped."""
    out = ['"']
    for char in text:
        if char in '"\\':
            out.append("\\" + char)
        elif 0x20 <= ord(char) < 0x7F:
            out.append(char)
        else:
            out.append(f"\\U{ord(char):08X}")
    out.append('"')
    return "".join(out)


def _toml_key(key: str) -> str:
    return key if _BARE_KEY.match(key) else _toml_string(key)


def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return _toml_string(value)
    if isinstance(value, list):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        items = ", ".join(
            f"{_toml_key(k)} = {_toml_value(v)}" for k, v in value.items()
        )
        return "{ " + items + " }" if items else "{}"
    if isinstance(value, datetime.date | datetime.time):  # datetime is a date
        return value.isoformat()
    raise TypeError(f"not TOML-able: {value!r}")


def _is_table_array(value: Any) -> bool:
    return (
        isinstance(value, list)
        and bool(value)
        and all(isinstance(v, dict) for v in value)
    )


def dumps(doc: dict[str, Any]) -> str:
    """Minimal TOML writer: top-level tables become [headers], the rest is inline."""
    lines: list[str] = []
    for key, value in doc.items():
        if not isinstance(value, dict) and not _is_table_array(value):
            lines.append(f"{_toml_key(key)} = {_toml_value(value)}")
    for key, value in doc.items():
        if isinstance(value, dict):
            lines.append(f"[{_toml_key(key)}]")
            lines += [f"{_toml_key(k)} = {_toml_value(v)}" for k, v in value.items()]
        elif _is_table_array(value):
            for table in value:
                lines.append(f"[[{_toml_key(key)}]]")
                lines += [
                    f"{_toml_key(k)} = {_toml_value(v)}" for k, v in table.items()
                ]
    return "\n".join(lines) + "\n"


DELETE = object()


def edited(base: dict[str, Any], changes: dict[Any, Any]) -> dict[str, Any]:
    """A deep copy of ``base`` with ``changes`` applied.

    Keys of ``changes`` are dotted strings or tuples of parts (use a tuple when a part
    itself contains dots, e.g. ``("grid", "motion.diffusivity")``); missing tables are
    created; the value ``DELETE`` removes the key.
    """
    doc = copy.deepcopy(base)
    for path, value in changes.items():
        parts = path if isinstance(path, tuple) else tuple(path.split("."))
        node: Any = doc
        for part in parts[:-1]:
            node = node[part] if isinstance(node, list) else node.setdefault(part, {})
        if value is DELETE:
            del node[parts[-1]]
        else:
            node[parts[-1]] = value
    return doc


def spec(base: dict[str, Any], **changes: Any) -> str:
    """TOML text of ``base`` with ``changes`` (``__`` in a keyword stands for ``.``)."""
    return dumps(edited(base, {k.replace("__", "."): v for k, v in changes.items()}))


def parse(text: str) -> Sweep:
    return parse_spec(text, source=SOURCE)


def bad(case_id: str, text: str, *fragments: str) -> Any:
    return pytest.param(text, fragments, id=case_id)


def with_grid(base: dict[str, Any], key: str, values: list[Any], **changes: Any) -> str:
    return spec(base, grid={key: values}, **changes)


def edit_text(text: str, *edits: tuple[str, str]) -> str:
    """Apply text replacements to a definition, each of which must match exactly once."""
    for old, new in edits:
        assert text.count(old) == 1, f"edit target {old!r} not unique in the definition"
        text = text.replace(old, new)
    return text


def assert_rejected(text: str, fragments: tuple[str, ...]) -> None:
    """``text`` is refused with one message holding every fragment (the first one
    matched as written), naming the file."""
    with pytest.raises(SpecError, match=re.escape(fragments[0])) as info:
        parse_spec(text, source=SOURCE)
    message = str(info.value)
    assert SOURCE in message
    for fragment in fragments[1:]:
        assert fragment in message
