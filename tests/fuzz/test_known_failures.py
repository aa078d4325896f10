"""Each entry of the known-failures table still fails (strict xfail): when its reproducer passes, the entry
must be struck off tests/fuzz/known_failures.py."""

import pytest

from tests.fuzz.known_failures import KNOWN_FAILURES


@pytest.mark.parametrize("entry", [pytest.param(entry, id=entry.name, marks=pytest.mark.xfail(
    strict=True, reason=f"issue 10, {entry.item} ({entry.owner})")) for entry in KNOWN_FAILURES])
def test_known_failure_is_fixed(workshop, entry):
    outcome = workshop.run(entry.reproducer())
    assert not (set(outcome.failures) & entry.failures), outcome.summary()
