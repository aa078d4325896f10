"""The open study as a QObject: applies edits as undoable commands and says precisely what changed.

The document owns a ``core.project.model.Project`` (its data file paths absolute, see gui.project_bridge). Every
edit builds a new Project and pushes a command holding the states before and after (gui.project_edits).
Commands that share a merge key (one slider drag, one burst of typing in one field) merge into one undo step.
After each change the document emits only the signals that apply, once each.
"""

from __future__ import annotations

import itertools
from dataclasses import replace
from pathlib import Path

from PySide6.QtCore import QObject, Signal, Slot
from PySide6.QtGui import QUndoStack

from core.analysis.cauchy_input import CAUCHY_FIELDS
from core.domain import Domain
from core.equations.compiled import CompiledEquation
from core.equations.equation import LOWER_ORDER_NAMES, Equation, Parameter
from core.equations.language import ExpressionError
from core.equations.lower_order import lower_order_problem, stated_lower_order
from core.project.data_files import compile_with_data
from core.project.model import Pin, Project, SavedSweep, Seed
from core.project.names import free_name
from gui.project_edits import ProjectEdit, changed_parts

__all__ = ["LAYER_FIELDS", "LAYER_LABELS", "UNDO_LIMIT", "Document"]

UNDO_LIMIT = 500

# The map's layers as the window names them, in the order the layers panel lists them, with the
# ViewSettings switch each one sets.
LAYER_LABELS = {
    "type_map": "Type zones",
    "type_lines": "Type-change lines",
    "family_1": "Characteristics, family 1",
    "family_2": "Characteristics, family 2",
    "pins": "Pins",
    "seeds": "Seed segments",
    "legend": "Legend",
}
LAYER_FIELDS = {
    "type_map": "show_type_map",
    "type_lines": "show_type_change_lines",
    "family_1": "show_characteristics_family_1",
    "family_2": "show_characteristics_family_2",
    "pins": "show_pins",
    "seeds": "show_seed_segments",
    "legend": "show_legend",
}


class Document(QObject):
    """Owns the current project, its file path and undo stack."""

    project_replaced = Signal()        # a different project: everything changed, undo history cleared
    equation_changed = Signal()        # text, definitions, parameter set or the shown equation changed
    parameters_changed = Signal()      # only parameter values of the shown equation changed
    lower_order_changed = Signal()     # only the lower-order terms d, e, f of the shown equation changed
    cauchy_data_changed = Signal()     # only the Cauchy data (line, u, du) of the shown equation changed
    equations_listed = Signal()        # the list of equations or domains (names, count) changed
    domain_changed = Signal()
    pins_changed = Signal()
    seeds_changed = Signal()
    layers_changed = Signal()
    notes_changed = Signal()
    data_changed = Signal()            # the loaded background data (and so the names equations may use) changed
    data_sources_changed = Signal()    # the study's list of data files (paths, renames, checksums) changed
    sweeps_changed = Signal()          # the parameter sweeps (settings, results, critical values) changed
    dirty_changed = Signal(bool)
    path_changed = Signal(str)
    unapplied_changed = Signal()       # typed text held back because it has an error (see ``unapplied``)

    def __init__(self, project: Project, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self._project = project
        self._path: Path | None = None
        self._compiled_for: tuple | None = None
        self._compiled: CompiledEquation | None = None
        self._data = None
        self._data_names: tuple[str, ...] = ()
        self._data_pending = False
        self._compile_error = ""
        self._sessions = itertools.count(1)
        self._unapplied: dict[str, str] = {}
        self.undo_stack = QUndoStack(self)
        self.undo_stack.setUndoLimit(UNDO_LIMIT)
        self.undo_stack.cleanChanged.connect(self._clean_changed)

    # -- state ----------------------------------------------------------------------------------------------
    @property
    def project(self) -> Project:
        return self._project

    @property
    def equation(self) -> Equation:
        """The shown equation."""
        return self._project.equation(self._project.shown_equation)

    @property
    def domain(self) -> Domain:
        """The shown domain."""
        return self._project.domain(self._project.shown_domain)

    @property
    def tolerance(self) -> float:
        """The parabolic tolerance (dimensionless), kept in the project's view settings."""
        return float(self._project.view.parabolic_tolerance)

    @property
    def bounces(self) -> int:
        """How many times each half of a characteristic goes on past an edge or the type-change line."""
        return int(self._project.view.characteristic_bounces)

    def layer_visible(self, name: str) -> bool:
        """Whether the map layer ``name`` (a key of LAYER_LABELS) is drawn."""
        return bool(getattr(self._project.view, LAYER_FIELDS[name]))

    @property
    def path(self) -> Path | None:
        return self._path

    @property
    def is_dirty(self) -> bool:
        return not self.undo_stack.isClean()

    @property
    def data(self):
        """The background data as a core QuantitySource (``.sample``, ``.names``), or None without data."""
        return self._data

    @property
    def data_names(self) -> tuple[str, ...]:
        """Names of the data quantities equations may use (also those of files that are missing); an
        equation that defines one of them itself uses its own definition (core.project.data_files)."""
        return self._data_names

    @property
    def data_pending(self) -> bool:
        """True while the study's data files are being loaded: results computed now would be discarded."""
        return self._data_pending

    def set_data_pending(self, pending: bool) -> None:
        self._data_pending = bool(pending)

    def set_data(self, source, names: tuple[str, ...] | None = None) -> None:
        """Use other background data (loaded state, not an edit: no undo step). ``names`` default to
        ``source.names``; equations are compiled again with them and ``data_changed`` is emitted."""
        names = tuple(getattr(source, "names", ())) if names is None else tuple(names)
        if source is self._data and names == self._data_names:
            return
        self._data = source
        self._data_names = names
        self._compiled_for = None
        self.data_changed.emit()

    def check_lower_order(self, which: str, text: str) -> ExpressionError | None:
        """Why ``text`` cannot be the shown equation's lower-order term ``which``, or None (empty is fine)."""
        return lower_order_problem(self.equation, which, text, data_names=self._data_names)

    def check_equation(self, equation: Equation) -> ExpressionError | None:
        """Why ``equation`` would not compile with the current data names, or None when it compiles."""
        try:
            compile_with_data(equation, self._data_names)
        except ExpressionError as error:
            return error
        return None

    @property
    def compiled(self) -> CompiledEquation | None:
        """The shown equation compiled with the data names (cached); None when it does not compile."""
        equation = self.equation
        key = (equation, self._data_names)
        if self._compiled_for is None or self._compiled_for[0] is not equation \
                or self._compiled_for[1] != self._data_names:
            self._compiled_for = key
            try:
                self._compiled = compile_with_data(equation, self._data_names)
                self._compile_error = ""
            except ExpressionError as error:
                self._compiled = None
                self._compile_error = str(error)
        return self._compiled

    @property
    def compile_error(self) -> str:
        _ = self.compiled
        return self._compile_error

    @property
    def unapplied(self) -> dict[str, str]:
        """Why the text typed for each place ("a", "definitions", "domain", ...) was not applied: the study, and
        so the map, keeps the last valid text of those places (gui.settled_edits)."""
        return dict(self._unapplied)

    def set_unapplied(self, where: str, reason: str) -> None:
        """Record that the text typed for ``where`` has an error (``reason``), or clear it (empty ``reason``)."""
        if self._unapplied.get(where, "") == reason:
            return
        if reason:
            self._unapplied[where] = reason
        else:
            del self._unapplied[where]
        self.unapplied_changed.emit()

    def new_merge_key(self, what: str) -> str:
        """A fresh key for one drag or one burst of typing: edits carrying it become one undo step."""
        return f"{what}#{next(self._sessions)}"

    # -- whole-project operations ---------------------------------------------------------------------------
    def replace_project(self, project: Project, path: Path | str | None = None, *, dirty: bool = False) -> None:
        """Show another project (new, opened, recovered); clears the undo history."""
        self.undo_stack.clear()
        self._project = project
        self._compiled_for = None
        if self._unapplied:
            self._unapplied.clear()
            self.unapplied_changed.emit()
        self.set_path(path)
        self.project_replaced.emit()
        self.equation_changed.emit()
        self.equations_listed.emit()
        self.domain_changed.emit()
        self.pins_changed.emit()
        self.seeds_changed.emit()
        self.layers_changed.emit()
        self.notes_changed.emit()
        self.sweeps_changed.emit()
        if dirty:
            # An empty, never-clean marker: a recovered project must be saved before it is safe.
            self.undo_stack.resetClean()
            self.dirty_changed.emit(True)
        else:
            self.undo_stack.setClean()
            self.dirty_changed.emit(False)

    def set_path(self, path: Path | str | None) -> None:
        self._path = Path(path) if path is not None else None
        self.path_changed.emit(str(self._path) if self._path else "")

    def mark_saved(self, path: Path | str, written: Project | None = None) -> None:
        """The project is now stored at ``path``; ``written`` (same content, metadata as stored) replaces it
        without an undo step."""
        if written is not None:
            self._project = written
        self.set_path(path)
        self.undo_stack.setClean()

    # -- edits ----------------------------------------------------------------------------------------------
    def edit(self, after: Project, text: str, *, merge_key: str = "") -> bool:
        """Push an undoable change to ``after``; nothing happens (False) when it equals the current project."""
        if after == self._project:
            return False
        self.undo_stack.push(ProjectEdit(self._apply, self._project, after, text, merge_key))
        return True

    def set_equation(self, equation: Equation, text: str = "Edit equation", *, merge_key: str = "") -> bool:
        return self.edit(self._project.with_equation(equation, replacing=self._project.shown_equation), text, merge_key=merge_key)

    def set_coefficient(self, which: str, text: str, *, merge_key: str = "") -> bool:
        if which not in ("a", "b", "c"):
            raise ValueError(f"coefficient must be 'a', 'b' or 'c', got {which!r}")
        equation = replace(self.equation, **{which: text})
        return self.set_equation(equation, f"Edit coefficient {which}", merge_key=merge_key)

    def set_lower_order(self, which: str, text: str, *, merge_key: str = "") -> bool:
        """State the lower-order term ``which`` ("d", "e" or "f") as ``text``; an empty text states none. It never
        changes the map: only ``lower_order_changed`` is emitted."""
        if which not in LOWER_ORDER_NAMES:
            raise ValueError(f"lower-order term must be one of {', '.join(LOWER_ORDER_NAMES)}, got {which!r}")
        terms = dict(self.equation.lower_order)
        terms[which] = text.strip()
        equation = replace(self.equation, lower_order=stated_lower_order(terms))
        return self.set_equation(equation, f"Edit lower-order term {which}", merge_key=merge_key)

    def set_cauchy_data(self, which: str, text: str, *, merge_key: str = "") -> bool:
        """Set one text of the shown equation's Cauchy problem (``which``: "line", "u" or "du"); an empty text
        removes it. It never changes the map: only ``cauchy_data_changed`` is emitted."""
        if which not in CAUCHY_FIELDS:
            raise ValueError(f"Cauchy data are one of {', '.join(CAUCHY_FIELDS)}, got {which!r}")
        data = {key: value for key, value in self.equation.cauchy_data.items() if key != which}
        if text.strip():
            data[which] = text.strip()
        data = {key: data[key] for key in CAUCHY_FIELDS if key in data}
        what = {"line": "data line", "u": "u on the data line", "du": "normal derivative on the data line"}[which]
        return self.set_equation(replace(self.equation, cauchy_data=data), f"Edit Cauchy {what}", merge_key=merge_key)

    def set_definitions(self, definitions: dict[str, str], *, merge_key: str = "") -> bool:
        equation = replace(self.equation, definitions=dict(definitions))
        return self.set_equation(equation, "Edit definitions", merge_key=merge_key)

    def set_parameters(self, parameters: dict[str, Parameter], text: str = "Edit parameters", *,
                       merge_key: str = "") -> bool:
        equation = replace(self.equation, parameters=dict(parameters))
        return self.set_equation(equation, text, merge_key=merge_key)

    def set_parameter_value(self, name: str, value: float, *, merge_key: str = "") -> bool:
        parameters = dict(self.equation.parameters)
        if name not in parameters:
            raise KeyError(f"no parameter named {name!r}")
        parameters[name] = replace(parameters[name], value=float(value))
        return self.set_parameters(parameters, f"Set {name} = {value:.6g}", merge_key=merge_key)

    def set_domain(self, domain: Domain, text: str = "Edit domain", *, merge_key: str = "") -> bool:
        return self.edit(self._project.with_domain(domain, replacing=self._project.shown_domain), text, merge_key=merge_key)

    def show_equation(self, index: int) -> bool:
        return self.edit(self._project.with_shown(equation=self._project.equation_names[index]),
                         "Show another equation")

    def show_domain(self, index: int) -> bool:
        return self.edit(self._project.with_shown(domain=self._project.domain_names[index]), "Show another domain")

    def add_equation(self, equation: Equation) -> bool:
        project = self._project.with_equation(equation).with_shown(equation=equation.name)
        return self.edit(project, f"Add equation {equation.name}")

    def add_equation_and_domain(self, equation: Equation, domain: Domain | None, text: str) -> bool:
        """Add ``equation`` (renamed if its name is taken) and show it, as one undo step. ``domain`` is shown
        too: a domain of the project with the same bounds when there is one, else ``domain`` itself, added
        (renamed if needed). None keeps the shown domain."""
        project = self._project
        equation = replace(equation, name=free_name(equation.name, project.equation_names))
        project = project.with_equation(equation).with_shown(equation=equation.name)
        if domain is not None:
            bounds = (domain.xmin, domain.xmax, domain.ymin, domain.ymax)
            same = [d.name for d in project.domains if (d.xmin, d.xmax, d.ymin, d.ymax) == bounds]
            if same:
                project = project.with_shown(domain=same[0])
            else:
                domain = replace(domain, name=free_name(domain.name, project.domain_names))
                project = project.with_domain(domain).with_shown(domain=domain.name)
        return self.edit(project, text)

    def add_domain(self, domain: Domain) -> bool:
        project = self._project.with_domain(domain).with_shown(domain=domain.name)
        return self.edit(project, f"Add domain {domain.name}")

    def duplicate_equation(self) -> bool:
        """Add a copy of the shown equation under a free name ("name (2)", ...) and show it."""
        equation = self.equation
        return self.add_equation(replace(equation, name=free_name(equation.name, self._project.equation_names)))

    def duplicate_domain(self) -> bool:
        """Add a copy of the shown domain under a free name ("name (2)", ...) and show it."""
        domain = self.domain
        return self.add_domain(replace(domain, name=free_name(domain.name, self._project.domain_names)))

    def add_pin(self, x: float, y: float, label: str = "") -> bool:
        label = label or f"P{len(self._project.pins) + 1}"
        pin = Pin(float(x), float(y), label, study=self._project.shown_study)
        return self.edit(replace(self._project, pins=self._project.pins + (pin,)),
                         f"Pin {label}")

    def move_pin(self, index: int, x: float, y: float, *, merge_key: str = "") -> bool:
        pins = list(self._project.pins)
        pins[index] = replace(pins[index], x=float(x), y=float(y))
        return self.edit(replace(self._project, pins=tuple(pins)), f"Move pin {pins[index].label}",
                         merge_key=merge_key)

    def relabel_pin(self, index: int, label: str) -> bool:
        pins = list(self._project.pins)
        pins[index] = replace(pins[index], label=label)
        return self.edit(replace(self._project, pins=tuple(pins)), f"Rename pin to {label}")

    def remove_pin(self, index: int) -> bool:
        pins = list(self._project.pins)
        removed = pins.pop(index)
        return self.edit(replace(self._project, pins=tuple(pins)), f"Delete pin {removed.label}")

    def add_seed(self, seed: Seed) -> bool:
        what = "Trace through a point" if not seed.is_segment else f"Trace along a segment ({seed.curves} seeds)"
        return self.edit(replace(self._project, seeds=self._project.seeds + (seed,)), what)

    def remove_seed(self, index: int) -> bool:
        seeds = list(self._project.seeds)
        seeds.pop(index)
        return self.edit(replace(self._project, seeds=tuple(seeds)), "Remove characteristics")

    def clear_seeds(self) -> bool:
        return self.edit(replace(self._project, seeds=()), "Remove all characteristics")

    def set_layer(self, name: str, visible: bool) -> bool:
        if name not in LAYER_FIELDS:
            raise ValueError(f"unknown layer {name!r}; expected one of {', '.join(LAYER_FIELDS)}")
        view = replace(self._project.view, **{LAYER_FIELDS[name]: bool(visible)})
        return self.edit(replace(self._project, view=view), f"{'Show' if visible else 'Hide'} {name}")

    def set_tolerance(self, tolerance: float) -> bool:
        """The parabolic tolerance: |D|/(b^2 + 4|ac|) at or below it counts as parabolic (dimensionless)."""
        tolerance = float(tolerance)
        if not 0.0 <= tolerance < 1.0:
            raise ValueError(f"parabolic tolerance must be in [0, 1), got {tolerance:g}")
        view = replace(self._project.view, parabolic_tolerance=tolerance)
        return self.edit(replace(self._project, view=view), f"Parabolic tolerance {tolerance:g}")

    def set_bounces(self, bounces: int) -> bool:
        """Characteristics go on through up to ``bounces`` edges and type-change lines on each side of a seed."""
        view = replace(self._project.view, characteristic_bounces=int(bounces))
        return self.edit(replace(self._project, view=view), f"Characteristics go on {int(bounces)} times")

    def set_data_source(self, index: int, ref, text: str) -> bool:
        """Replace the project's data file ``index`` by ``ref`` (renamed quantities, accepted checksum)."""
        sources = list(self._project.data_sources)
        sources[index] = ref
        return self.edit(replace(self._project, data_sources=tuple(sources)), text)

    def remove_data_source(self, index: int) -> bool:
        sources = list(self._project.data_sources)
        removed = sources.pop(index)
        return self.edit(replace(self._project, data_sources=tuple(sources)),
                         f"Remove data file {Path(removed.path).name}")

    def set_sweep(self, sweep: SavedSweep, text: str, *, merge_key: str = "") -> bool:
        """Put ``sweep`` in place of the sweep of the same study and parameter, or add it (ValueError when its
        study is not in the project)."""
        return self.edit(self._project.with_sweep(sweep), text, merge_key=merge_key)

    def set_notes(self, notes: str, *, merge_key: str = "") -> bool:
        return self.edit(replace(self._project, notes=notes), "Edit notes", merge_key=merge_key)

    @Slot(bool)
    def _clean_changed(self, clean: bool) -> None:
        self.dirty_changed.emit(not clean)

    # -- change notification --------------------------------------------------------------------------------
    def _apply(self, after: Project) -> None:
        """Make ``after`` the project (an undo command's do or undo) and emit the signals the change calls for."""
        before, self._project = self._project, after
        for part in changed_parts(before, after):
            getattr(self, part).emit()
