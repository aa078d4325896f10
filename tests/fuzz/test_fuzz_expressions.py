"""Generated and hostile expressions in classify, probe and trace: a result or a located one-line message for
every case; no internal error, hang, memory cap hit, warning or file read outside the case folder."""

from tests.fuzz.cases import draw_cases, fuzz_case_count
from tests.fuzz.checking import run_all, unexplained
from tests.fuzz.expressions import expression_cases


def test_generated_expressions_end_in_a_result_or_a_message(workshop):
    cases = draw_cases(expression_cases(), fuzz_case_count(160, share=0.5), seed_value=10)
    outcomes = run_all(workshop, cases)
    assert unexplained(outcomes) == []
    # the strategy reaches both ends: some texts evaluate, others are refused
    assert {o.outcome for o in outcomes} >= {"result", "rejected"}


def test_hostile_expressions_end_in_a_result_or_a_message(workshop):
    cases = draw_cases(expression_cases(hostile_share=1.0), fuzz_case_count(100, share=0.5), seed_value=11)
    outcomes = run_all(workshop, cases)
    assert unexplained(outcomes) == []
    assert sum(o.outcome == "rejected" for o in outcomes) > len(outcomes) // 3
