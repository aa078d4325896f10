"""Start-up time of the ``mixtype`` script, as ratios against bare Python measured in one run.

Each case is a fresh process (``python -m gui.launcher ...`` from this checkout), timed against the Python
import it cannot do without: ``mixtype --help`` against ``python -c "import argparse"`` (the parser is all
--help needs), and an inline classify at grid 64 against ``python -c "import numpy, sympy"`` (the equation is
parsed with sympy and evaluated with numpy). The runs alternate, case and baseline in turn, so that a busy
moment of the machine falls on both; each figure is the best of ``repeats`` rounds (three runs a round for the
cases that take a few tens of milliseconds). A third baseline imports every library an inline classify
computes with (numpy, sympy, numexpr, contourpy): what classify takes beyond it is Mixtype's own code
(no scipy: pockets and type-change lines are labelled without scipy.ndimage).
Whether the checkout's modules load from cached bytecode changes that own share (a few tens of
milliseconds: PYTHONDONTWRITEBYTECODE and no __pycache__ compile them from source on every run, where numpy
and sympy always load compiled). An installed copy runs compiled (pip compiles a wheel's modules; an editable
install caches them on its first run), so the checkout's core/ and gui/ are compiled before timing, as
numpy's and sympy's are; ``checkout_bytecode_cached`` says whether that worked.
"""

from __future__ import annotations

import compileall
import importlib.util
import json
import os
import pathlib
import subprocess
import sys
import time

from records import figure  # bench/ is on sys.path (script dir or bench/run.py)

ROOT = pathlib.Path(__file__).resolve().parents[1]

INLINE_CLASSIFY = ("classify", "--a", "y", "--b", "0", "--c", "1", "--domain", "-1", "1", "-1", "1", "--grid", "64",
                   "--json")

# name -> argv after the interpreter; each case is run next to its baseline. The light cases take a few tens
# of milliseconds, where a busy moment weighs most: they run LIGHT_PER_ROUND times a round.
LIGHT_RUNS = {
    "help": ("-m", "gui.launcher", "--help"),
    "import_argparse": ("-c", "import argparse"),
    "command_help": ("-m", "gui.launcher", "classify", "--help"),
    "version": ("-m", "gui.launcher", "--version"),
}
LIGHT_PER_ROUND = 3
HEAVY_RUNS = {
    "classify_inline_64": ("-m", "gui.launcher", *INLINE_CLASSIFY),
    "import_numpy_sympy": ("-c", "import numpy, sympy"),
    "import_its_libraries": ("-c", "import numpy, sympy, numexpr, contourpy"),
}

TARGETS = {"help_over_import_argparse": 1.5, "classify_inline_64_over_import_numpy_sympy": 1.3}

SMOKE = {"repeats": 1}     # python bench/run.py --smoke: every line runs, figures meaningless


def _seconds(arguments: tuple[str, ...]) -> float:
    """Wall-clock seconds of one fresh ``python ARGUMENTS`` from the checkout's root (fails loudly)."""
    start = time.perf_counter()
    subprocess.run([sys.executable, *arguments], cwd=ROOT, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE,
                   check=True)
    return time.perf_counter() - start


def _bytecode_cached() -> bool:
    """Whether the runs load the checkout's modules compiled: a cached file beside the sources (Python reads
    one even under PYTHONDONTWRITEBYTECODE), or caching on so the first run writes it."""
    source = ROOT / "core" / "cli" / "classify.py"
    cached = pathlib.Path(importlib.util.cache_from_source(str(source))).exists()
    return cached or not os.environ.get("PYTHONDONTWRITEBYTECODE")


def run(repeats: int = 7) -> dict:
    """Best of ``repeats`` interleaved rounds of every case; the ratios and their target records."""
    for folder in ("core", "gui"):        # as installed: compiled, like the libraries it is compared with
        compileall.compile_dir(str(ROOT / folder), quiet=1)
    best = dict.fromkeys({**LIGHT_RUNS, **HEAVY_RUNS}, float("inf"))
    for _ in range(repeats):
        for runs in [LIGHT_RUNS] * LIGHT_PER_ROUND + [HEAVY_RUNS]:
            for name, arguments in runs.items():
                best[name] = min(best[name], _seconds(arguments))
    ratios = {
        "help_over_import_argparse": best["help"] / best["import_argparse"],
        "command_help_over_import_argparse": best["command_help"] / best["import_argparse"],
        "version_over_import_argparse": best["version"] / best["import_argparse"],
        "classify_inline_64_over_import_numpy_sympy": best["classify_inline_64"] / best["import_numpy_sympy"],
        # the classify's own share, beyond the libraries it computes with
        "classify_inline_64_over_import_its_libraries": best["classify_inline_64"] / best["import_its_libraries"],
    }
    return {
        "repeats": repeats,
        "checkout_bytecode_cached": _bytecode_cached(),
        "best_s": {name: round(seconds, 4) for name, seconds in best.items()},
        **{name: round(ratio, 3) for name, ratio in ratios.items()},
        "targets": TARGETS,
        "records": [
            figure("mixtype --help / python -c 'import argparse'", ratios["help_over_import_argparse"],
                   TARGETS["help_over_import_argparse"], unit="ratio"),
            figure("mixtype classify inline, grid 64 / python -c 'import numpy, sympy'",
                   ratios["classify_inline_64_over_import_numpy_sympy"],
                   TARGETS["classify_inline_64_over_import_numpy_sympy"], unit="ratio"),
        ],
    }


if __name__ == "__main__":
    print(json.dumps(run()))
