"""The layering rules of the code (house rules, common practice, no source).

core/ never imports Qt or gui/, not even inside a function; no module of core/ or gui/ takes part in an import
cycle, counting imports inside functions too; and every core module imports with Qt unavailable.
"""

import ast
import pathlib
import subprocess
import sys

from tests.ceilings import HANG_CEILING_S

ROOT = pathlib.Path(__file__).resolve().parents[2]
QT_PACKAGES = {"PySide6", "pyqtgraph", "PyQt5", "PyQt6", "shiboken6"}


def module_name(path: pathlib.Path) -> str:
    parts = path.relative_to(ROOT).with_suffix("").parts
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def project_modules() -> dict[str, pathlib.Path]:
    return {module_name(p): p for package in ("core", "gui") for p in (ROOT / package).rglob("*.py")}


def imported_modules(path: pathlib.Path, known: set[str]) -> set[str]:
    """Every project module ``path`` imports anywhere in its text (``from a.b import c`` counts a.b.c when
    that is a module, else a.b); other packages by their top-level name."""
    found = set()
    for node in ast.walk(ast.parse(path.read_text(), str(path))):
        if isinstance(node, ast.Import):
            names = [alias.name for alias in node.names]
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            names = [f"{node.module}.{alias.name}" if f"{node.module}.{alias.name}" in known else node.module
                     for alias in node.names]
        else:
            continue
        found.update(name if name in known else name.split(".")[0] for name in names)
    return found


def import_graph() -> dict[str, set[str]]:
    modules = project_modules()
    known = set(modules)
    return {name: imported_modules(path, known) for name, path in modules.items()}


def cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components with more than one module (Tarjan's algorithm), or self-imports."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found: list[list[str]] = []

    def visit(node: str) -> None:
        index[node] = low[node] = len(index)
        stack.append(node)
        on_stack.add(node)
        for target in graph.get(node, ()):
            if target not in graph:
                continue
            if target not in index:
                visit(target)
                low[node] = min(low[node], low[target])
            elif target in on_stack:
                low[node] = min(low[node], index[target])
        if low[node] == index[node]:
            component = []
            while True:
                member = stack.pop()
                on_stack.discard(member)
                component.append(member)
                if member == node:
                    break
            if len(component) > 1 or node in graph[node]:
                found.append(sorted(component))

    for node in sorted(graph):
        if node not in index:
            visit(node)
    return found


def test_core_never_imports_qt_or_gui_even_inside_functions():
    graph = import_graph()
    offending = {name: sorted(targets & (QT_PACKAGES | {"gui"}) | {t for t in targets if t.startswith("gui.")})
                 for name, targets in graph.items() if name.split(".")[0] == "core"}
    assert {name: bad for name, bad in offending.items() if bad} == {}


def test_no_import_cycles_in_core_or_gui():
    assert cycles(import_graph()) == []


def test_the_cycle_finder_finds_cycles():
    graph = {"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}, "e": {"e"}}
    assert cycles(graph) == [["a", "b", "c"], ["e"]]


def test_every_core_module_imports_without_qt():
    modules = sorted(name for name in project_modules() if name.split(".")[0] == "core")
    assert len(modules) > 30 and "core.analysis.discriminant" in modules
    script = (
        "import sys\n"
        "class Block:\n"
        "    def find_spec(self, name, path=None, target=None):\n"
        f"        if name.split('.')[0] in {sorted(QT_PACKAGES)!r}:\n"
        "            raise ImportError('Qt is blocked in core tests: ' + name)\n"
        "sys.meta_path.insert(0, Block())\n"
        f"for m in {modules!r}:\n"
        "    __import__(m)\n"
        "print(len([m for m in sys.modules if m == 'core' or m.startswith('core.')]))\n"
    )
    result = subprocess.run([sys.executable, "-c", script], check=False, capture_output=True, text=True,
                            cwd=ROOT, timeout=HANG_CEILING_S)
    assert result.returncode == 0, result.stderr
    assert int(result.stdout.strip()) >= len(modules)


# Inside core, each layer uses only the layers below it (DEVELOPERS.md, "Architecture").
CORE_LAYERS = (
    ("core", "core.domain", "core.progress", "core.bundled"),
    ("core.equations",),
    ("core.data",),
    ("core.analysis", "core.certify"),
    ("core.project",),
    ("core.results",),
    ("core.cli", "core.batch"),
)


def layer_of(module: str) -> int:
    matches = [index for index, prefixes in enumerate(CORE_LAYERS)
               for prefix in prefixes if module == prefix or module.startswith(prefix + ".")]
    return max(matches)


def test_core_layers_depend_only_downwards():
    upward = sorted((name, target) for name, targets in import_graph().items() if name.startswith("core")
                    for target in targets if target.startswith("core") and layer_of(target) > layer_of(name))
    assert upward == []


def test_the_layer_rule_sees_an_upward_import():
    assert layer_of("core.equations.parser") < layer_of("core.analysis.classify") < layer_of("core.cli.main")
    assert layer_of("core.domain") == 0 and layer_of("core") == 0
