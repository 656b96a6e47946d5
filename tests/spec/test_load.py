"""Tests of ``sweep.spec.load``: reading the file, TOML errors, the repeated-point warning,
the example definitions, and Hypothesis fuzzing (the parser never raises anything but
:class:`SpecError`).
"""

from __future__ import annotations

import copy
import datetime
import math
import re
import tomllib
import warnings
from pathlib import Path
from typing import Any

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from sweep.errors import SpecError, SweepWarning
from sweep.spec import (
    DEFAULT_SURVIVAL_POINTS,
    Sweep,
    auto_chunk,
    load_spec,
    parse_spec,
)
from tests.spec.bases import LINE, PLANE, QUICKSTART
from tests.spec.edit import DELETE, assert_rejected, bad, dumps, edited, parse, spec

#: Definitions this module must refuse: (text, fragments of the message).
BAD_INPUTS = [
    bad("toml-unclosed-header", "[sweep\nname = 'x'\n", "not valid TOML"),
    bad(
        "toml-duplicate-key",
        "[sweep]\nseed = 1\nseed = 2\n",
        "not valid TOML",
        "line 3",
    ),
    bad("toml-missing-value", "[sweep]\nseed =\n", "not valid TOML"),
    bad("toml-unterminated-string", '[sweep]\nname = "abc\n', "not valid TOML"),
    bad("toml-python-none", "[sweep]\nseed = None\n", "not valid TOML"),
]


@pytest.mark.parametrize(("text", "fragments"), BAD_INPUTS)
def test_parse_spec_rejects_bad_input(text: str, fragments: tuple[str, ...]) -> None:
    assert_rejected(text, fragments)


def test_parse_spec_default_source_is_named() -> None:
    with pytest.raises(SpecError, match=re.escape("<string>: the table [sweep]")):
        parse_spec("")


def test_load_spec_missing_file_names_path(tmp_path: Path) -> None:
    path = tmp_path / "absent.toml"
    with pytest.raises(SpecError, match=re.escape(f"{path}: no such sweep")):
        load_spec(path)


def test_load_spec_directory_names_path(tmp_path: Path) -> None:
    with pytest.raises(SpecError, match="is a directory"):
        load_spec(tmp_path)


def test_load_spec_not_utf8_names_path(tmp_path: Path) -> None:
    path = tmp_path / "latin1.toml"
    path.write_bytes(dumps(LINE).replace("line", "l\u00efne").encode("latin-1"))
    with pytest.raises(SpecError, match=re.escape(f"{path}: not UTF-8 text")):
        load_spec(path)


def test_load_spec_errors_name_the_file(tmp_path: Path) -> None:
    path = tmp_path / "typo.toml"
    path.write_text(spec(LINE, motion__difusivity=0.5))
    with pytest.raises(SpecError, match=re.escape(f"{path}: unknown key 'difusivity'")):
        load_spec(path)


def test_load_spec_quickstart() -> None:
    # Expectations come from the file itself: the example's numbers may be retuned.
    doc = tomllib.loads(QUICKSTART.read_text(encoding="utf-8"))
    sweep = load_spec(QUICKSTART)
    assert sweep.name == doc["sweep"]["name"]
    assert sweep.seed == doc["sweep"]["seed"]
    assert sweep.walkers == doc["sweep"]["walkers"]
    assert sweep.chunk == doc["sweep"].get("chunk", auto_chunk(sweep.walkers))
    assert sweep.n_chunks == -(-sweep.walkers // sweep.chunk)
    assert sweep.source == str(QUICKSTART)
    assert sweep.swept == tuple(doc.get("grid", {}))
    assert sweep.n_points == math.prod(len(v) for v in doc.get("grid", {}).values())
    assert sweep.dimension == doc["motion"]["dimension"] == 1
    point = sweep.points[0]
    assert point.timing.dt == doc["time"]["dt"]
    assert point.timing.horizon == doc["time"]["horizon"]
    assert point.motion.start == tuple(doc["motion"]["start"])
    assert point.domain.lower == tuple(doc["domain"]["lower"])
    assert point.domain.upper == tuple(doc["domain"]["upper"])
    assert point.domain.wall_names() == ("x_lower", "x_upper")
    survival = doc.get("record", {}).get("survival", {})
    assert point.record.survival_stop == survival.get("stop", point.timing.horizon)
    assert point.record.survival_points == survival.get(
        "points", DEFAULT_SURVIVAL_POINTS
    )


def test_load_spec_equals_parse_spec_of_text() -> None:
    text = QUICKSTART.read_text(encoding="utf-8")
    assert load_spec(QUICKSTART) == parse_spec(text, source=str(QUICKSTART))


def test_quickstart_grid_sweeps_diffusivity_in_written_order() -> None:
    doc = tomllib.loads(QUICKSTART.read_text(encoding="utf-8"))
    written = doc["grid"]["motion.diffusivity"]
    sweep = load_spec(QUICKSTART)
    assert sweep.values == tuple((d,) for d in written)
    assert [p.motion.diffusivity for p in sweep.points] == written


@pytest.mark.parametrize(
    "path",
    [pytest.param(p, id=p.name) for p in sorted(QUICKSTART.parent.glob("*.toml"))],
)
def test_load_spec_every_example_sweep(path: Path) -> None:
    sweep = load_spec(path)
    assert sweep.n_points >= 1
    assert sweep.source == str(path)


def _paths(node: Any, prefix: tuple[Any, ...] = ()) -> list[tuple[Any, ...]]:
    """Every key path of a parsed TOML document (list elements by index)."""
    found: list[tuple[Any, ...]] = []
    items = node.items() if isinstance(node, dict) else enumerate(node)
    for key, value in items:
        found.append((*prefix, key))
        if isinstance(value, dict | list):
            found += _paths(value, (*prefix, key))
    return found


QUICKSTART_DOC = tomllib.loads(QUICKSTART.read_text(encoding="utf-8"))


#: Existing paths of the quickstart plus keys it does not use (valid or not).
FUZZ_PATHS = _paths(QUICKSTART_DOC) + [
    ("bogus",),
    ("zip",),
    ("sweep", "description"),
    ("sweep", "chunk"),
    ("motion", "drift"),
    ("motion", "extra"),
    ("time", "monitoring"),
    ("domain", "targets"),
    ("domain", "center"),
    ("domain", "radius"),
    ("domain", "wall"),
    ("domain", "walls", "y_lower"),
    ("record", "per_walker"),
    ("record", "occupancy", "lower"),
    ("record", "occupancy", "upper"),
    ("grid", "time.dt"),
    ("grid", "motion.start"),
    ("grid", "domain.upper"),
    ("grid", "domain.walls"),
    ("grid", "domain.walls.x_lower"),
    ("grid", "domain.targets"),
    ("grid", "domain.targets.0.center"),
    ("grid", "motion.dimension"),
    ("grid", "record.per_walker"),
]


_KEY_WORDS = sorted(
    {str(p[-1]) for p in FUZZ_PATHS if isinstance(p[-1], str)}
    | {"center", "radius", "x_lower", "x_upper", "stop", "points", "times", "bins"}
)


_scalars = st.one_of(
    st.integers(min_value=-(2**63), max_value=2**63 - 1),  # TOML integers are 64-bit
    st.floats(),  # nan and +-inf included
    st.booleans(),
    st.text(max_size=8),
    st.sampled_from(
        ["inf", "-inf", "uniform", "box", "ball", "absorbing", "reflecting", "endpoint"]
    ),
    st.sampled_from([0, 1, 2, 0.0, 0.5, 1.0, 1e-300, 1e300, 2**62, -1]),
    st.sampled_from([10**400, -(10**309), "+inf", " -inf", "nan"]),
    st.dates(),
    st.times(),
    st.datetimes(),
    st.datetimes(timezones=st.just(datetime.UTC)),
)


_keys = st.one_of(st.sampled_from(_KEY_WORDS), st.text(max_size=6))


toml_values = st.recursive(
    _scalars,
    lambda inner: st.one_of(
        st.lists(inner, max_size=4), st.dictionaries(_keys, inner, max_size=3)
    ),
    max_leaves=10,
)


def _mutated(
    doc: dict[str, Any], path: tuple[Any, ...], value: Any
) -> dict[str, Any] | None:
    """A copy of ``doc`` with ``value`` at ``path`` (``DELETE``: removed); None when
    the path's parent is not there to mutate."""
    doc = copy.deepcopy(doc)
    node: Any = doc
    try:
        for part in path[:-1]:
            node = node[part]
        if value is DELETE:
            del node[path[-1]]
        else:
            node[path[-1]] = value
    except (KeyError, IndexError, TypeError):
        return None
    return doc


def _parse_or_spec_error(text: str) -> None:
    try:
        # A mutated grid may repeat a point: that is warned about (SweepWarning),
        # not an error, and is tested on its own.
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", SweepWarning)
            result = parse_spec(text, source="fuzz.toml")
    except SpecError as err:
        assert str(err).startswith("fuzz.toml: ")
    else:
        assert isinstance(result, Sweep)
        assert re.fullmatch(r"[0-9a-f]{64}", result.spec_hash)


def test_dumps_round_trips_quickstart() -> None:
    assert tomllib.loads(dumps(QUICKSTART_DOC)) == QUICKSTART_DOC
    rewritten = parse_spec(dumps(QUICKSTART_DOC), source=str(QUICKSTART))
    assert rewritten == load_spec(QUICKSTART)


@settings(max_examples=100, deadline=None)
@given(
    st.dictionaries(_keys, st.dictionaries(_keys, toml_values, max_size=4), max_size=4)
)
def test_dumps_round_trips_random_documents(doc: dict[str, Any]) -> None:
    text = dumps(doc)
    loaded = tomllib.loads(text)
    # nan != nan: compare the serialisations instead of the values.
    assert dumps(loaded) == text


_TOML_ALPHABET = "[]{}=\"'.,#\n \t_-+0123456789abcdefilmnorstuwxyz"


@settings(max_examples=300, deadline=None)
@given(st.one_of(st.text(), st.text(alphabet=_TOML_ALPHABET, max_size=200)))
def test_parse_spec_random_text_only_raises_spec_error(text: str) -> None:
    _parse_or_spec_error(text)


QUICKSTART_TEXT = QUICKSTART.read_text(encoding="utf-8")


@settings(max_examples=300, deadline=None)
@given(
    st.integers(min_value=0, max_value=len(QUICKSTART_TEXT)),
    st.integers(min_value=0, max_value=8),
    st.text(alphabet=_TOML_ALPHABET, max_size=12),
)
def test_parse_spec_edited_quickstart_text_only_raises_spec_error(
    position: int, delete: int, insert: str
) -> None:
    text = QUICKSTART_TEXT[:position] + insert + QUICKSTART_TEXT[position + delete :]
    _parse_or_spec_error(text)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.sampled_from(FUZZ_PATHS), st.one_of(toml_values, st.just(DELETE)))
def test_parse_spec_mutated_quickstart_only_raises_spec_error(
    path: tuple[Any, ...], value: Any
) -> None:
    doc = _mutated(QUICKSTART_DOC, path, value)
    if doc is not None:
        _parse_or_spec_error(dumps(doc))


#: A definition sweeping nested keys, so mutations reach swept paths through tables,
#: lists, and values of the wrong type.
SWEPT_DOC = edited(
    PLANE,
    {
        "record": {"survival": {"points": 5}, "occupancy": {"times": [0.5], "bins": 4}},
        ("grid", "domain.walls.y_lower"): ["reflecting", "absorbing"],
        ("grid", "time.horizon"): [4.0, 2.0],
        "zip": [
            {
                "domain.targets.0.radius": [0.1, 0.2],
                "motion.start": [[0.25, 0.5], "uniform"],
            }
        ],
    },
)


SWEPT_PATHS = _paths(SWEPT_DOC) + [
    ("grid", "domain.targets.1.center"),
    ("grid", "domain.targets.0"),
    ("grid", "domain.walls.z_lower"),
    ("zip", 0, "time.dt"),
    ("zip", 0, "domain.targets.0.center"),
    ("zip", 1),
]


#: The tables and lists that swept keys pass through: drawn half of the time.
SWEPT_PARENTS = [
    ("domain",),
    ("domain", "walls"),
    ("domain", "targets"),
    ("domain", "targets", 0),
    ("motion",),
    ("time",),
]


def test_swept_fuzz_base_is_valid() -> None:
    sweep = parse(dumps(SWEPT_DOC))
    assert sweep.n_points == 8
    assert sweep.points[1].motion.start is None


def _word_key_into_list(doc: dict[str, Any]) -> bool:
    """Whether a swept word key meets a list: the known bug of
    test_grid_word_key_into_list_raises_spec_error."""
    domain = doc.get("domain")
    if not isinstance(domain, dict):
        return False
    walls, targets = domain.get("walls"), domain.get("targets")
    return isinstance(walls, list) or (
        isinstance(targets, list) and any(isinstance(t, list) for t in targets)
    )


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    st.one_of(st.sampled_from(SWEPT_PARENTS), st.sampled_from(SWEPT_PATHS)),
    st.one_of(toml_values, st.just(DELETE)),
)
def test_parse_spec_mutated_swept_definition_only_raises_spec_error(
    path: tuple[Any, ...], value: Any
) -> None:
    doc = _mutated(SWEPT_DOC, path, value)
    if doc is not None and not _word_key_into_list(doc):
        _parse_or_spec_error(dumps(doc))


def test_repeated_grid_points_warn() -> None:
    """1, 1.0 and 1.0 are one point three times: two repeats, bit-identical walkers."""
    from sweep.errors import SweepWarning
    from sweep.spec import parse_spec
    from tests.conftest import SMALL_SPEC

    text = SMALL_SPEC.replace("[0.5, 1.0]", "[0.5, 1, 1.0, 1.0]")
    with pytest.warns(SweepWarning, match=r"2 point\(s\) repeat an earlier point"):
        parse_spec(text, source="dup.toml")
