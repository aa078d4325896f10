"""The one table of fuzz failures still expected today, each with the issue-10 item and who is fixing it.

The fuzz tests accept a failing case only when an entry here explains it; tests/fuzz/test_known_failures.py
runs each entry's reproducer as a strict xfail, so an entry whose reproducer passes turns the suite red and
must be struck off. Owners: "datain" (data files and paths), "lead" (command-line numbers, escaping,
warnings, request bounds), "later" (code generation limits).
"""

from __future__ import annotations

import io
import json
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from tests.fuzz.cases import CANARY_PLACEHOLDER, Case
from tests.fuzz.data_files import zip_bomb
from tests.fuzz.harness import Outcome

__all__ = ["KNOWN_FAILURES", "KnownFailure", "explained"]


@dataclass(frozen=True)
class KnownFailure:
    """A kind of failure some cases still show: which failure columns, for which cases, and a reproducer."""

    name: str
    owner: str
    item: str
    failures: frozenset[str]
    applies: Callable[[Outcome], bool]
    reproducer: Callable[[], Case]


def _project_with_data(path: str) -> bytes:
    return json.dumps({
        "format": "mixtype-project", "format_version": 3,
        "metadata": {"created": "2025-01-01T00:00:00Z", "modified": "2025-01-01T00:00:00Z", "written_by": "0"},
        "equations": [{"name": "e", "description": "", "variables": ["x", "y"],
                       "coefficients": {"a": "1", "b": "0", "c": "u"}, "definitions": {}, "parameters": {}}],
        "domains": [{"name": "d", "x_range": [0.0, 1.0], "y_range": [0.0, 1.0], "nodes": [8, 8]}],
        "data_sources": [{"path": path, "checksum": "0" * 64, "format": "csv"}],
        "shown": {"equation": "e", "domain": "d"}, "pins": [], "seeds": [],
        "view": {"layers": {"type_map": True, "type_change_lines": True, "characteristics_family_1": True,
                            "characteristics_family_2": True, "pins": True, "legend": True},
                 "parabolic_tolerance": 1e-10, "characteristic_bounces": 0},
        "notes": ""}).encode()


def _corrupt_npz() -> bytes:
    """A compressed npz whose first member's deflate stream is broken (zlib.error when read)."""
    buffer = io.BytesIO()
    np.savez_compressed(buffer, x=np.linspace(0, 1, 50), y=np.linspace(0, 1, 40), u=np.ones((40, 50)))
    data = bytearray(buffer.getvalue())
    data[61] ^= 0xFF
    return bytes(data)


KNOWN_FAILURES: tuple[KnownFailure, ...] = (
    KnownFailure(
        "data paths outside the project's folder are read", "datain", "Files outside the study",
        frozenset({"file outside"}),
        lambda o: o.case.kind in ("project", "data"),
        lambda: Case("project", ("check", "case.mixtype.json", "--json"),
                     (("case.mixtype.json", _project_with_data(CANARY_PLACEHOLDER)),), "absolute canary path")),
    KnownFailure(
        "a data file can exhaust memory", "datain", "Data loading without a memory bound",
        frozenset({"memory cap", "hang"}),
        lambda o: o.case.kind == "data",
        lambda: Case("data", ("check", "case.mixtype.json", "--json"),
                     (("case.mixtype.json", _project_with_data("bomb.npz").replace(b'"csv"', b'"npz"')),
                      ("bomb.npz", zip_bomb(2.0))), "npz zip bomb")),
    KnownFailure(
        "reader errors escape as internal errors", "datain", "Exceptions escape their types",
        frozenset({"internal error", "warning", "bad message"}),
        lambda o: o.case.kind == "data",
        lambda: Case("data", ("check", "case.mixtype.json", "--json"),
                     (("case.mixtype.json", _project_with_data("x.npz").replace(b'"csv"', b'"npz"')),
                      ("x.npz", _corrupt_npz())),
                     "npz with a corrupt deflate stream")),
    KnownFailure(
        "floating-point warnings from the analysis reach stderr", "lead", "Warnings on stderr",
        frozenset({"warning"}),
        lambda o: any("RuntimeWarning" in d for d in o.details),
        lambda: Case("expression", ("classify", "--a=1e300", "--b=x", "--c=q", "--let=q=k*x - y", "--param=k=0.5",
                                    "--domain", "-1", "1", "-1", "1", "--grid", "3", "--json"), (),
                     "overflow in zero refinement")),
)


def explained(outcome: Outcome) -> bool:
    """True when every failure of ``outcome`` is one a known entry expects for such a case."""
    left = set(outcome.failures)
    for entry in KNOWN_FAILURES:
        if entry.applies(outcome):
            left -= entry.failures
    return not left
