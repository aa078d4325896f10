"""The project dataclasses: validation, helpers and seed geometry."""

from __future__ import annotations

from dataclasses import replace
from datetime import UTC, datetime, timedelta, timezone

import numpy as np
import pytest

from core.domain import Domain
from core.equations.equation import Equation
from core.project.model import Metadata, Pin, Project, Seed, ViewSettings, new_project, utc_timestamp

T0 = datetime(2025, 3, 1, 12, 0, 0, tzinfo=UTC)
TRICOMI = Equation("y", "0", "1", name="tricomi")
SQUARE = Domain(-1.0, 1.0, -1.0, 1.0, 21, 21, "square")


def test_new_project_shows_its_only_equation_and_domain():
    project = new_project(TRICOMI, SQUARE, now=T0)
    assert project.shown() == (TRICOMI, SQUARE)
    assert project.metadata.created == project.metadata.modified == "2025-03-01T12:00:00Z"
    assert project.pins == () and project.seeds == () and project.view == ViewSettings()


def test_names_must_be_unique_and_the_shown_pair_must_exist():
    with pytest.raises(ValueError, match="two equations are named 'tricomi'"):
        Project((TRICOMI, TRICOMI), (SQUARE,), "tricomi", "square")
    with pytest.raises(ValueError, match="two domains are named 'square'"):
        Project((TRICOMI,), (SQUARE, SQUARE.with_grid(3, 3)), "tricomi", "square")
    with pytest.raises(KeyError, match="no equation named 'other'; the project has 'tricomi'"):
        Project((TRICOMI,), (SQUARE,), "other", "square")
    with pytest.raises(KeyError, match="no domain named 'other'"):
        Project((TRICOMI,), (SQUARE,), "tricomi", "other")
    with pytest.raises(ValueError, match="at least one equation"):
        Project((), (SQUARE,), "tricomi", "square")


def test_replacing_the_shown_equation_or_domain_follows_a_rename():
    project = new_project(TRICOMI, SQUARE, now=T0)
    renamed = project.with_equation(replace(TRICOMI, name="renamed", a="-y"), replacing="tricomi")
    assert renamed.shown_equation == "renamed" and renamed.equation("renamed").a == "-y"
    wider = renamed.with_domain(replace(SQUARE, name="wide", xmax=3.0), replacing="square")
    assert wider.shown()[1].xmax == 3.0 and wider.domain_names == ("wide",)
    both = wider.with_equation(TRICOMI)
    assert both.equation_names == ("renamed", "tricomi") and both.shown_equation == "renamed"
    with pytest.raises(ValueError, match="two equations are named 'tricomi'"):
        both.with_equation(TRICOMI)
    with pytest.raises(KeyError):
        both.with_domain(SQUARE, replacing="nothing")


def test_the_shown_pair_is_chosen_by_name_and_found_by_index():
    project = new_project(TRICOMI, SQUARE, now=T0).with_equation(replace(TRICOMI, name="second"))
    project = project.with_domain(replace(SQUARE, name="wide", xmax=3.0))
    assert (project.shown_equation_index, project.shown_domain_index) == (0, 0)
    moved = project.with_shown(equation="second", domain="wide")
    assert (moved.shown_equation, moved.shown_domain) == ("second", "wide")
    assert (moved.shown_equation_index, moved.shown_domain_index) == (1, 1)
    assert project.with_shown(domain="wide").shown_equation == "tricomi"
    with pytest.raises(KeyError, match="no equation named 'third'"):
        project.with_shown(equation="third")


def test_content_equality_ignores_metadata_but_not_definition_order():
    one = new_project(replace(TRICOMI, definitions={"p": "x", "q": "y"}), SQUARE, now=T0)
    later = replace(one, metadata=one.metadata.touched(T0 + timedelta(days=1)))
    assert one.content_equals(later) and one != later
    swapped = one.with_equation(replace(one.equations[0], definitions={"q": "y", "p": "x"}), replacing="tricomi")
    assert swapped == one  # dict equality ignores order ...
    assert not one.content_equals(swapped)  # ... the document does not
    assert not one.content_equals(replace(one, notes="changed"))


def test_seed_points_are_spread_evenly_with_the_ends_included():
    seed = Seed((0.0, 1.0), (2.0, -1.0), curves=5, families=(2, 1))
    np.testing.assert_allclose(seed.points(), [[0, 1], [0.5, 0.5], [1, 0], [1.5, -0.5], [2, -1]])
    assert seed.families == (1, 2) and seed.is_segment
    np.testing.assert_allclose(Seed((0.0, 1.0), (2.0, -1.0), curves=1).points(), [[1.0, 0.0]])
    single = Seed((0.25, -3))
    assert single.points().shape == (1, 2) and single.start == (0.25, -3.0) and not single.is_segment


@pytest.mark.parametrize("arguments, message", [
    ({"start": (0.0, float("nan"))}, "finite"),
    ({"start": (0.0,)}, "pair of numbers"),
    ({"start": (0.0, 0.0), "curves": 3}, "single-point seed"),
    ({"start": (0.0, 0.0), "end": (1.0, 1.0), "curves": 0}, r"\[1, 1000\]"),
    ({"start": (0.0, 0.0), "end": (1.0, 1.0), "curves": 2.0}, "integer"),
    ({"start": (0.0, 0.0), "families": (3,)}, "families"),
    ({"start": (0.0, 0.0), "families": (1, 1)}, "families"),
    ({"start": (0.0, 0.0), "families": ()}, "families"),
])
def test_bad_seeds_are_refused(arguments, message):
    with pytest.raises((ValueError, TypeError), match=message):
        Seed(**arguments)


def test_pins_and_view_settings_are_checked():
    with pytest.raises(ValueError, match="finite"):
        Pin(float("inf"), 0.0)
    with pytest.raises(ValueError, match=r"\[0, 1\)"):
        ViewSettings(parabolic_tolerance=1.0)
    assert Pin(1, 2).label == ""


def test_timestamps_are_iso_utc_to_the_second():
    assert utc_timestamp(datetime(2024, 2, 29, 23, 59, 59, 999999, tzinfo=UTC)) == "2024-02-29T23:59:59Z"
    east = timezone(timedelta(hours=5, minutes=30))
    assert utc_timestamp(datetime(2024, 3, 1, 5, 0, 0, tzinfo=east)) == "2024-02-29T23:30:00Z"
    before = datetime.now(UTC).replace(microsecond=0)
    stamp = datetime.strptime(utc_timestamp(), "%Y-%m-%dT%H:%M:%SZ").replace(tzinfo=UTC)
    after = datetime.now(UTC)
    assert before <= stamp <= after          # the current time, truncated to the second; no clock tolerance
    assert Metadata("a", "b").touched(T0) == Metadata("a", "2025-03-01T12:00:00Z")
