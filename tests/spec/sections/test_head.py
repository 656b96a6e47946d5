"""Tests of ``sweep.spec.sections.head``: the [sweep] table (name, seed, walkers, chunk,
units).
"""

from __future__ import annotations

import re
from typing import Any

import pytest

from sweep.errors import SpecError
from sweep.spec import (
    auto_chunk,
)
from tests.spec.bases import LINE
from tests.spec.edit import DELETE, assert_rejected, bad, parse, spec

#: Definitions this module must refuse: (text, fragments of the message).
BAD_INPUTS = [
    bad(
        "name-number",
        spec(LINE, sweep__name=3),
        "[sweep.name] must be a non-empty string; got 3.",
    ),
    bad(
        "name-blank",
        spec(LINE, sweep__name="  "),
        '[sweep.name] must be a non-empty string; got "  ".',
    ),
    bad(
        "description-number",
        spec(LINE, sweep__description=1),
        "[sweep.description] must be a string; got 1.",
    ),
    bad(
        "description-table",
        spec(LINE, sweep__description={"text": "x", "ok": False}),
        '[sweep.description] must be a string; got { text = "x", ok = false }.',
    ),
    bad(
        "chunk-above-walkers",
        spec(LINE, sweep__chunk=2000),
        "[sweep.chunk] must be from 1 to 1000; got 2000.",
    ),
]


@pytest.mark.parametrize(("text", "fragments"), BAD_INPUTS)
def test_parse_spec_rejects_bad_input(text: str, fragments: tuple[str, ...]) -> None:
    assert_rejected(text, fragments)


@pytest.mark.parametrize(
    ("walkers", "chunk", "n_chunks"),
    [
        pytest.param(40_000, 40_000, 1, id="one-chunk"),
        pytest.param(100_000, 100_000, 1, id="exactly-target"),
        pytest.param(250_000, 83_334, 3, id="even-split"),
        pytest.param(1, 1, 1, id="one-walker"),
    ],
)
def test_chunk_automatic_when_absent(walkers: int, chunk: int, n_chunks: int) -> None:
    sweep = parse(spec(LINE, sweep__walkers=walkers, sweep__chunk=DELETE))
    assert sweep.chunk == chunk == auto_chunk(walkers)
    assert sweep.n_chunks == n_chunks
    sizes = [sweep.chunk_walkers(i) for i in range(sweep.n_chunks)]
    assert sum(sizes) == walkers
    assert max(sizes) - min(sizes) <= n_chunks


def test_units_are_labels_in_the_hash_only_when_named() -> None:
    plain = parse(spec(LINE))
    named = parse(spec(LINE, sweep__units={"length": "um", "time": "s"}))
    assert plain.units.of("time") == "definition units"
    assert named.units.of("diffusivity") == "um^2/s"
    assert named.units.of("velocity") == "um/s"
    assert named.units.label("x", "length") == "x [um]"
    # A definition without units keeps its hash; naming them makes another study.
    assert plain.spec_hash == parse(spec(LINE, sweep__units={})).spec_hash
    assert plain.spec_hash != named.spec_hash
    assert plain.points == named.points


@pytest.mark.parametrize(
    ("units", "fragment"),
    [
        ("um", "[sweep.units] must be a table"),
        ({"mass": "kg"}, "mass"),
        ({"length": ""}, "[sweep.units.length] must be a short non-empty text"),
        ({"time": 1}, "[sweep.units.time] must be a short non-empty text"),
    ],
)
def test_bad_units_name_the_key(units: Any, fragment: str) -> None:
    with pytest.raises(SpecError, match=re.escape(fragment)):
        parse(spec(LINE, sweep__units=units))
