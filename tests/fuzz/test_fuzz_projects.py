"""Mutated project files (from the demos and tests/data) in check, classify, probe and trace: a result or
one-line located messages for every case, and nothing read outside the case folder."""

from tests.fuzz.cases import draw_cases, fuzz_case_count
from tests.fuzz.checking import run_all, unexplained
from tests.fuzz.projects import project_cases


def test_mutated_projects_end_in_a_result_or_messages(workshop):
    cases = draw_cases(project_cases(), fuzz_case_count(120), seed_value=20)
    outcomes = run_all(workshop, cases)
    assert unexplained(outcomes) == []
    assert {o.outcome for o in outcomes} >= {"result", "rejected"}
