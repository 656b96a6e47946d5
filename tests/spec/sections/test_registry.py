"""Tests of ``sweep.spec.sections`` (the registry): the tables it derives from the
section modules are the ones the definition format documents, in message order.
"""

from __future__ import annotations

from sweep.spec.sections import (
    PER_POINT,
    REQUIRED,
    SECTIONS,
    SHAPE_KEYS,
    SWEEPABLE_SECTIONS,
    TABLES,
)


def test_sections_and_their_keys_in_message_order() -> None:
    # As written before the registry existed (one literal table): "Allowed keys"
    # messages list them in this order.
    assert SECTIONS == {
        "sweep": (
            "name",
            "seed",
            "walkers",
            "chunk",
            "description",
            "units",
            "precision",
        ),
        "motion": ("dimension", "diffusivity", "drift", "start"),
        "time": ("dt", "horizon", "monitoring", "scheme"),
        "domain": (
            "shape",
            "lower",
            "upper",
            "walls",
            "center",
            "radius",
            "wall",
            "targets",
            "obstacles",  # docs/surfaces.md
        ),
        "record": ("per_walker", "survival", "occupancy", "fpt_bins"),
        "force": (
            "potential",
            "center",
            "stiffness",
            "axis",
            "barrier",
            "half_separation",
            "amplitude",
            "period",
            "tilt",
            "lower",
            "upper",
            "values",
        ),
        "grid": (),
        "zip": (),
    }
    assert list(SECTIONS) == [
        "sweep",
        "motion",
        "time",
        "domain",
        "record",
        "force",
        "grid",
        "zip",
    ]


def test_roles_of_the_tables() -> None:
    assert SWEEPABLE_SECTIONS == ("motion", "time", "domain", "force")
    assert SHAPE_KEYS == ("motion.dimension", "domain.shape")
    assert REQUIRED == ("sweep", "motion", "time", "domain")
    assert PER_POINT == ("motion", "time", "domain", "record", "force")
    assert TABLES == ("sweep", "motion", "time", "domain", "record", "force", "grid")
