"""Run every benchmark and print their ratios as one JSON document: ``python bench/run.py --json``.

Each bench/bench_*.py module has a ``run() -> dict``; figures are measured in one run against baselines in
the same run, so they compare on any machine. ``--smoke`` runs every benchmark at a tiny size (each module's
``SMOKE`` arguments) so that CI keeps them runnable (tests/test_bench_smoke.py); its figures mean nothing.
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
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--json", action="store_true", help="print JSON (the default output)")
    parser.add_argument("--only", nargs="*", help="module names without the bench_ prefix")
    parser.add_argument("--smoke", action="store_true", help="tiny sizes: check that every benchmark runs")
    args = parser.parse_args()
    results = {}
    for path in sorted(HERE.glob("bench_*.py")):
        name = path.stem.removeprefix("bench_")
        if args.only and name not in args.only:
            continue
        module = importlib.import_module(path.stem)
        results[name] = module.run(**module.SMOKE) if args.smoke else module.run()
        print(f"# {name} done", file=sys.stderr)
    print(json.dumps(results, indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main())
