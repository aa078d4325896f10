"""Readouts read the same in the CLI's text and JSON: no rounding noise, one wording for directions."""

from __future__ import annotations

from dataclasses import replace

from core.domain import Domain
from core.equations.equation import Equation
from core.project.io import save_project
from core.project.model import Pin, new_project
from core.results.readable import (
    NO_REAL_DIRECTION,
    VERTICAL_SLOPE,
    directions_text,
    point_without_noise,
    points_without_noise,
    slopes_text,
    without_noise,
)
from tests.core.cli_runner import run, run_json

SQUARE = ("--domain", "-1", "1", "-1", "1")


def test_noise_reads_zero_against_each_axis_extent():
    domain = Domain(-1.0, 1.0, -4000.0, 0.0, 11, 11)
    assert point_without_noise((1.1102e-16, -9.6562e-14), domain) == (0.0, 0.0)
    assert point_without_noise((3e-12, 5e-9), domain) == (3e-12, 5e-9)      # above 1e-12 of 2 and of 4000
    assert without_noise(-0.0, 1.0) == 0.0 and str(without_noise(-0.0, 1.0)) == "0.0"
    assert without_noise(None, 1.0) is None
    assert points_without_noise([[7.7e-17, 0.5], [0.25, -1e-15]], domain).tolist() == [[0.0, 0.5], [0.25, 0.0]]
    assert point_without_noise((1e-300, 1e-300), None) == (1e-300, 1e-300)    # no domain: nothing is noise


def test_one_wording_for_directions():
    assert slopes_text([None]) == VERTICAL_SLOPE == "vertical"
    assert slopes_text([]) == NO_REAL_DIRECTION == directions_text(())
    assert directions_text([90.0], ".6f", " deg", "x") == "90.000000 deg from the x axis"


def test_cli_probe_pin_and_directions_without_noise_or_other_words(tmp_path):
    # a = b = 0, c = 1: parabolic, the one direction along the second axis (slope dz/dx does not exist);
    # the pin as a click on the map stores it, 1.1102e-16 from 0
    equation = Equation("0", "0", "1", variables=("x", "z"), name="vertical")
    project = replace(new_project(equation, Domain(-1, 1, -1, 1, 5, 5, name="box")),
                      pins=(Pin(1.1102e-16, 0.5, "clicked"),))
    path = tmp_path / "study.mixtype.json"
    save_project(project, path)
    status, out, _ = run("probe", str(path))
    assert status == 0
    lines = dict(line.split("  ", 1) for line in out.splitlines()[1:])
    assert lines["point"].strip() == "x = 0, z = 0.5"
    assert lines["characteristic directions"].strip() == "90.000000 deg from the x axis"
    assert lines["slopes dz/dx"].strip() == "vertical"
    (pin,) = run_json("probe", str(path))["pins"]
    assert pin["point"] == [0.0, 0.5] and pin["slopes"] == [None]
    # --at X Y is echoed as typed, not cleaned
    assert run_json("probe", str(path), "--at", "1e-17", "0.5")["point"] == [1e-17, 0.5]
    # a = b = c = 0: parabolic without any direction, worded as the window words it
    status, out, _ = run("probe", "--a", "0", "--b", "0", "--c", "0", *SQUARE, "--at", "0", "0")
    assert "characteristic directions  none (no real direction)" in out


def test_cli_pocket_centroid_of_a_symmetric_pocket_reads_zero():
    # the sonic pocket on the bump's crest is symmetric about x = 0 (potential flow past a circle, common
    # practice, no source); summed over its nodes its centroid comes out as 2.2e-16 before cleaning
    box = ("--template", "full_potential", "--domain", "-1", "1", "0.9", "1.6", "--grid", "161", "57", "--raw")
    document = run_json("classify", *box)
    (pocket,) = document["pockets"]
    assert pocket["centroid"][0] == 0.0 and 1.0 < pocket["centroid"][1] < 1.1
    assert pocket["peak"]["at"] == [0.0, 1.0]
    status, out, _ = run("classify", *box)
    assert status == 0 and "centroid (0, 1.0" in out and "e-1" not in out.split("pocket 1:")[1]


def test_cli_trace_ends_without_noise():
    # y u_xx + u_yy from (0, -0.5): both curves end on the edges or at y = 0; no coordinate is rounding noise
    document = run_json("trace", "--a", "y", "--b", "0", "--c", "1", *SQUARE, "--from", "0", "-0.5")
    extents = (2.0, 2.0)
    for curve in document["curves"]:
        for point in curve["points"]:
            for value, extent in zip(point, extents, strict=True):
                assert value == 0.0 or abs(value) > 1e-12 * extent
    status, out, _ = run("trace", "--a", "y", "--b", "0", "--c", "1", *SQUARE, "--from", "0", "-0.5")
    assert status == 0 and "e-1" not in out
