"""The fork-per-case harness itself: each failure column is reached by a command that does that wrong, and a
well-behaved command is a result or a rejection."""

import os
import signal
import time
import warnings

import numpy as np

from tests.fuzz.cases import CANARY_PLACEHOLDER, Case
from tests.fuzz.harness import Workshop

CASE = Case("expression", ("probe",), (("given.txt", b"a file of the case"),), "harness test")


def _answers(argv, out, err):
    with open("given.txt") as handle:   # inside the case folder: allowed
        out.write(handle.read())
    return 0


def _refuses(argv, out, err):
    err.write("mixtype: --a: unknown name 'z' (column 1)\n")
    return 2


def _sleeps(argv, out, err):
    time.sleep(3600)
    return 0


def _allocates(argv, out, err):
    np.ones(1 << 40, dtype=np.uint8)
    return 0


def _warns(argv, out, err):
    warnings.warn("something odd", RuntimeWarning, stacklevel=1)
    return 0


def _prints(argv, out, err):
    print("stray text")
    return 0


def _reads_canary(argv, out, err):
    with open(argv[-1]) as handle:
        out.write(handle.read())
    return 0


def _fails(argv, out, err):
    err.write("mixtype: internal error (IndexError): list index out of range\n")
    return 1


def _escapes(argv, out, err):
    raise KeyError("x")


def _escape_sequence(argv, out, err):
    err.write("mixtype: --let: bad name 'h\x1b[2J'\n")
    return 2


def _dies(argv, out, err):
    os.kill(os.getpid(), signal.SIGSEGV)
    return 0


def test_a_well_behaved_command_is_a_result_or_a_rejection(workshop):
    assert workshop.run(CASE, _answers).outcome == "result"
    assert workshop.run(CASE, _answers).stdout == "a file of the case"
    assert workshop.run(CASE, _refuses).outcome == "rejected"


def test_each_failure_is_caught(workshop):
    canary = Case("expression", ("probe", CANARY_PLACEHOLDER))
    expected = {_allocates: "memory cap", _warns: "warning", _prints: "warning", _fails: "internal error",
                _escapes: "internal error", _escape_sequence: "bad message", _dies: "internal error"}
    for command, failure in expected.items():
        outcome = workshop.run(CASE, command)
        assert outcome.failures == (failure,), (command.__name__, outcome.details)
    outcome = workshop.run(canary, _reads_canary)
    assert outcome.failures == ("file outside",)
    assert any("canary" in detail for detail in outcome.details)


def test_a_hang_is_killed_at_the_ceiling():
    with Workshop(ceiling_s=0.5) as shop:
        outcome = shop.run(CASE, _sleeps)
    assert outcome.failures == ("hang",)


