"""Run every benchmark and print its figures as soon as each is ready: ``python bench/run.py --json``.

Each bench/bench_*.py module has a ``run() -> dict``; figures are measured in one run against baselines in
the same run, so they compare on any machine. A module's dict may hold ``records``: target records
({"figure", "measured", "target", "met"}, bench/records.py). The output is JSON Lines: one line per benchmark,
``{"benchmark": NAME, "figures": {...}}``, printed and flushed when it finishes, then one last line
``{"records": [...], "met": N, "missed": N}`` gathering every target record. ``--smoke`` runs every
benchmark at a tiny size (each module's ``SMOKE`` arguments) so that CI keeps them runnable
(tests/test_bench_smoke.py); its figures mean nothing.
"""

from __future__ import annotations

import argparse
import importlib
import json
import pathlib
import sys

HERE = pathlib.Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))
sys.path.insert(0, str(HERE))


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__, formatter_class=argparse.RawDescriptionHelpFormatter)
    parser.add_argument("--json", action="store_true", help="print JSON Lines (the default output)")
    parser.add_argument("--only", nargs="*", help="module names without the bench_ prefix")
    parser.add_argument("--smoke", action="store_true", help="tiny sizes: check that every benchmark runs")
    args = parser.parse_args()
    records = []
    for path in sorted(HERE.glob("bench_*.py")):
        name = path.stem.removeprefix("bench_")
        if args.only and name not in args.only:
            continue
        module = importlib.import_module(path.stem)
        figures = module.run(**module.SMOKE) if args.smoke else module.run()
        records.extend({"benchmark": name, **record} for record in figures.get("records", ()))
        print(json.dumps({"benchmark": name, "figures": figures}), flush=True)
    print(json.dumps({"records": records, "met": sum(r["met"] is True for r in records),
                      "missed": sum(r["met"] is False for r in records)}), flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
