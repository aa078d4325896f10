"""Characteristics that go on past edges (reflections) and type-change lines (turning points), against closed forms."""

import itertools
import math

import numpy as np
import pytest

from core.analysis.directions import Family
from core.analysis.tracing import END_REASONS, EVENT_KINDS, MAX_BOUNCES, trace_characteristics
from core.domain import Domain
from core.equations.compiled import compile_equation
from core.equations.equation import Equation, Parameter

BOX = Domain(-2.0, 2.0, -2.0, 1.0, name="box")


def compiled(a, b, c, *, variables=("x", "y"), definitions=None, **parameters):
    return compile_equation(Equation(a=a, b=b, c=c, variables=variables, definitions=definitions or {},
                                     parameters={k: Parameter(v) for k, v in parameters.items()}))


def tricomi_invariant(points, family):
    # y u_xx + u_yy = 0 in y < 0: characteristics x -+ (2/3)(-y)^(3/2) = const (Bers 1958, Mathematical
    # Aspects of Subsonic and Transonic Gas Dynamics); family 1 has dy/dx = -1/sqrt(-y), hence the minus sign.
    sign = -1.0 if family == Family.FIRST else 1.0
    return points[:, 0] + sign * (2.0 / 3.0) * np.maximum(-points[:, 1], 0.0) ** 1.5


# -- internal waves between a flat floor and the surface ----------------------------------------------------

H, LENGTH = 1000.0, 40000.0                       # m
N, F, OMEGA = 2e-3, 1e-4, 1e-3                    # rad/s, f < omega < N: hyperbolic everywhere
SEA = Domain(0.0, LENGTH, -H, 0.0, name="sea")


def internal_waves():
    # (N^2 - omega^2) psi_xx + (f^2 - omega^2) psi_zz = 0 for time-harmonic internal waves in (x, z) (Gill 1982,
    # Atmosphere-Ocean Dynamics, chapter 8 -- from memory).
    return compiled("N**2 - omega**2", "0", "f**2 - omega**2", variables=("x", "z"), N=N, f=F, omega=OMEGA)


def test_internal_wave_rays_reflect_at_the_surface_and_floor_at_equal_spacing():
    # Rays are straight with |dz/dx| = sqrt((omega^2 - f^2)/(N^2 - omega^2)) for constant N (Gill 1982, internal-wave
    # ray geometry), and reflect at a flat floor and surface, so successive surface hits are 2H / slope apart.
    slope = math.sqrt((OMEGA**2 - F**2) / (N**2 - OMEGA**2))
    seed = (2000.0, -0.3 * H)
    curve, = trace_characteristics(internal_waves(), SEA, [seed], families=(1,), bounces=12)
    forward = [event for event in curve.events if event.index > curve.seed_index]
    assert len(forward) == 12 and curve.end_reasons[1] == "edge"
    assert {event.kind for event in curve.events} == {"edge"}
    surface = np.array([event.at[0] for event in forward if event.at[1] == 0.0])
    floor = np.array([event.at[0] for event in forward if event.at[1] == -H])
    assert len(surface) == len(floor) == 6
    # The first surface hit: up 0.3 H along the seed's ray (family 1 rises to the right here).
    assert surface[0] == pytest.approx(seed[0] + 0.3 * H / slope, rel=1e-12)
    np.testing.assert_allclose(np.diff(surface), 2 * H / slope, rtol=1e-9)
    np.testing.assert_allclose(np.diff(floor), 2 * H / slope, rtol=1e-9)
    np.testing.assert_allclose(floor - surface, H / slope, rtol=1e-9)
    # Between reflections the path is straight, alternately rising and falling at the ray slope, the family
    # changing at every reflection.
    families = []
    for family, points in curve.legs():
        steps = np.diff(points, axis=0)
        np.testing.assert_allclose(np.abs(steps[:, 1] / steps[:, 0]), slope, rtol=1e-9)
        families.append(int(family))
    assert all(a != b for a, b in itertools.pairwise(families))
    for event in curve.events:
        np.testing.assert_array_equal(curve.points[event.index], event.at)


def test_the_event_count_is_per_half_curve_and_bounces_zero_changes_nothing():
    equation = internal_waves()
    seed = [(20000.0, -0.5 * H)]
    plain = trace_characteristics(equation, SEA, seed)
    again = trace_characteristics(equation, SEA, seed, bounces=0)
    for p, q in zip(plain, again):
        np.testing.assert_array_equal(p.points, q.points)
        assert p.end_reasons == q.end_reasons == ("edge", "edge")
        assert p.events == q.events == ()
        assert len(p.legs()) == 1 and p.legs()[0][0] == p.family
    for curve in trace_characteristics(equation, SEA, seed, bounces=3):
        assert curve.backward_events == 3 and len(curve.events) == 6
        assert [e.index < curve.seed_index for e in curve.events] == [True] * 3 + [False] * 3
        # The path order: indices increase along the curve.
        assert [e.index for e in curve.events] == sorted(e.index for e in curve.events)
        assert curve.legs()[3][0] == curve.family and curve.legs()[0][0] != curve.family


def test_the_length_limit_covers_every_continuation():
    slope = math.sqrt((OMEGA**2 - F**2) / (N**2 - OMEGA**2))
    leg = H * math.hypot(1.0, 1.0 / slope)        # one surface-to-floor leg, along the ray
    curve, = trace_characteristics(internal_waves(), SEA, [(20000.0, -0.5 * H)], families=(1,), bounces=50,
                                   max_length=2.2 * leg)
    assert curve.end_reasons == ("length", "length")
    assert len(curve.events) == 4                # mid-depth start: reflections after 0.5 and 1.5 legs each way
    assert curve.length == pytest.approx(4.4 * leg, rel=1e-9)


# -- the Tricomi equation: a cusp on the sonic line -------------------------------------------------------

def test_tricomi_curves_go_on_through_the_cusp_as_the_other_family():
    seeds = np.array([[0.0, -1.0], [0.5, -0.3], [-1.2, -0.01]])
    curves = trace_characteristics(compiled("y", "0", "1"), BOX, seeds, bounces=4)
    for curve in curves:
        cusps = [e for e in curve.events if e.kind == "type_change"]
        assert cusps, "every curve meets the sonic line going forward"
        for event in cusps:
            assert -1e-10 <= event.at[1] <= 0.0
        for family, points in curve.legs():
            # Every leg keeps the invariant of its own family, the one after a cusp included: the continued
            # curve is the other family's exact curve through the cusp point.
            invariant = tricomi_invariant(points, family)
            assert np.abs(invariant - invariant[0]).max() <= 1e-7
            assert (points[:, 1] <= 0.0).all()
        # Across a cusp the two invariants agree (both equal x on y = 0).
        legs = curve.legs()
        for k, event in enumerate(curve.events):
            if event.kind == "type_change":
                before, after = legs[k], legs[k + 1]
                assert tricomi_invariant(before[1][:1], before[0])[0] == pytest.approx(
                    tricomi_invariant(after[1][-1:], after[0])[0], abs=1e-7)


def test_a_seed_on_the_sonic_line_goes_on_down_the_other_branch_of_the_cusp():
    equation = compiled("y", "0", "1")
    for curve in trace_characteristics(equation, BOX, [(0.7, 0.0)], bounces=1):
        assert curve.events[-1].kind == "type_change"
        assert curve.events[-1].at == (0.7, 0.0) and curve.events[-1].index == curve.seed_index
        assert curve.end_reasons == ("edge", "edge")
    # Forward, family 1 goes on as family 2: the path family 2 takes backward from the same seed.
    first, = trace_characteristics(equation, BOX, [(0.7, 0.0)], families=(1,), bounces=1)
    second, = trace_characteristics(equation, BOX, [(0.7, 0.0)], families=(2,))
    tail = first.points[first.seed_index:]
    head = second.points[:second.seed_index + 1][::-1]
    assert len(tail) == len(head)
    np.testing.assert_allclose(tail, head, atol=1e-12)


def test_keldysh_tangency_and_corners_cannot_be_gone_past():
    # u_xx + y u_yy = 0: characteristics touch y = 0 tangentially (Keldysh type; see test_characteristics), so
    # no path turns back from it.
    for curve in trace_characteristics(compiled("1", "0", "y"), BOX, [(0.3, -0.5)], bounces=3):
        assert "blocked" in curve.end_reasons
        assert all(e.kind == "edge" for e in curve.events)
    # The wave equation's 45-degree characteristics from the centre of a square run into its corners, where no
    # direction of the other family leads back inside (common practice, no source).
    square = Domain(-1.0, 1.0, -1.0, 1.0)
    for curve in trace_characteristics(compiled("1", "0", "-1"), square, [(0.0, 0.0)], bounces=5):
        assert curve.end_reasons == ("blocked", "blocked") and curve.events == ()
        assert {tuple(np.abs(curve.points[0])), tuple(np.abs(curve.points[-1]))} == {(1.0, 1.0)}
    assert "blocked" in END_REASONS and set(EVENT_KINDS) == {"edge", "type_change"}


# -- a turning depth --------------------------------------------------------------------------------------

N0, DEPTH_SCALE, OMEGA_TURN = 5e-3, 300.0, 1e-3   # N = N0 exp(z / d) decreases with depth


def test_rays_turn_back_at_the_turning_depth_where_n_equals_omega():
    # With N(z) decreasing downwards the equation is hyperbolic above the depth where N = omega and elliptic
    # below: rays turn back there (Gill 1982, Atmosphere-Ocean Dynamics, chapter 8 -- from memory).
    equation = compiled("N**2 - omega**2", "0", "f**2 - omega**2", variables=("x", "z"),
                        definitions={"N": "N0*exp(z/d)"}, N0=N0, d=DEPTH_SCALE, omega=OMEGA_TURN, f=F)
    curve, = trace_characteristics(equation, SEA, [(3000.0, -100.0)], families=(1,), bounces=6)
    turns = [e for e in curve.events if e.kind == "type_change"]
    surface = [e for e in curve.events if e.kind == "edge" and e.at[1] == 0.0]
    assert len(turns) >= 4 and len(surface) >= 4
    assert all(a.kind != b.kind for a, b in itertools.pairwise(e for e in curve.events if e.index > curve.seed_index))
    for event in turns:
        n_there = N0 * math.exp(event.at[1] / DEPTH_SCALE)
        assert n_there == pytest.approx(OMEGA_TURN, rel=1e-9)
    # Horizontal run from the surface to the turning depth: integral of dz / slope(z) with the ray slope above,
    # = d (sqrt(N0^2 - omega^2) - omega arccos(omega / N0)) / sqrt(omega^2 - f^2) (derived here).
    run = DEPTH_SCALE * (math.sqrt(N0**2 - OMEGA_TURN**2) - OMEGA_TURN * math.acos(OMEGA_TURN / N0)) \
        / math.sqrt(OMEGA_TURN**2 - F**2)
    ahead = [e.at[0] for e in curve.events if e.index > curve.seed_index]
    assert len(ahead) == 6
    np.testing.assert_allclose(np.diff(ahead), run, rtol=1e-7)


@pytest.mark.parametrize("bounces", [-1, MAX_BOUNCES + 1, 1.5, True])
def test_bad_bounces_are_reported(bounces):
    with pytest.raises(ValueError, match=rf"bounces must be an integer in \[0, {MAX_BOUNCES}\]"):
        trace_characteristics(compiled("y", "0", "1"), BOX, [(0.0, -0.5)], bounces=bounces)


def test_progress_stays_monotone_across_continuations():
    reports = []
    trace_characteristics(internal_waves(), SEA, [(1000.0 * k, -500.0) for k in range(1, 6)], bounces=5,
                          progress=reports.append)
    assert reports == sorted(reports) and reports[-1] == 1.0
