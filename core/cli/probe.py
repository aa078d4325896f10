"""``mixtype probe``: everything known at one point, or at every pin of a project FILE."""

from __future__ import annotations

import argparse
import json
from typing import TextIO

from core.analysis.probe import probe_point
from core.cli.command import compiled_study, read_study, source_fields
from core.cli.options import EXIT_OK, UsageError
from core.cli.study import Study
from core.results.document import data_files_document, pin_document, probe_document, study_fields
from core.results.readouts import TradeReading, probe_rows, read_trade

__all__ = ["run"]


def _trade_reading(study: Study, compiled, x: float, y: float) -> TradeReading:
    """The equation's trade readout at (x, y) (empty when it names none); a UsageError when it cannot be read."""
    reading = read_trade(study.equation.trade, compiled, x, y, parameters=study.parameters, data=study.data)
    if reading.error:
        raise UsageError(f"trade readout: {reading.error}")
    return reading


def run(args: argparse.Namespace, out: TextIO, err: TextIO) -> int:
    """Probe the point (or FILE's pins) and report it (options: core.cli.registry); returns the exit status."""
    study = read_study(args, err)
    compiled = compiled_study(study)
    if args.at is None:
        if study.project is None:
            raise UsageError("missing --at X Y (or give a project FILE to probe its pins)")
        if not study.project.pins:
            raise UsageError(f"{args.file}: the project has no pins; give --at X Y")
        located = [(pin.x, pin.y, pin.label) for pin in study.project.pins]
    else:
        located = [(args.at[0], args.at[1], None)]
    results = [(probe_point(compiled, x, y, parameters=study.parameters, data=study.data,
                            tolerance=study.tolerance, domain=study.domain), label,
                _trade_reading(study, compiled, x, y)) for x, y, label in located]
    if args.json:
        if args.at is not None:
            document = probe_document(results[0][0], results[0][2])        # --at X Y echoed as typed
        else:
            located_pins = zip(study.project.pins, results, strict=True)
            document = {"pins": [pin_document(pin, result, trade, study.domain)
                                 for pin, (result, _, trade) in located_pins]}
        document.update(study_fields(study.equation, study.parameters, tolerance=study.tolerance))
        if study.data is not None:
            document["data"] = data_files_document(study.data)
        document.update(source_fields(study))
        json.dump(document, out)
        out.write("\n")
        return EXIT_OK
    for index, (result, label, trade) in enumerate(results):
        if label is not None:
            out.write(("\n" if index else "") + f"pin {index + 1}" + (f": {label}" if label else "") + "\n")
        # a pin's stored point (a click on the map) is cleaned of rounding noise; --at X Y is shown as typed
        _write_probe(result, trade, compiled.variables, study.domain if label is not None else None, out)
    return EXIT_OK


def _write_probe(result, trade: TradeReading, variables, domain, out: TextIO) -> None:
    rows = probe_rows(result, trade, variables, domain)
    width = max(len(r[0]) for r in rows)
    out.writelines(f"{label:<{width}}  {value}\n" for label, value in rows)
