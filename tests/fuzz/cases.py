"""What one fuzz case is (a command line and the files it works on), and drawing many cases from a strategy.

A case names its files relative to its own temporary folder, where the command runs. Two placeholders stand
for the canary file outside that folder (the "nothing read that was not meant" check): ``@CANARY@``
is its absolute path and ``@CANARY_UP@`` a path climbing out of the case folder with ``../``; the harness
(tests.fuzz.harness) puts the real paths in before the files are written.
"""

from __future__ import annotations

import os
from collections.abc import Callable
from dataclasses import dataclass

from hypothesis import HealthCheck, Phase, given, seed, settings
from hypothesis import strategies as st

__all__ = ["CANARY_PLACEHOLDER", "CANARY_UP_PLACEHOLDER", "Case", "draw_cases", "fuzz_case_count", "repeat_until"]

CANARY_PLACEHOLDER = "@CANARY@"
CANARY_UP_PLACEHOLDER = "@CANARY_UP@"


@dataclass(frozen=True)
class Case:
    """One run of ``mixtype`` on hostile input.

    ``kind`` is "expression", "project" or "data"; ``argv`` the command line (without the program name);
    ``files`` (relative name, bytes) written into the case folder first; ``description`` says in a few words
    what was done to the input, for the campaign's samples of failing cases.
    """

    kind: str
    argv: tuple[str, ...]
    files: tuple[tuple[str, bytes], ...] = ()
    description: str = ""

    def reproducer(self, limit: int = 300) -> str:
        """The command line, quoted for a shell, and what the files are; cut to ``limit`` characters."""
        words = " ".join(_shell_quoted(word) for word in self.argv)
        text = f"mixtype {words}"
        if self.description:
            text += f"  [{self.description}]"
        if self.files:
            sizes = ", ".join(f"{name} ({len(data)} bytes)" for name, data in self.files)
            text += f"  [files: {sizes}]"
        return text if len(text) <= limit else text[: limit - 3] + "..."


def _shell_quoted(word: str) -> str:
    if word and all(ch.isalnum() or ch in "-_.=/:,+" for ch in word):
        return word
    if word.isprintable() and "'" not in word:
        return f"'{word}'"
    return "$'" + "".join(ch if ch.isprintable() and ch not in "'\\" else f"\\x{ord(ch):02x}"
                          if ord(ch) < 256 else f"\\u{ord(ch):04x}" for ch in word) + "'"


def fuzz_case_count(default: int, *, share: float = 1.0) -> int:
    """How many cases a test runs: ``default``, or ``share`` of MIXTYPE_FUZZ_CASES when that is set."""
    asked = os.environ.get("MIXTYPE_FUZZ_CASES")
    return max(1, int(int(asked) * share)) if asked else default


def draw_cases(strategy: st.SearchStrategy[Case], count: int, *, seed_value: int) -> list[Case]:
    """``count`` cases drawn from ``strategy``, the same ones for the same ``seed_value`` on every run.

    Hypothesis only generates here (no shrinking, no example database): the cases are run afterwards by
    the fork-per-case harness, so one slow or crashing case cannot stop the others from being tried.
    """
    drawn: list[Case] = []

    @seed(seed_value)
    @settings(max_examples=count, database=None, derandomize=False, deadline=None,
              phases=[Phase.generate], suppress_health_check=list(HealthCheck))
    @given(strategy)
    def collect(case: Case) -> None:
        drawn.append(case)

    collect()
    return drawn[:count]


def repeat_until(count: int, make: Callable[[int], list[Case]]) -> list[Case]:
    """Cases from ``make(batch)`` until there are ``count`` (hypothesis may stop a batch early)."""
    cases: list[Case] = []
    batch = 0
    while len(cases) < count and batch < 20:
        cases += make(batch)
        batch += 1
    return cases[:count]
