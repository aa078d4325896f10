"""`python bench/run.py --json` must keep running: every benchmark at a tiny size (its SMOKE arguments).

The timings of such a run mean nothing; the accuracy figures still do, so a few are checked against the
targets the benchmarks state (refined lines, traced invariants, agreement with the reference evaluations).
"""

import json
import os
import pathlib
import subprocess
import sys

from tests.ceilings import HANG_CEILING_S

ROOT = pathlib.Path(__file__).resolve().parents[1]


def test_every_benchmark_runs_at_smoke_size():
    environment = {**os.environ, "QT_QPA_PLATFORM": "offscreen"}
    result = subprocess.run([sys.executable, "bench/run.py", "--json", "--smoke"], cwd=ROOT, env=environment,
                            capture_output=True, text=True, check=False, timeout=HANG_CEILING_S)
    assert result.returncode == 0, result.stderr
    lines = [json.loads(line) for line in result.stdout.splitlines()]
    figures = {line["benchmark"]: line["figures"] for line in lines[:-1]}
    expected = {path.stem.removeprefix("bench_") for path in (ROOT / "bench").glob("bench_*.py")}
    assert set(figures) == expected
    summary = lines[-1]
    assert len(summary["records"]) >= 4
    assert {"figure", "measured", "target", "met", "benchmark"} <= set(summary["records"][0])
    assert summary["met"] + summary["missed"] <= len(summary["records"])
    boundary = figures["boundary"]
    assert boundary["unrefined_vertices"] == 0
    assert boundary["refined_max_radius_error_relative"] <= boundary["targets"]["refined_max_radius_error_relative"]
    assert boundary["raw_max_radius_error_relative"] > 1e3 * boundary["refined_max_radius_error_relative"]
    cases = [case for name, case in figures["classify"].items() if name.startswith(("unit_circle_", "formula_flow_"))]
    assert len(cases) == 2 and all(case["codes_agree_with_baseline"] == 1.0 for case in cases)
    assert figures["data"]["type_agreement_where_both_defined"] == 1.0
    tracing = figures["tracing"]
    assert tracing["max_invariant_error_vectorised"] <= tracing["max_invariant_error_target"]
    assert figures["gui_drag"]["undo_steps_for_the_drag"] == 1
    assert figures["sweep"]["fractions_equal_classify"] is True
