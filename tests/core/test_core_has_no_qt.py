"""core/ must import with Qt unavailable (house rule: the core never imports Qt)."""

import pathlib
import subprocess
import sys

from tests.ceilings import HANG_CEILING_S

CORE = pathlib.Path(__file__).resolve().parents[2] / "core"


def test_every_core_module_imports_without_qt():
    # every module of every subpackage (core/equations, core/analysis, ...), not only the top level
    modules = sorted(".".join(p.relative_to(CORE.parent).with_suffix("").parts)
                     for p in CORE.rglob("*.py") if p.stem != "__init__")
    assert len(modules) >= 30 and "core.analysis.classify" in modules
    script = (
        "import sys\n"
        "class Block:\n"
        "    def find_spec(self, name, path=None, target=None):\n"
        "        if name.split('.')[0] in {'PySide6', 'pyqtgraph', 'PyQt5', 'PyQt6', 'shiboken6'}:\n"
        "            raise ImportError('Qt is blocked in core tests: ' + name)\n"
        "sys.meta_path.insert(0, Block())\n"
        f"for m in {modules!r}:\n"
        "    __import__(m)\n"
        "print(len([m for m in sys.modules if m.startswith('core.')]))\n"
    )
    result = subprocess.run([sys.executable, "-c", script], check=False, capture_output=True, text=True,
                            cwd=CORE.parent, timeout=HANG_CEILING_S)
    assert result.returncode == 0, result.stderr
    assert int(result.stdout.strip()) >= len(modules)
