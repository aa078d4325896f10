"""How the map keeps up with a slider drag at 1024 x 1024 grid nodes, in the real window, offscreen.

A drag is simulated as slider steps 16 ms apart (about 60 events per second) for about two seconds on the
demo hump scenario. Measured: maps shown per second during the drag, how long after the last step the final
map appears, and the time of one bare classify_grid for comparison. Ratios printed: map interval over
classification time (near 1 means the window adds little on top of core) and final latency over
classification time. Target: at least 5 maps per second and a final latency under 3 classifications.
Run by hand: ``python bench/run.py --only gui_drag``.
"""

from __future__ import annotations

import os
import tempfile
import time
from pathlib import Path

NODES = 1024
STEP_SECONDS = 0.016
STEPS = 120
SMOKE = {"nodes": 48, "steps": 4}     # python bench/run.py --smoke: every line runs, figures meaningless


def run(nodes: int = NODES, steps: int = STEPS) -> dict:
    os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")
    from PySide6.QtCore import QCoreApplication

    from core.analysis.classify import classify_grid
    from core.domain import Domain
    from gui.main_window import MainWindow
    from gui.preferences import Preferences
    from gui.project_bridge import scratch_project
    from gui.qt_setup import ensure_application

    ensure_application()
    base = scratch_project()
    domain = Domain(-3.0, 3.0, -2.0, 2.0, nodes, nodes, name="near field")
    study = base.with_domain(domain, replacing=base.shown_domain)
    with tempfile.TemporaryDirectory() as folder:
        window = MainWindow(study, preferences=Preferences(Path(folder)), autosave_ms=3_600_000)
        window.resize(1400, 900)
        window.show()
        window.analysis.flush()
        window.runner.wait_idle(60)
        compiled = window.document.compiled
        start = time.perf_counter()
        for _ in range(5):
            classify_grid(compiled, domain, parameters={"M_inf": 0.9})
        classify_seconds = (time.perf_counter() - start) / 5

        shown: list[tuple[float, float]] = []
        window.analysis.map_ready.connect(lambda m: shown.append((time.perf_counter(), m.parameters["M_inf"])))
        slider = window.equation_panel.sliders["M_inf"]
        slider.setSliderDown(True)
        began = time.perf_counter()
        for step in range(steps):
            slider.setValue(550 + step * 3)
            deadline = time.perf_counter() + STEP_SECONDS
            while time.perf_counter() < deadline:
                QCoreApplication.processEvents()
        last_step = time.perf_counter()
        slider.setSliderDown(False)
        final_value = window.document.equation.parameters["M_inf"].value
        while not shown or shown[-1][1] != final_value:
            QCoreApplication.processEvents()
            if time.perf_counter() - last_step > 30:
                break
        # The final map may already be on screen when the last step ends (a latency of 0).
        final_latency = max(0.0, shown[-1][0] - last_step) if shown else float("nan")
        during = [t for t, _ in shown if t <= last_step]
        maps_per_second = len(during) / (last_step - began)
        undo_steps = window.document.undo_stack.count()
        window.document.undo_stack.setClean()
        window.close()
    interval = 1.0 / maps_per_second if maps_per_second else float("inf")
    return {
        "nodes": nodes * nodes,
        "classify_seconds": round(classify_seconds, 4),
        "maps_per_second_during_drag": round(maps_per_second, 2),
        "map_interval_over_classify": round(interval / classify_seconds, 2),
        "final_latency_seconds": round(final_latency, 4),
        "final_latency_over_classify": round(final_latency / classify_seconds, 2),
        "undo_steps_for_the_drag": undo_steps,
    }


if __name__ == "__main__":
    import json

    print(json.dumps(run(), indent=2))
