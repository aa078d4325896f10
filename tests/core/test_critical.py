"""Critical parameter values: where a zone of a type appears or vanishes as one parameter grows.

Each check compares with a value in closed form, derived beside it with its source named.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from core.analysis.critical import CRITICAL_TYPES, find_critical_values
from core.cli.registry import CRITICAL_TYPES as CLI_CRITICAL_TYPES
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter
from core.progress import Cancelled
from tests.core.cli_runner import run, run_json

GAMMA = 1.4
X0, Y0 = math.sqrt(2) / 3, math.pi / 7          # off every grid node
Q0 = math.e / 10


def vortex_equation() -> Equation:
    """The steady full-potential equation (c^2 - u^2) phi_xx - 2 u v phi_xy + (c^2 - v^2) phi_yy = 0 with the
    isentropic sound speed c^2 = c0^2 - (gamma - 1)/2 (u^2 + v^2) (NACA Report 1135, energy equation), c0 = 1,
    about a potential vortex u = -G y / r^2, v = G x / r^2 (speed G / r)."""
    return Equation(a="c2 - u**2", b="-2*u*v", c="c2 - v**2",
                    definitions={"u": "-G*y/(x**2 + y**2)", "v": "G*x/(x**2 + y**2)",
                                 "c2": "1 - (gamma - 1)/2*(u**2 + v**2)"},
                    parameters={"G": Parameter(0.3), "gamma": Parameter(GAMMA)})


def test_the_supersonic_zone_of_a_vortex_appears_where_the_sonic_circle_reaches_the_domain():
    # D = b^2 - 4ac = 4 c^2 (u^2 + v^2 - c^2): hyperbolic where the speed q exceeds c (supersonic).
    # Sonic: q = c with c^2 = c0^2 - (gamma - 1)/2 q^2, so c*^2 = 2 c0^2 / (gamma + 1) (NACA Report 1135, the
    # critical speed). The vortex's speed G / r equals c* on the circle r = G / c*; the domain's closest point
    # to the centre is (0.5, 0), so the zone appears when G / c* = 0.5.
    critical_speed = math.sqrt(2.0 / (GAMMA + 1.0))
    expected = 0.5 * critical_speed
    search = find_critical_values(compile_equation(vortex_equation()), Domain(0.5, 2.0, -1.0, 1.0, nx=65, ny=65),
                                  "G", (0.2, 0.8))
    assert len(search.events) == 1
    event = search.events[0]
    assert event.event == "appears" and event.type == "hyperbolic" and event.parameter == "G"
    assert abs(event.value - expected) <= 1e-8 * expected
    assert event.bracket[0] <= expected <= event.bracket[1]
    assert event.bracket[1] - event.bracket[0] <= 1e-9 * expected
    assert abs(event.at[0] - 0.5) <= 1e-9 and abs(event.at[1]) <= 1e-6
    assert search.proven is True


def test_internal_waves_stop_propagating_above_the_buoyancy_frequency_at_the_top_of_the_layer():
    # Internal inertia-gravity waves of frequency w in (x, z) (from memory, e.g. LeBlond & Mysak, Waves in the
    # Ocean): (N^2 - w^2) psi_xx + (f^2 - w^2) psi_zz = 0. D = -4 (N^2 - w^2)(f^2 - w^2) > 0, hyperbolic
    # (waves propagate along characteristics), exactly where f < w < N. With N = N0 exp(z / H) largest at the
    # top of the range z = -200, the propagating zone vanishes at w = N0 exp(-200 / H).
    n0, scale_height, f = 0.02, 300.0, 1e-4
    equation = Equation(a="N**2 - w**2", b="0", c="f**2 - w**2", variables=("x", "z"),
                        definitions={"N": f"{n0}*exp(z/{scale_height})"},
                        parameters={"w": Parameter(0.008), "f": Parameter(f)})
    expected = n0 * math.exp(-200.0 / scale_height)
    search = find_critical_values(compile_equation(equation), Domain(0.0, 20000.0, -1000.0, -200.0, nx=41, ny=41),
                                  "w", (1e-3, 0.05))
    assert [event.event for event in search.events] == ["vanishes"]
    event = search.events[0]
    assert abs(event.value - expected) <= 1e-8 * expected
    assert abs(event.at[1] + 200.0) <= 1e-9 * 800 and 0.0 <= event.at[0] <= 20000.0
    assert search.proven is True
    assert any("exists already" in note for note in search.notes)


def paraboloid(kind: str = "hyperbolic") -> Equation:
    """a = 1, b = 0, c = (x - X0)^2 + (y - Y0)^2 - (p - Q0): D = -4c is a paraboloid with its top
    4 (p - Q0) at (X0, Y0) (common practice, no source: D = b^2 - 4ac by hand)."""
    return Equation(a="1", b="0", c=f"(x - sqrt(2)/3)**2 + (y - pi/7)**2 - (p - {Q0!r})",
                    parameters={"p": Parameter(0.0)})


def test_a_zone_born_between_grid_nodes_is_found_to_1e_9_and_placed_to_1e_6():
    search = find_critical_values(compile_equation(paraboloid()), Domain(-1, 1, -1, 1, nx=33, ny=33), "p", (0, 1))
    assert len(search.events) == 1
    event = search.events[0]
    assert event.event == "appears"
    assert abs(event.value - Q0) <= 1e-9 * Q0
    assert math.hypot(event.at[0] - X0, event.at[1] - Y0) <= 1e-6
    assert search.proven is True


def test_the_elliptic_zone_splits_and_each_corner_piece_vanishes_there_and_the_parabolic_circle_lives_between():
    # c = r^2 - (p - Q0) with r the distance from (X0, Y0): elliptic (c > 0) wherever r^2 > p - Q0. As the disc
    # r^2 < p - Q0 grows over the square it cuts the elliptic zone into its four corners, and each corner's
    # piece vanishes when p - Q0 reaches that corner's r^2; the parabolic circle r^2 = p - Q0 exists from
    # p = Q0 until the farthest corner's (common practice, no source).
    corners = sorted(((1 - X0 * sx) ** 2 + (1 - Y0 * sy) ** 2 + Q0, (sx, sy)) for sx in (1, -1) for sy in (1, -1))
    compiled = compile_equation(paraboloid())
    domain = Domain(-1, 1, -1, 1, nx=33, ny=33)
    elliptic = find_critical_values(compiled, domain, "p", (0, 5), type="elliptic")
    assert [(e.event, e.type) for e in elliptic.events] == [("vanishes", "elliptic")] * 4
    assert [e.value for e in elliptic.events] == pytest.approx([value for value, _ in corners], rel=1e-9)
    assert [e.at for e in elliptic.events] == [pytest.approx(corner, abs=1e-9) for _, corner in corners]
    assert elliptic.proven is True
    parabolic = find_critical_values(compiled, domain, "p", (0, 5), type="parabolic")
    assert [e.event for e in parabolic.events] == ["appears", "vanishes"]
    assert [e.value for e in parabolic.events] == pytest.approx([Q0, corners[-1][0]], rel=1e-9)
    assert math.hypot(parabolic.events[0].at[0] - X0, parabolic.events[0].at[1] - Y0) <= 1e-6
    assert parabolic.events[1].at == pytest.approx((-1.0, -1.0), abs=1e-6)


def test_a_pocket_that_appears_and_vanishes_within_the_interval_gives_both_events():
    # c = (x - 0.3)^2 + y^2 + (p - 1)^2 - 0.2: a disc of radius^2 0.2 - (p - 1)^2 about (0.3, 0) exists for
    # |p - 1| < sqrt(0.2) (common practice, no source).
    equation = Equation(a="1", b="0", c="(x - 0.3)**2 + y**2 + (p - 1)**2 - 0.2", parameters={"p": Parameter(0.0)})
    search = find_critical_values(compile_equation(equation), Domain(-1, 1, -1, 1, nx=33, ny=33), "p", (0, 2))
    assert [e.event for e in search.events] == ["appears", "vanishes"]
    assert [e.value for e in search.events] == pytest.approx([1 - math.sqrt(0.2), 1 + math.sqrt(0.2)], rel=1e-9)
    for event in search.events:
        assert event.at == pytest.approx((0.3, 0.0), abs=1e-6)
    assert search.proven is True


def test_a_second_pocket_appearing_beside_the_first_is_reported_where_it_is_born():
    # Two discs: c < 0 within r1^2 < p - 1/3 about (0.5, 0) and within r2^2 < p - P2 about (-0.5625, 0.0625),
    # a cell centre of the 17-node grid (common practice, no source). P2 lies just below a scan value, so the
    # second pocket still covers no grid node there: the search steps back to bracket its birth.
    p2 = 0.71875 - 0.005
    equation = Equation(a="1", b="0", c=f"min((x - 0.5)**2 + y**2 - (p - 1/3), "
                                        f"(x + 0.5625)**2 + (y - 0.0625)**2 - (p - {p2!r}))",
                        parameters={"p": Parameter(0.0)})
    search = find_critical_values(compile_equation(equation), Domain(-1, 1, -1, 1, nx=17, ny=17), "p", (0, 1))
    assert [e.event for e in search.events] == ["appears", "appears"]
    assert [e.value for e in search.events] == pytest.approx([1 / 3, p2], rel=1e-9)
    assert search.events[0].at == pytest.approx((0.5, 0.0), abs=1e-6)
    assert search.events[1].at == pytest.approx((-0.5625, 0.0625), abs=1e-6)
    assert search.proven is True
    assert any("split or merge" in note for note in search.notes)     # the two discs merge before p = 1


def test_no_event_says_so_and_an_unused_parameter_is_named():
    equation = Equation(a="1", b="0", c="1 + x**2", parameters={"p": Parameter(0.0)})
    search = find_critical_values(compile_equation(equation), Domain(-1, 1, -1, 1, nx=9, ny=9), "p", (0, 1))
    assert search.events == () and search.proven is None
    assert search.notes[0] == "the coefficients a, b, c do not depend on p"
    assert any(note.startswith("no hyperbolic zone appears or vanishes") for note in search.notes)


def test_bad_input_is_refused_with_what_is_wrong():
    compiled = compile_equation(paraboloid())
    domain = Domain(-1, 1, -1, 1, nx=9, ny=9)
    for kwargs, message in (({"parameter": "q", "between": (0, 1)}, "'q' is not a parameter"),
                            ({"parameter": "p", "between": (1, 0)}, "LO below HI"),
                            ({"parameter": "p", "between": (0, math.inf)}, "finite"),
                            ({"parameter": "p", "between": (-1e308, 1e308)}, "too wide"),
                            ({"parameter": "p", "between": (0, 1), "type": "undefined"}, "unknown type"),
                            ({"parameter": "p", "between": (0, 1), "rtol": 0.0}, "relative tolerance")):
        with pytest.raises(ValueError, match=message):
            find_critical_values(compiled, domain, **kwargs)


def test_cancel_stops_the_search_and_progress_reaches_one():
    compiled = compile_equation(paraboloid())
    domain = Domain(-1, 1, -1, 1, nx=9, ny=9)
    with pytest.raises(Cancelled):
        find_critical_values(compiled, domain, "p", (0, 1), cancel=lambda: True)
    seen: list[float] = []
    find_critical_values(compiled, domain, "p", (0, 1), certify=False, progress=seen.append)
    assert seen == sorted(seen) and seen[-1] == 1.0


def test_the_command_line_lists_the_same_types():
    assert CLI_CRITICAL_TYPES == CRITICAL_TYPES


def test_data_quantities_are_searched_through_their_interpolant(tmp_path):
    # q = 2x + y sampled on a grid: bilinear interpolation reproduces it exactly (common practice, no source).
    # c = q - p is negative (hyperbolic, D = -4c) first at the domain's corner of least q, (0.25, 0.5), at p = 1.
    from core.data.sources import DataSources, load_data

    x = np.linspace(0.0, 1.0, 5)
    y = np.linspace(0.0, 1.0, 3)
    np.savez(tmp_path / "q.npz", x=x, y=y, q=2 * x[np.newaxis, :] + y[:, np.newaxis])
    data = DataSources([load_data(str(tmp_path / "q.npz"), variables=("x", "y"))])
    equation = Equation(a="1", b="0", c="q - p", parameters={"p": Parameter(0.0)})
    compiled = compile_equation(equation, data_names=tuple(data.names))
    search = find_critical_values(compiled, Domain(0.25, 1.0, 0.5, 1.0, nx=17, ny=17), "p", (0, 3), data=data)
    assert [e.event for e in search.events] == ["appears"]
    assert search.events[0].value == pytest.approx(1.0, rel=1e-9)
    assert search.events[0].at == pytest.approx((0.25, 0.5), abs=1e-9)
    assert any("interpolated background data" in note for note in search.notes)
    # A data quantity is enclosed by the nodal values of every data cell a certified cell touches (the cells
    # along x = 0.25 touch the data column at x = 0, where q is below 1): nothing to prove so close to the
    # threshold, and the search says so rather than claim it.
    assert search.proven is False
    assert any("not proven" in note for note in search.notes)


VORTEX_OPTIONS = ("--let", "u=-G*y/(x**2 + y**2)", "--let", "v=G*x/(x**2 + y**2)",
                  "--let", "c2=1 - (gamma - 1)/2*(u**2 + v**2)", "--param", "gamma=1.4",
                  "--a", "c2 - u**2", "--b", "-2*u*v", "--c", "c2 - v**2", "--domain", "0.5", "2", "-1", "1",
                  "--grid", "33")


def test_the_command_reports_the_first_event_and_every_event_as_json():
    document = run_json("critical", *VORTEX_OPTIONS, "--vary", "G", "--between", "0.2", "0.8")
    expected = 0.5 * math.sqrt(2.0 / (GAMMA + 1.0))          # NACA Report 1135 (see the vortex test above)
    assert document["parameter"] == "G" and document["type"] == "hyperbolic"
    assert document["event"] == "appears" and abs(document["value"] - expected) <= 1e-8 * expected
    assert document["bracket"][0] <= expected <= document["bracket"][1]
    assert document["at"] == pytest.approx([0.5, 0.0], abs=1e-6)
    assert document["events"] == [{key: document[key] for key in ("parameter", "value", "bracket", "event", "at",
                                                                  "type")}]
    assert document["relative_tolerance"] == 1e-9 and document["proven"] is True
    assert document["between"] == [0.2, 0.8]
    assert "G" not in document["parameters"] and document["parameters"]["gamma"] == 1.4
    assert document["equation"]["parameters"]["G"]["value"] == 0.2     # added as a parameter at LO


def test_the_command_without_an_event_prints_nulls_and_a_note_and_exits_0():
    document = run_json("critical", "--a", "1", "--b", "0", "--c", "1 + x**2 + k", "--domain", "-1", "1", "-1", "1",
                        "--grid", "9", "--vary", "k", "--between", "0", "1", "--no-certify")
    assert [document[key] for key in ("value", "bracket", "event", "at", "events", "proven")] == \
        [None, None, None, None, [], None]
    assert any(note.startswith("no hyperbolic zone appears or vanishes for k in [0, 1]") for note in document["notes"])


def test_the_command_says_it_in_words_with_the_tolerance():
    status, out, err = run("critical", *VORTEX_OPTIONS, "--vary", "G", "--between", "0.2", "0.8", "--no-certify")
    assert (status, err) == (0, "")
    assert "values to a relative tolerance of 1e-09" in out
    assert "a hyperbolic zone appears at G = 0.45643546" in out and "at (x, y) = (0.5, " in out
    assert "proven: not tried" in out


@pytest.mark.parametrize(("options", "message"), [
    (("--vary", "G", "--between", "0.8", "0.2"), "mixtype: --between: LO (0.8) must be below HI (0.2)\n"),
    (("--vary", "G", "--between", "0.2", "inf"), "mixtype: argument --between: 'inf' is not a finite number\n"),
    (("--vary", "G", "--between", "-1e308", "1e308"), ("mixtype: --between: the interval [-1e+308, 1e+308] is too "
                                                      "wide (its width overflows)\n")),
    (("--vary", "x", "--between", "0", "1"), ("mixtype: --vary x: x is a variable of the equation; only a "
                                             "parameter can vary\n")),
    (("--vary", "u", "--between", "0", "1"), ("mixtype: --vary u: u is a definition (--let); only a parameter "
                                             "can vary\n")),
    (("--vary", "2G", "--between", "0", "1"), ("mixtype: --vary: '2G' is not a name (a letter, then letters, "
                                              "digits or _)\n")),
    (("--vary", "G", "--between", "0", "1", "--type", "undefined"), ("mixtype: argument --type: invalid choice: "
                                                                    "'undefined'")),
    (("--between", "0", "1"), "mixtype: the following arguments are required: --vary\n"),
    (("--vary", "G", "--between", "0", "1", "--tolerance", "2"), ("mixtype: --tolerance: expected a number in "
                                                                 "[0, 1), got 2\n")),
])
def test_bad_command_line_input_exits_2_naming_the_option(options, message):
    status, out, err = run("critical", *VORTEX_OPTIONS, *options)
    assert (status, out) == (2, "") and err.startswith(message) and err.count("\n") == 1


def test_a_zone_that_dies_as_another_is_born_at_the_same_value_is_listed_dying_first():
    # a = 1, b = 0, c = x p: elliptic (D = -4 x p < 0) where x p > 0, so the elliptic zone x < 0 dies at p = 0
    # and the zone x > 0 is born there (common practice, no source). At 0 the tolerance is absolute: 1e-12 of
    # the interval's scale.
    equation = Equation(a="1", b="0", c="x*p", parameters={"p": Parameter(0.0)})
    search = find_critical_values(compile_equation(equation), Domain(-1, 1, -1, 1, nx=9, ny=9), "p", (-1, 1),
                                  type="elliptic")
    assert [e.event for e in search.events] == ["vanishes", "appears"]
    assert all(abs(e.value) <= 1e-12 and e.bracket[0] <= 0.0 <= e.bracket[1] for e in search.events)
    assert search.events[0].at[0] < 0 < search.events[1].at[0]
    assert search.proven is True
