"""The `mixtype` command's inline-equation contract: JSON shapes, values, and one-line errors."""

import json
import math
import subprocess
import sys

import pytest

from tests.ceilings import HANG_CEILING_S
from tests.core.cli_runner import run

TRICOMI = ["--a", "y", "--b", "0", "--c", "1", "--domain", "-1", "1", "-1", "1"]



def test_classify_json_contract_on_tricomi():
    status, out, err = run("classify", *TRICOMI, "--grid", "101", "--json")
    assert status == 0, err
    document = json.loads(out)
    assert document["variables"] == ["x", "y"] and document["grid"] == [101, 101]
    fractions = document["fractions"]
    assert set(fractions) == {"elliptic", "parabolic", "hyperbolic", "undefined"}
    assert fractions["elliptic"] == pytest.approx(50 / 101) and fractions["hyperbolic"] == pytest.approx(50 / 101)
    # The parabolic line of y u_xx + u_yy = 0 is y = 0 (Bers 1958, Mathematical Aspects of Subsonic and
    # Transonic Gas Dynamics).
    (line,) = document["boundaries"]
    assert line["closed"] is False
    assert max(abs(y) for _, y in line["points"]) <= 1e-12 * math.hypot(2, 2)


def test_classify_table_is_readable():
    status, out, _ = run("classify", "--a", "1", "--b", "-2*x", "--c", "1 - y**2",
                         "--domain", "-2", "2", "-2", "2", "--grid", "81")
    assert status == 0
    assert "elliptic" in out and "hyperbolic" in out and "closed" in out


def test_probe_json_gives_mach_angles():
    # Uniform stream at M = 2 along x: characteristics at +-30 deg (NACA Report 1135, 1953: mu = arcsin(1/M)).
    status, out, err = run("probe", "--a", "1 - M**2", "--b", "0", "--c", "1", "--param", "M=2",
                           "--domain", "-1", "1", "-1", "1", "--at", "0.25", "0.5", "--json")
    assert status == 0, err
    document = json.loads(out)
    assert document["point"] == [0.25, 0.5] and document["type"] == "hyperbolic"
    assert document["coefficients"] == {"a": pytest.approx(-3.0), "b": 0.0, "c": 1.0}
    assert document["discriminant"] == pytest.approx(12.0)
    assert sorted(document["directions_deg"]) == [pytest.approx(30.0, abs=1e-10), pytest.approx(150.0, abs=1e-10)]
    assert sorted(document["slopes"]) == [pytest.approx(-1 / math.sqrt(3)), pytest.approx(1 / math.sqrt(3))]


def test_probe_reports_definitions_and_custom_variables():
    status, out, _ = run("probe", "--vars", "x", "z", "--a", "N2 - w**2", "--b", "0", "--c", "f**2 - w**2",
                         "--let", "N2=4*exp(z)", "--param", "w=1", "--param", "f=0.5",
                         "--domain", "0", "1", "-1", "0", "--at", "0.5", "0", "--json")
    assert status == 0
    document = json.loads(out)
    assert document["definitions"]["N2"] == pytest.approx(4.0)
    assert document["type"] == "hyperbolic"  # a = 3 > 0, c = -0.75 < 0


def test_trace_json_gives_two_curves_through_the_seed():
    status, out, err = run("trace", *TRICOMI, "--from", "0", "-0.5", "--json")
    assert status == 0, err
    curves = json.loads(out)["curves"]
    assert sorted(c["family"] for c in curves) == [1, 2]
    for curve in curves:
        points = curve["points"]
        assert [0.0, -0.5] in points or any(math.dist(p, [0, -0.5]) < 1e-12 for p in points)
        # Closed-form invariant x +- (2/3)(-y)^(3/2) (Bers 1958): constant along each traced curve.
        for sign in (1, -1):
            values = [x + sign * (2 / 3) * max(-y, 0) ** 1.5 for x, y in points]
            if max(values) - min(values) < 1e-6:
                break
        else:
            pytest.fail("curve does not follow a Tricomi characteristic")


@pytest.mark.parametrize(
    ("argv", "fragment"),
    [
        (["classify", "--a", "y^2", "--b", "0", "--c", "1", "--domain", "-1", "1", "-1", "1"], "--a: '^'"),
        (["classify", "--a", "y", "--b", "0", "--domain", "-1", "1", "-1", "1"], "missing --c"),
        (["classify", *TRICOMI[:6], "--domain", "1", "-1", "-1", "1"], "xmin"),
        (["classify", *TRICOMI, "--grid", "1"], "nx"),
        (["probe", *TRICOMI, "--at", "1"], "--at"),
        (["probe", *TRICOMI, "--at", "nan", "0"], "not a finite number"),
        (["classify", *TRICOMI, "--let", "p=q", "--let", "q=p"], "cycle"),
        (["classify", *TRICOMI, "--param", "k=abc"], "--param k"),
        (["classify", "--a", "__import__('os').system('echo hacked')", "--b", "0", "--c", "1",
          "--domain", "-1", "1", "-1", "1"], "--a"),
    ],
)
def test_bad_input_exits_2_with_one_line(argv, fragment):
    status, out, err = run(*argv)
    assert status == 2
    assert err.count("\n") == 1 and err.startswith("mixtype: ")
    assert fragment in err
    assert "Traceback" not in err and "hacked" not in out


def test_console_script_runs_without_traceback():
    result = subprocess.run([sys.executable, "-m", "core.cli.main", "probe", *TRICOMI, "--at", "0", "2"],
                            check=False, capture_output=True, text=True, timeout=HANG_CEILING_S)
    assert result.returncode == 0
    assert "outside" in result.stdout.lower()
