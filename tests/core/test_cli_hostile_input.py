"""The command line under awkward input: every number form, control characters, huge requests, odd domains.

Each case must end in a result or one located line on stderr with exit status 2, never a traceback or an
"internal error" (common practice for command-line tools, no source).
"""

from __future__ import annotations

import io

import pytest

import core.cli.trace
from core.bundled import bundled_path
from core.cli.main import main
from core.cli.options import Command
from core.cli.printable import PrintableStream, printable
from core.domain import Domain
from tests.core.cli_runner import run, run_json

OCEAN = bundled_path("demo", "ocean_turning_depth.mixtype.json")     # a bundled demo with seeds
LAPLACE = ("--a", "1", "--b", "0", "--c", "1")


@pytest.mark.parametrize("text, value", [("-5e-1", -0.5), ("-1E-12", -1e-12), ("-1_0.5", -10.5), ("-.5", -0.5),
                                         ("-5.", -5.0), ("-2e+3", -2000.0)])
def test_every_negative_number_form_python_reads_is_an_option_value(text, value):
    document = run_json("probe", *LAPLACE, "--domain", "-3000", "3000", "-3000", "3000", "--at", "0", text)
    assert document["point"] == [0.0, value]
    traced = run_json("trace", "--a", "1", "--b", "0", "--c", "-1", "--domain", "-3000", "3000", "-3000", "3000",
                      "--from", text, "0")
    assert traced["seed"] == [value, 0.0]


def test_a_domain_given_in_exponent_notation():
    document = run_json("classify", *LAPLACE, "--domain", "-1e-3", "-1E-4", "-2e1", "-1e1", "--grid", "4")
    assert document["domain"] == [-1e-3, -1e-4, -20.0, -10.0]


def test_minus_infinity_is_refused_as_a_number_not_taken_for_an_option():
    status, _, err = run("probe", *LAPLACE, "--domain", "-1", "1", "-1", "1", "--at", "0", "-inf")
    assert status == 2
    assert "'-inf' is not a finite number" in err and "expected 2 arguments" not in err


def test_control_characters_from_the_user_are_escaped_in_messages():
    status, _, err = run("classify", *LAPLACE, "--let", "h\x1b[2J=1", "--domain", "-1", "1", "-1", "1")
    assert status == 2
    assert "\x1b" not in err and "h\\x1b[2J" in err
    assert err.count("\n") == 1


def test_printable_keeps_newlines_and_tabs_and_escapes_the_rest():
    assert printable("a\tb\nc") == "a\tb\nc"
    assert printable("\x07\x7f\x9b") == "\\x07\\x7f\\x9b"
    assert printable("safe\u202eeman") == "safe\\u202eeman"            # right-to-left override
    stream = io.StringIO()
    PrintableStream(stream).writelines(["\x1b[31m", "red"])
    assert stream.getvalue() == "\\x1b[31mred"


def test_a_domain_one_ulp_wide_gets_a_message_a_user_understands():
    with pytest.raises(ValueError, match=r"too narrow for 201 grid nodes \(double precision holds only 2 numbers"):
        Domain(1.0, 1.0000000000000002, 0.0, 1.0)
    status, _, err = run("classify", *LAPLACE, "--domain", "1", "1.0000000000000002", "0", "1")
    assert status == 2 and "too narrow" in err and "increase" not in err


def test_a_domain_whose_width_overflows_is_refused():
    status, _, err = run("classify", *LAPLACE, "--domain", "-1e308", "1e308", "-1", "1", "--grid", "8")
    assert status == 2 and "overflows double precision" in err


def test_a_domain_reaching_the_largest_double_classifies_without_overflow(recwarn):
    document = run_json("classify", "--a", "1", "--b", "x", "--c", "1", "--domain", "-1.7e308", "0", "-1e-9", "1e-9",
                        "--grid", "8")
    assert document["fractions"]["hyperbolic"] == 0.875            # every column but x = 0, where D = -4
    (pocket,) = document["pockets"]
    assert pocket["area"] == pytest.approx(1.7e308 * 2e-9 * 13 / 14)   # trapezoid weights: 6.5 of 7 spacings
    assert -1.7e308 < pocket["centroid"][0] < -1e307 and abs(pocket["centroid"][1]) < 1e-24
    assert not [w for w in recwarn if issubclass(w.category, RuntimeWarning)]


def test_a_domain_whose_area_overflows_is_refused():
    status, _, err = run("classify", *LAPLACE, "--domain", "-1.7e308", "0", "-1", "1", "--grid", "8")
    assert status == 2 and "area overflows double precision" in err


def test_memory_and_recursion_errors_become_one_line_messages():
    def exhausting(error):
        def raise_it(args, out, err):
            raise error
        return raise_it

    for error, words in ((MemoryError(), "not enough memory"), (RecursionError(), "nested too deeply")):
        out, err = io.StringIO(), io.StringIO()
        command = Command("exhaust", "test only", lambda parser: None, exhausting(error))
        assert main(["exhaust"], out=out, err=err, extra_commands=(command,)) == 2
        assert words in err.getvalue() and "internal error" not in err.getvalue()
        assert err.getvalue().count("\n") == 1


def test_a_trace_asking_for_too_many_curves_is_refused_before_tracing(monkeypatch):
    monkeypatch.setattr(core.cli.trace, "MAX_CURVES", 3)
    status, _, err = run("trace", str(OCEAN))
    assert status == 2
    assert "curves; trace at most 3 at once" in err


def test_a_streamed_project_trace_is_one_json_document_with_the_usual_fields():
    document = run_json("trace", str(OCEAN))
    assert next(iter(document)) == "seeds" and document["seeds"]
    assert all(curve["points"] for seed in document["seeds"] for curve in seed["curves"])
    assert {"source", "project_checksum", "equation", "parameters"} <= set(document)


@pytest.mark.parametrize("c", ["0*y", "y-y", "acos(-(y+3)+y)"])
def test_a_coefficient_constant_after_folding_works_everywhere(c):
    # 0*y and y-y fold to 0: D = 1 - 0 > 0 everywhere; acos(-3) is undefined: every node undefined.
    for command in (("classify", "--grid", "8"), ("probe", "--at", "0.5", "-0.5"), ("trace", "--from", "0", "0")):
        status, out, err = run(command[0], "--a", "1", "--b", "1", "--c", c, "--domain", "-1", "1", "-1", "1",
                               *command[1:], "--json")
        assert status == 0 and err == "" and out.startswith("{"), (command, err)
    fractions = run_json("classify", "--a", "1", "--b", "1", "--c", c, "--domain", "-1", "1", "-1", "1",
                         "--grid", "8")["fractions"]
    assert fractions == ({"elliptic": 0.0, "parabolic": 0.0, "hyperbolic": 0.0, "undefined": 1.0} if "acos" in c
                         else {"elliptic": 0.0, "parabolic": 0.0, "hyperbolic": 1.0, "undefined": 0.0})


def test_a_tower_of_300_powers_is_refused_with_its_column():
    status, _, err = run("classify", "--a", "x" + "**x" * 300, "--b", "0", "--c", "1",
                         "--domain", "-1", "1", "-1", "1", "--grid", "8")
    assert status == 2 and "nested too deeply" in err and "(column" in err


def test_100_parameters_and_150_definitions_in_one_study_evaluate():
    # more distinct names than numexpr takes in one program (62): the program is split into steps
    options = [item for k in range(100) for item in ("--param", f"p{k}={k / 100}")]
    options += [item for k in range(150) for item in ("--let", f"d{k}=x*{k}+y")]
    a = "+".join(f"p{k}*x" for k in range(100))
    c = "1+" + "+".join(f"d{k}" for k in range(150))
    document = run_json("classify", "--a", a, "--b", "0", "--c", c, *options, "--domain", "0.5", "1", "0", "1",
                        "--grid", "16")
    # a = 49.5 x > 0 and c = 1 + 11175 x + 150 y > 0 on [0.5, 1] x [0, 1]: elliptic everywhere (b = 0)
    assert document["fractions"]["elliptic"] == 1.0


def test_the_overflowing_coefficient_beside_a_jump_classifies_without_warnings(recwarn):
    document = run_json("classify", "--a", "1e308", "--b", "x", "--c", "piecewise(x < 0, 1, -1)",
                        "--domain", "-1", "1", "-1", "1", "--grid", "16")
    # x < 0: D = x^2 - 4e308 < 0 (elliptic); x > 0: D = x^2 + 4e308 > 0 (hyperbolic) (the sign of -4ac)
    assert document["fractions"]["elliptic"] == pytest.approx(0.5)
    assert document["fractions"]["hyperbolic"] == pytest.approx(0.5)
    assert not [w for w in recwarn if issubclass(w.category, Warning)]
