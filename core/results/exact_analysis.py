"""The JSON document of an exact analysis (core.analysis.exact): `mixtype analyze --json` and any report.

Every expression is written as Mixtype formula text (core.equations.formula_text, terms in sympy's printing
order) in the study's own names, so it reads back through the parser: a condition inside piecewise(), the
rest as it stands (a canonical form's derivative names u_xi, u_eta... as extra names). What the language
cannot say (an unevaluated integral, the imaginary unit) is null, with a note naming the field.

Fields (only ever added to, as every command's --json): discriminant, discriminant_factored, type_change,
zones[] {type, condition, everywhere}, characteristics[] {family, slope, invariant, direction, method},
canonical[] {type, coordinates, form, names, terms[] {derivative, coefficient}}, notes, and tangencies,
factors[] {expression, multiplicity, role}, coefficients {a..f}, variables, parameter_values[] {name, value},
parameters_substituted, data_quantities, deadline_seconds.
"""

from __future__ import annotations

import sympy

from core.analysis.canonical_forms import CanonicalForm
from core.analysis.exact import ExactAnalysis
from core.equations.formula_text import NotInLanguage, formula_text

__all__ = ["canonical_text", "document"]


class _Writer:
    """Formula text of expressions, collecting a note for each that the language cannot say."""

    def __init__(self) -> None:
        self.notes: list[str] = []

    def text(self, expression: sympy.Basic | None, what: str) -> str | None:
        if expression is None:
            return None
        try:
            return formula_text(expression, order=None)
        except NotInLanguage as error:
            self.notes.append(f"{what} is not expressible in the formula language ({error})")
            return None


def canonical_text(form: CanonicalForm, writer: _Writer | None = None) -> str | None:
    """The canonical form as one line, "u_xi_eta + ... = 0"; None when it is not known or not expressible."""
    writer = writer or _Writer()
    if form.lower is None:
        return None
    text = " + ".join(form.principal)
    for name, coefficient in form.lower:
        if coefficient == 0:
            continue
        term = writer.text(coefficient * sympy.Symbol(name), f"the {form.type} canonical form's {name} term")
        if term is None:
            return None
        text += f" - {term[1:]}" if term.startswith("-") else f" + {term}"
    return f"{text} = 0"


def document(analysis: ExactAnalysis) -> dict:
    """The plain-JSON document of ``analysis`` (fields in the module docstring)."""
    writer = _Writer()
    text = writer.text
    zones = [{"type": zone.type, "condition": text(zone.condition, f"the {zone.type} zone's condition"),
              "everywhere": zone.condition is None} for zone in analysis.zones]
    characteristics = []
    for family in analysis.characteristics:
        label = f"family {family.family}"
        direction = None if family.direction is None else \
            [text(v, f"{label}'s direction") for v in family.direction]
        characteristics.append({
            "family": family.family, "slope": text(family.slope, f"{label}'s slope"),
            "invariant": text(family.invariant, f"{label}'s invariant"),
            "direction": None if direction is None or None in direction else direction,
            "method": family.method})
        if family.direction is not None and family.slope is None:
            writer.notes.append(f"{label} is vertical (dx = 0): its slope dy/dx is infinite")
    canonical = []
    for form in analysis.canonical:
        coordinates = None if form.coordinates is None else \
            [text(v, f"the {form.type} coordinate {name}") for v, name in zip(form.coordinates, form.names,
                                                                                 strict=True)]
        terms = None
        if form.lower is not None:
            terms = [{"derivative": name, "coefficient": "1"} for name in form.principal] + [
                {"derivative": name, "coefficient": text(value, f"the {form.type} form's {name} term")}
                for name, value in form.lower]
        canonical.append({"type": form.type, "names": list(form.names),
                          "coordinates": None if coordinates is None or None in coordinates else coordinates,
                          "form": canonical_text(form, writer), "terms": terms})
        writer.notes.extend(form.notes)
    result = {
        "variables": list(analysis.variables),
        "coefficients": {key: text(value, f"coefficient {key}")
                         for key, value in analysis.coefficients.items()},
        "parameter_values": [{"name": name, "value": float(value)}
                             for name, value in analysis.parameter_values.items()],
        "parameters_substituted": analysis.parameters_substituted,
        "data_quantities": list(analysis.data_quantities),
        "discriminant": text(analysis.discriminant, "D"),
        "discriminant_factored": text(analysis.discriminant_factored, "D factored"),
        "factors": [{"expression": text(f.expression, "a factor of D"), "multiplicity": f.multiplicity,
                     "role": f.role} for f in analysis.factors],
        "type_change": [text(v, "a type-change curve") for v in analysis.type_change],
        "tangencies": [text(v, "a tangency") for v in analysis.tangencies],
        "zones": zones,
        "characteristics": characteristics,
        "canonical": canonical,
        "deadline_seconds": analysis.deadline_seconds,
    }
    result["notes"] = list(analysis.notes) + list(dict.fromkeys(writer.notes))
    return result
