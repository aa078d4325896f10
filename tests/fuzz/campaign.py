"""A fuzz campaign: many cases of each kind through the fork-per-case harness, and the table of how they ended.

    python -m tests.fuzz.campaign --expressions 10000 --projects 10000 --data 1000 [--seed S] [--json]

prints, per kind, tried / rejected with a message / internal errors / hangs / memory cap hits / warnings /
files outside read / bad messages, the slowest case of each kind, then up to --samples failing cases of each column with what reproduces
them (the command line and a description of the files). Known failures (tests/fuzz/known_failures.py) are
counted like any other; the "explained" column says how many failing cases the table expects.
"""

from __future__ import annotations

import argparse
import json
import sys
import time
from collections import Counter

from tests.fuzz.cases import draw_cases
from tests.fuzz.data_files import data_cases
from tests.fuzz.expressions import expression_cases
from tests.fuzz.harness import CASE_CEILING_S, FAILURES, MEMORY_CAP_BYTES, Outcome, Workshop
from tests.fuzz.known_failures import explained
from tests.fuzz.projects import project_cases

__all__ = ["main", "run_campaign"]

_COLUMNS = ("tried", "result", "rejected", *FAILURES, "explained")
_STRATEGIES = {"expression": expression_cases, "project": project_cases, "data": data_cases}
_BATCH = 500


def run_campaign(counts: dict[str, int], *, seed: int, ceiling_s: float, samples: int,
                 progress=None) -> dict:
    """{"table": {kind: {column: count}}, "samples": {kind: {failure: [reproducers]}}, "seconds": {...}}."""
    table: dict[str, Counter] = {}
    found: dict[str, dict[str, list[str]]] = {}
    seconds: dict[str, float] = {}
    slowest: dict[str, tuple[float, str]] = {}
    with Workshop(ceiling_s=ceiling_s) as workshop:
        for kind, count in counts.items():
            started = time.monotonic()
            row, examples = Counter(), {}
            done = 0
            batch_number = 0
            while done < count:   # drawn in batches: memory stays small and progress shows
                size = min(_BATCH, count - done)
                cases = draw_cases(_STRATEGIES[kind](), size, seed_value=seed * 1000 + batch_number)
                batch_number += 1
                if not cases:
                    break
                for case in cases:
                    outcome = workshop.run(case)
                    _count(outcome, row, examples, samples)
                    if outcome.seconds > slowest.get(kind, (-1.0, ""))[0]:
                        slowest[kind] = (outcome.seconds, outcome.summary(300))
                done += len(cases)
                if progress:
                    progress(f"{kind}: {done}/{count} ({time.monotonic() - started:.0f} s)")
            table[kind], found[kind], seconds[kind] = row, examples, round(time.monotonic() - started, 1)
    return {"table": {k: {c: v.get(c, 0) for c in _COLUMNS} for k, v in table.items()}, "samples": found,
            "seconds": seconds, "slowest_case": {k: {"seconds": round(t, 3), "case": c} for k, (t, c) in slowest.items()},
            "seed": seed, "ceiling_s": ceiling_s, "memory_cap_bytes": MEMORY_CAP_BYTES}


def _count(outcome: Outcome, row: Counter, examples: dict[str, list[str]], samples: int) -> None:
    row["tried"] += 1
    if not outcome.failed:
        row[outcome.outcome] += 1
        return
    for failure in outcome.failures:
        row[failure] += 1
        listed = examples.setdefault(failure, [])
        if len(listed) < samples:
            listed.append(outcome.summary(600))
    if explained(outcome):
        row["explained"] += 1


def _text(report: dict) -> str:
    names = {"tried": "tried", "result": "result", "rejected": "rejected", "internal error": "internal",
             "hang": "hangs", "memory cap": "memory", "warning": "warnings", "file outside": "outside",
             "bad message": "bad msg", "explained": "known"}
    lines = [f"{'kind':<11}" + "".join(f"{names[c]:>10}" for c in _COLUMNS) + f"{'seconds':>10}"]
    for kind, row in report["table"].items():
        lines.append(f"{kind:<11}" + "".join(f"{row[c]:>10}" for c in _COLUMNS)
                     + f"{report['seconds'][kind]:>10}")
    for kind, slowest in report["slowest_case"].items():
        lines.append(f"slowest {kind} case: {slowest['seconds']:.2f} s: {slowest['case']}")
    for kind, examples in report["samples"].items():
        for failure, listed in examples.items():
            lines.append(f"\n{kind}, {failure}:")
            lines.extend(f"  {line}" for line in listed)
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(prog="python -m tests.fuzz.campaign", description=__doc__.split("\n\n")[0])
    parser.add_argument("--expressions", type=int, default=1000, help="expression cases (default 1000)")
    parser.add_argument("--projects", type=int, default=1000, help="mutated project files (default 1000)")
    parser.add_argument("--data", type=int, default=100, help="corrupted data files (default 100)")
    parser.add_argument("--seed", type=int, default=1, help="the campaign's seed (the same cases for the same seed)")
    parser.add_argument("--ceiling", type=float, default=CASE_CEILING_S,
                        help=f"seconds a case may run before it counts as a hang (default {CASE_CEILING_S:g})")
    parser.add_argument("--samples", type=int, default=5, help="failing cases shown per kind and column")
    parser.add_argument("--json", action="store_true", help="print one JSON document instead of the table")
    args = parser.parse_args(argv)
    counts = {"expression": args.expressions, "project": args.projects, "data": args.data}
    report = run_campaign({k: v for k, v in counts.items() if v > 0}, seed=args.seed, ceiling_s=args.ceiling,
                          samples=args.samples, progress=lambda line: print(line, file=sys.stderr, flush=True))
    print(json.dumps(report, indent=1) if args.json else _text(report))
    return 0


if __name__ == "__main__":
    sys.exit(main())
