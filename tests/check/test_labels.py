"""``sweep.check.labels``: parameter names, headers, cells, point labels and the
description of a sweep, on the shared small sweep (two diffusivities)."""

from __future__ import annotations

from pathlib import Path

from sweep.check import describe, parameter_header, parameters, point_labels, show_value
from sweep.spec import load_spec


def test_labels_name_the_swept_parameter_per_point(small_spec: Path) -> None:
    sweep = load_spec(small_spec)
    assert parameters(sweep) == {"diffusivity": [0.5, 1.0]}
    assert point_labels(sweep) == ["diffusivity=0.5", "diffusivity=1"]
    # No [units] table in the definition: the header says so rather than guess.
    assert parameter_header("diffusivity", sweep) == "diffusivity [definition units]"
    assert show_value(0.1 + 0.2) == "0.3" and show_value(3) == "3"


def test_describe_says_domain_motion_and_what_varies(small_spec: Path) -> None:
    first, second = describe(load_spec(small_spec)).splitlines()
    assert first == (
        "small: 2 point(s) x 3,000 walkers; 1-D box from [0] to [1] "
        "(x_lower absorbing, x_upper absorbing)"
    )
    assert second == (
        "walkers from [0.3], diffusivity 0.5; dt 0.001, horizon 3; "
        "varied: diffusivity (values above: point 0)"
    )
