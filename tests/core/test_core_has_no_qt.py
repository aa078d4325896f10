"""core/ must import with Qt unavailable (house rule: the core never imports Qt)."""

import pathlib
import subprocess
import sys

CORE = pathlib.Path(__file__).resolve().parents[2] / "core"


def test_every_core_module_imports_without_qt():
    modules = sorted(f"core.{p.stem}" for p in CORE.glob("*.py") if p.stem != "__init__")
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
                            cwd=CORE.parent, timeout=120)
    assert result.returncode == 0, result.stderr
    assert int(result.stdout.strip()) >= len(modules)
