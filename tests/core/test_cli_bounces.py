"""``mixtype trace --bounces N``: characteristics that go on past edges and the type-change line, from the command line."""

import math

import numpy as np
import pytest

from core.project.io import load_project
from core.project.model import demo_project_path
from tests.core.cli_runner import run, run_json

TRICOMI_INLINE = ("--a", "y", "--b", "0", "--c", "1", "--domain", "-1", "1", "-1", "1")
OCEAN = str(demo_project_path("ocean_turning_depth"))


def test_trace_json_lists_each_curves_events_in_path_order():
    document = run_json("trace", *TRICOMI_INLINE, "--from", "0", "-0.5", "--bounces", "2")
    for curve in document["curves"]:
        points = curve["points"]
        assert len(curve["events"]) == 4                      # two each way from the seed
        indices = [event["index"] for event in curve["events"]]
        assert indices == sorted(indices)
        for event in curve["events"]:
            assert event["kind"] in ("edge", "type_change")
            assert points[event["index"]] == event["at"]
        # The forward half meets the sonic line first, at x = x0 -+ (2/3)(1/2)^(3/2) for the invariant
        # x -+ (2/3)(-y)^(3/2) (Bers 1958, Mathematical Aspects of Subsonic and Transonic Gas Dynamics).
        cusp = curve["events"][2]
        assert cusp["kind"] == "type_change" and abs(cusp["at"][1]) <= 1e-10
        assert abs(cusp["at"][0]) == pytest.approx((2.0 / 3.0) * 0.5 ** 1.5, abs=1e-7)
    plain = run_json("trace", *TRICOMI_INLINE, "--from", "0", "-0.5")
    assert [curve["events"] for curve in plain["curves"]] == [[], []]
    assert [curve["ends"] for curve in plain["curves"]] == [["edge", "type_change"]] * 2


def test_trace_text_says_where_curves_went_on():
    status, out, err = run("trace", *TRICOMI_INLINE, "--from", "0", "-0.5", "--bounces", "1")
    assert status == 0 and err == ""
    assert out.count("went on as the other family 2 times (1 at the edge, 1 at the type-change line)") == 2
    assert out.count("turned back at the type-change line at (") == 2
    assert out.count("reflected at the edge at (") == 2
    assert "went on" not in run("trace", *TRICOMI_INLINE, "--from", "0", "-0.5")[1]


@pytest.mark.parametrize(("value", "shown"), [("-1", "-1"), ("1001", "1001"), ("two", "'two'"), ("1.5", "'1.5'")])
def test_bad_bounces_get_one_line(value, shown):
    status, out, err = run("trace", *TRICOMI_INLINE, "--from", "0", "-0.5", "--bounces", value)
    assert status == 2 and out == ""
    assert err == f"mixtype: argument --bounces: expected a whole number from 0 to 1000, got {shown}\n"


def test_a_project_file_brings_its_own_setting_unless_overridden():
    project = load_project(OCEAN)
    bounces = project.view.characteristic_bounces
    assert bounces == 4
    document = run_json("trace", OCEAN)
    counts = [len(curve["events"]) for seed in document["seeds"] for curve in seed["curves"]]
    assert max(counts) == 2 * bounces and all(count <= 2 * bounces for count in counts)
    # Turning depths below the mixed layer are where N = omega, N = N0 exp(z / scale_depth) there (the demo's
    # own definition; the ray turns back where the equation stops being hyperbolic, common practice, no source).
    p = project.shown()[0].parameter_values()
    deep = p["scale_depth"] * math.log(p["omega"] / p["N0"])
    turns = [event["at"][1] for seed in document["seeds"] for curve in seed["curves"] for event in curve["events"]
             if event["kind"] == "type_change" and event["at"][1] < -1000.0]
    assert turns and np.allclose(turns, deep, rtol=1e-9)
    overridden = run_json("trace", OCEAN, "--bounces", "0")
    assert all(curve["events"] == [] for seed in overridden["seeds"] for curve in seed["curves"])
    single = run_json("trace", OCEAN, "--from", "5000", "-2000", "--bounces", "1")
    assert [len(curve["events"]) for curve in single["curves"]] == [2, 2]
