"""``mixtype sweep``: the table, the JSON document, and bad input refused with exit status 2 naming --sweep."""

import json

import pytest

from core.analysis import sweep as core_sweep
from core.cli import registry
from tests.core.cli_runner import run, run_json

LEVEL = ("--a", "1", "--b", "0", "--c", "y - p", "--param", "p=0", "--domain", "0", "3", "-1", "2", "--grid", "31",
         "23")


def test_json_rows_hold_the_closed_form_areas_of_a_level_line():
    # c = y - p with a = 1, b = 0: D = -4c, hyperbolic below y = p, area (p - ymin) * width = 3 (p + 1)
    # (elementary geometry, common practice, no source)
    document = run_json("sweep", *LEVEL, "--sweep", "p=-0.5:1.5:5")
    assert document["parameter"] == "p" and document["values"] == [-0.5, 0.0, 0.5, 1.0, 1.5]
    assert document["log"] is False and document["area_units"] == "x*y" and document["refined"] is True
    for value, row in zip(document["values"], document["rows"], strict=True):
        assert row["value"] == value
        assert row["areas"]["hyperbolic"] == pytest.approx(3.0 * (value + 1.0), rel=1e-12)
        assert row["pockets"] == 1 and row["peak"] is None


def test_the_text_table_has_one_line_per_value():
    status, out, err = run("sweep", *LEVEL, "--sweep", "p=0.1:10:3", "--log")
    assert status == 0 and err == ""
    lines = out.splitlines()
    assert lines[0].startswith("sweep of p from 0.1 to 10, 3 values on a logarithmic scale; grid 31 x 23")
    header = lines[2].split()
    assert header[:3] == ["p", "area", "ell"] and "pockets" in header
    rows = [line.split() for line in lines[3:]]
    assert [row[0] for row in rows] == ["0.1", "1", "10"]
    # the hyperbolic area (third area column): 3 (p + 1), the whole domain (9) once p passes its top
    assert [float(row[3]) for row in rows] == pytest.approx([3.3, 6.0, 9.0], rel=1e-6)


def test_a_log_sweep_is_recorded_as_such():
    document = run_json("sweep", *LEVEL, "--sweep", "p=0.01:1:3", "--log")
    assert document["log"] is True and document["values"] == pytest.approx([0.01, 0.1, 1.0], rel=1e-14)


@pytest.mark.parametrize(("sweep", "extra", "message"), [
    ("q=0:1:5", (), "--sweep q=0:1:5: the equation has no parameter 'q'; its parameters are p"),
    ("p=0:1:1", (), "--sweep p=0:1:1: the number of values must be a whole number from 2 to 1000"),
    ("p=0:1:1001", (), "--sweep p=0:1:1001: the number of values must be a whole number from 2 to 1000"),
    ("p=1:1:5", (), "--sweep p=1:1:5: the sweep's low end must be below its high end"),
    ("p=2:1:5", (), "--sweep p=2:1:5: the sweep's low end must be below its high end"),
    ("p=0:1:5", ("--log",), "--sweep p=0:1:5 with --log: a logarithmic sweep needs a low end above 0"),
    ("p=-1:1:5", ("--log",), "--sweep p=-1:1:5 with --log: a logarithmic sweep needs a low end above 0"),
    ("p=nan:1:5", (), "argument --sweep: 'p=nan:1:5': LO and HI must be finite numbers"),
    ("p=0:inf:5", (), "argument --sweep: 'p=0:inf:5': LO and HI must be finite numbers"),
    ("p=0:1:five", (), "argument --sweep: 'p=0:1:five': N must be a whole number of values"),
    ("p=0:1", (), "argument --sweep: expected NAME=LO:HI:N"),
    ("0:1:5", (), "argument --sweep: expected NAME=LO:HI:N"),
])
def test_bad_sweeps_exit_2_with_one_line_naming_the_option(sweep, extra, message):
    status, out, err = run("sweep", *LEVEL, "--sweep", sweep, *extra)
    assert status == 2 and out == ""
    assert err.startswith(f"mixtype: {message}") and err.count("\n") == 1, err


def test_the_sweep_option_is_required_and_an_equation_without_parameters_says_so():
    status, _, err = run("sweep", "--a", "1", "--b", "0", "--c", "y", "--domain", "0", "1", "0", "1")
    assert status == 2 and "--sweep" in err
    status, _, err = run("sweep", "--a", "1", "--b", "0", "--c", "y", "--domain", "0", "1", "0", "1",
                         "--sweep", "p=0:1:3")
    assert status == 2 and "it has no parameters (add one with --param)" in err


def test_the_help_line_states_the_core_limit():
    assert registry.MAX_SWEEP_VALUES == core_sweep.MAX_SWEEP_VALUES


def test_json_is_one_document_with_the_study():
    status, out, _ = run("sweep", *LEVEL, "--sweep", "p=0:1:2", "--json")
    document = json.loads(out)
    assert status == 0 and out.count("\n") == 1
    assert document["equation"]["c"] == "y - p" and document["grid"] == [31, 23]
    assert document["domain"] == [0.0, 3.0, -1.0, 2.0] and document["variables"] == ["x", "y"]
