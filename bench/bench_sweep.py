"""A parameter sweep in one process against one ``mixtype classify`` process per value, measured in one run.

The study is the bundled transonic bump (its own grid, 241 x 121, and its peak quantity, the local Mach number),
swept over the free-stream Mach number through the appearance of the supersonic pocket. The case is one
``mixtype sweep --sweep mach=LO:HI:N --json`` process; the baseline is N ``mixtype classify --param mach=V
--json`` processes at the same values, one after the other, as a script looping over the values would run
them. Both are fresh processes of this checkout (``python -m gui.launcher``, compiled first as an installed
copy runs) and alternate round by round; each figure is the best of ``repeats`` rounds. The sweep pays one
start-up and one compilation where the baseline pays N; it also measures each zone's area on the refined
lines, which classify does not. ``fractions_equal_classify`` checks that the sweep's fractions are the ones
classify printed, bit for bit, at every value.
"""

from __future__ import annotations

import compileall
import json
import pathlib
import subprocess
import sys
import time

from records import figure  # bench/ is on sys.path (script dir or bench/run.py)

ROOT = pathlib.Path(__file__).resolve().parents[1]
STUDY = str(ROOT / "resources" / "demo" / "transonic_bump.mixtype.json")
LOW, HIGH = 0.7, 0.9

# Measured 0.028 (0.71 s against 25 s for 50 values) on a shared 2-core machine; the target leaves room for load.
TARGETS = {"sweep_over_separate_classify": 0.05}

SMOKE = {"values": 3, "repeats": 1, "grid": (21, 11)}   # python bench/run.py --smoke: figures meaningless


def _timed(arguments: list[str]) -> tuple[float, str]:
    """Wall-clock seconds and stdout of one fresh ``python -m gui.launcher ARGUMENTS`` (fails loudly)."""
    start = time.perf_counter()
    completed = subprocess.run([sys.executable, "-m", "gui.launcher", *arguments], cwd=ROOT, capture_output=True,
                               text=True, check=True)
    return time.perf_counter() - start, completed.stdout


def run(values: int = 50, repeats: int = 2, grid: tuple[int, int] | None = None) -> dict:
    """Best of ``repeats`` rounds of the sweep process and of the ``values`` classify processes; their ratio."""
    for folder in ("core", "gui"):        # as installed: compiled
        compileall.compile_dir(str(ROOT / folder), quiet=1)
    sized = [] if grid is None else ["--grid", str(grid[0]), str(grid[1])]
    sweep_arguments = ["sweep", STUDY, *sized, "--sweep", f"mach={LOW!r}:{HIGH!r}:{values}", "--json"]
    best_sweep = best_classify = float("inf")
    equal = True
    for _ in range(repeats):
        seconds, text = _timed(sweep_arguments)
        best_sweep = min(best_sweep, seconds)
        rows = json.loads(text)["rows"]
        total = 0.0
        for row in rows:
            seconds, text = _timed(["classify", STUDY, *sized, "--param", f"mach={row['value']!r}", "--json"])
            total += seconds
            equal = equal and json.loads(text)["fractions"] == row["fractions"]
        best_classify = min(best_classify, total)
    ratio = best_sweep / best_classify
    return {
        "values": values,
        "repeats": repeats,
        "grid": list(grid) if grid else "the study's (241 x 121)",
        "sweep_process_s": round(best_sweep, 4),
        "separate_classify_processes_s": round(best_classify, 4),
        "sweep_over_separate_classify": round(ratio, 4),
        "fractions_equal_classify": equal,
        "targets": TARGETS,
        "records": [figure(f"mixtype sweep of {values} values / {values} mixtype classify processes", ratio,
                           TARGETS["sweep_over_separate_classify"], unit="ratio")],
    }


if __name__ == "__main__":
    print(json.dumps(run()))
