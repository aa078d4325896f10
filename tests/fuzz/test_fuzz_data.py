"""Corrupted data files of every supported format, read through a demo project or --data: a result or a
one-line message naming the file; no internal error, memory cap hit, hang or warning."""

from tests.fuzz.cases import draw_cases, fuzz_case_count
from tests.fuzz.checking import run_all, unexplained
from tests.fuzz.data_files import data_cases


def test_corrupted_data_files_end_in_a_result_or_a_message(workshop):
    cases = draw_cases(data_cases(), fuzz_case_count(60, share=0.1), seed_value=30)
    outcomes = run_all(workshop, cases)
    assert unexplained(outcomes) == []
    assert "rejected" in {o.outcome for o in outcomes}
