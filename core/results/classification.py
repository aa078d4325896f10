"""One classification of a study, and its document: what ``mixtype classify --json`` prints.

``classify_study`` runs the classify pipeline on a compiled equation (type map, type-change lines refined
onto D = 0 unless ``refine`` is off, hyperbolic pockets with the peak of the quantity the equation's trade
chooses); ``classification_document`` turns it, with the study around it, into the JSON document. The
command ``mixtype classify`` and every job of ``mixtype batch`` (core.batch) build their documents here, so a
batch result is field by field what a single classify prints.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass

from core.analysis.classify import TypeMap, classify_grid
from core.analysis.pockets import Pocket, pocket_statistics
from core.analysis.type_change_lines import TypeBoundaries, find_type_boundaries
from core.domain import Domain
from core.equations.compiled import CompiledEquation
from core.equations.equation import Equation
from core.results.document import data_files_document, map_fields, source_document, study_fields
from core.results.readouts import peak_quantity

__all__ = ["Classification", "classification_document", "classify_study"]


@dataclass(frozen=True, eq=False)
class Classification:
    """The classify results of one study: the (ny, nx) type map, its type-change lines and its hyperbolic
    pockets (largest first)."""

    type_map: TypeMap
    boundaries: TypeBoundaries
    pockets: tuple[Pocket, ...]


def classify_study(compiled: CompiledEquation, equation: Equation, domain: Domain, *,
                   parameters: Mapping[str, float], tolerance: float, data=None,
                   refine: bool = True) -> Classification:
    """Classify ``domain``'s grid, find the type-change lines (refined onto D = 0 unless ``refine`` is off)
    and the hyperbolic pockets with the peak of the quantity ``equation`` chooses (core.results.readouts).

    ``data`` is the QuantitySource the equation samples (None without data).
    """
    type_map = classify_grid(compiled, domain, parameters=parameters, data=data, tolerance=tolerance)
    boundaries = find_type_boundaries(compiled, type_map, parameters=parameters, data=data, refine=refine)
    quantity = peak_quantity(equation, compiled, data.names if data else ())
    pockets = pocket_statistics(compiled, type_map, quantity=quantity, parameters=parameters, data=data)
    return Classification(type_map, boundaries, tuple(pockets))


def classification_document(classification: Classification, *, variables: Sequence[str], equation: Equation,
                            domain: Domain, parameters: Mapping[str, float], tolerance: float, data=None,
                            source: Mapping[str, str] | None = None) -> dict:
    """The ``mixtype classify --json`` document (without ``certified``): grid, tolerance, fractions, lines,
    parabolic regions and pockets (core.results.document.map_fields), the study (version, equation,
    parameters), the data files read (``data``: core.data.sources.DataSources, when there are any) and where
    the study comes from (core.results.document.source_document)."""
    document = {**map_fields(variables, domain, tolerance, type_map=classification.type_map,
                             boundaries=classification.boundaries, pockets=classification.pockets),
                **study_fields(equation, parameters)}
    if data is not None:
        document["data"] = data_files_document(data)
    document.update(source_document(source))
    return document
