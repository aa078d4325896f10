"""What every fuzz test asserts: each case ran ends in a result or a one-line message, or in a failure the
known-failures table explains."""

from __future__ import annotations

from tests.fuzz.cases import Case
from tests.fuzz.harness import Outcome, Workshop
from tests.fuzz.known_failures import explained

__all__ = ["run_all", "unexplained"]


def run_all(workshop: Workshop, cases: list[Case]) -> list[Outcome]:
    return [workshop.run(case) for case in cases]


def unexplained(outcomes: list[Outcome]) -> list[str]:
    """One line per case whose failures no known entry explains (empty: the test passes)."""
    return [outcome.summary() for outcome in outcomes if outcome.failed and not explained(outcome)]
