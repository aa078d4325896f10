"""The README's Limits section states the limits the code enforces (house rule: every limit is said to the
user; common practice, no source). Each constant must appear there with the value it has in the code."""

from __future__ import annotations

from pathlib import Path

import pytest

import core.cli.trace
from core.analysis.sweep import MAX_SWEEP_VALUES
from core.analysis.tracing import MAX_BOUNCES
from core.domain import MAX_GRID
from core.equations import codegen, language
from core.equations.equation import MAX_DEFINITIONS, MAX_PARAMETERS
from core.project import schema, sweeps

README = Path(__file__).resolve().parents[2] / "README.md"


def limits_section() -> str:
    text = README.read_text(encoding="utf-8")
    return text.split("## Limits", 1)[1].split("\n## ", 1)[0]


@pytest.mark.parametrize("phrase, value", [
    ("{} characters, ", language.MAX_TEXT_LENGTH), ("{} operations", language.MAX_NODES),
    ("{} levels of nesting", language.MAX_DEPTH), ("at most {} in magnitude", language.MAX_ABS_EXPONENT),
    ("names of at most {} characters", language.MAX_NAME_LENGTH), ("{} parameters", MAX_PARAMETERS),
    ("{} definitions", MAX_DEFINITIONS), ("{} steps", codegen.MAX_PROGRAM_STEPS),
    ("{} characters (a step", codegen.MAX_PROGRAM_CHARACTERS), ("at most {} names", codegen.MAX_STEP_INPUTS),
    ("{} nodes along each variable", MAX_GRID), ("{} bounces", MAX_BOUNCES),
    ("{} curves in one run", core.cli.trace.MAX_CURVES), ("{} equations", schema.MAX_EQUATIONS),
    ("{} domains", schema.MAX_DOMAINS), ("{} data sources", schema.MAX_DATA_SOURCES), ("{} pins", schema.MAX_PINS),
    ("{} seeds", schema.MAX_SEEDS), ("{} characters of coefficient", schema.MAX_EXPRESSION_CHARACTERS),
    ("{} sweeps", sweeps.MAX_SWEEPS), ("2 to {} values in one sweep", MAX_SWEEP_VALUES),
    ("at most {} critical values", sweeps.MAX_CRITICAL_VALUES),
])
def test_the_readme_states_each_limit_with_its_value(phrase, value):
    section = " ".join(limits_section().split())
    assert phrase.format(f"{value:,}") in section
