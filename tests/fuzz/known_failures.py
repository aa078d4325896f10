"""The one table of fuzz failures still expected today, each with the issue item and who is fixing it
(empty since issue 10 closed: every case ends in a result or a one-line message).

The fuzz tests accept a failing case only when an entry here explains it; tests/fuzz/test_known_failures.py
runs each entry's reproducer as a strict xfail, so an entry whose reproducer passes turns the suite red and
must be struck off. A new entry names its owner and the issue item it belongs to.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from tests.fuzz.cases import Case
from tests.fuzz.harness import Outcome

__all__ = ["KNOWN_FAILURES", "KnownFailure", "explained"]


@dataclass(frozen=True)
class KnownFailure:
    """A kind of failure some cases still show: which failure columns, for which cases, and a reproducer."""

    name: str
    owner: str
    item: str
    failures: frozenset[str]
    applies: Callable[[Outcome], bool]
    reproducer: Callable[[], Case]


KNOWN_FAILURES: tuple[KnownFailure, ...] = ()


def explained(outcome: Outcome) -> bool:
    """True when every failure of ``outcome`` is one a known entry expects for such a case."""
    left = set(outcome.failures)
    for entry in KNOWN_FAILURES:
        if entry.applies(outcome):
            left -= entry.failures
    return not left
