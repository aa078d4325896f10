"""Runs fuzz cases, each in its own forked child process, and says how each one ended.

The parent has imported the core and every command module already, so a case costs a fork (milliseconds),
not an interpreter start. The child caps its address space (resource.setrlimit(RLIMIT_AS)), records every
warning (warnings.simplefilter("always")), catches anything written to file descriptors 1 and 2 outside the
command's own streams, records with an audit hook every file it opens outside its case folder and the
Python installation and repository, and runs ``core.cli.main.main(argv)`` in-process. The parent kills a
child that outlives the wall-clock ceiling. A canary file outside the case folder holds a random token that
must never appear in any output.

Each case ends as one OUTCOME: "result", "rejected" (exit status 2 and one-line messages), or one or more
FAILURES: "internal error", "hang", "memory cap", "warning", "file outside", "bad message".
"""

from __future__ import annotations

import faulthandler
import io
import json
import os
import resource
import secrets
import select
import shutil
import signal
import sys
import tempfile
import time
import traceback
import warnings
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Self

import meshio.vtk
import meshio.vtu
import netCDF4
import numexpr
import scipy.ndimage
import scipy.spatial

import core.analysis.classify as classify_module
import core.cli.check
import core.cli.classify
import core.cli.probe
import core.cli.trace
from core.cli.main import main as cli_main
from tests.ceilings import HANG_CEILING_S
from tests.fuzz.cases import CANARY_PLACEHOLDER, CANARY_UP_PLACEHOLDER, Case

# Every command the cases run, and the libraries core imports only when a command needs them (data formats,
# pockets), are imported here, before the forks: a child then starts in milliseconds.
_PRELOADED = (core.cli.check, core.cli.classify, core.cli.probe, core.cli.trace, meshio.vtk, meshio.vtu, netCDF4,
              scipy.ndimage, scipy.spatial)

__all__ = ["CASE_CEILING_S", "FAILURES", "MEMORY_CAP_BYTES", "Outcome", "Workshop"]

# Exit statuses the command line documents (core.cli.options): 0 done, 2 bad input.
DOCUMENTED_EXIT_STATUSES = (0, 2)
FAILURES = ("internal error", "hang", "memory cap", "warning", "file outside", "bad message")
# A case is one small command (grids of at most 16 x 16 nodes); only a runaway one comes near this ceiling,
# a tenth of the suite's hang ceiling, even on a loaded machine.
CASE_CEILING_S = HANG_CEILING_S / 10
# Address space a case may add to what the parent already maps (the libraries); a data file or request that
# needs more is a "memory cap" failure.
MEMORY_CAP_BYTES = 1 << 30
_OUTPUT_LIMIT = 20_000
_CONTROL = {chr(code) for code in (*range(32), 127)} - {"\n"}


@dataclass
class Outcome:
    """How one case ended: ``outcome`` is "result" or "rejected", or the first of ``failures``."""

    case: Case
    outcome: str
    failures: tuple[str, ...] = ()
    status: int | None = None
    stdout: str = ""
    stderr: str = ""
    details: list[str] = field(default_factory=list)
    seconds: float = 0.0

    @property
    def failed(self) -> bool:
        return bool(self.failures)

    def summary(self, limit: int = 400) -> str:
        """One line: the failures, the first details and how to reproduce the case."""
        said = "; ".join(self.details)[:200] or (self.stderr.strip().splitlines() or [""])[0][:200]
        text = f"{', '.join(self.failures) or self.outcome}: {said} <- {self.case.reproducer()}"
        return text if len(text) <= limit else text[: limit - 3] + "..."


def _memory_in_use() -> int:
    """Bytes of address space this process maps now (VmSize), the base the child's cap is added to."""
    with open("/proc/self/status") as status:
        for line in status:
            if line.startswith("VmSize:"):
                return int(line.split()[1]) * 1024
    return 0


class Workshop:
    """A temporary folder holding the canary file and one folder per case; runs cases in forked children."""

    def __init__(self, *, ceiling_s: float = CASE_CEILING_S, memory_cap: int = MEMORY_CAP_BYTES,
                 keep: bool = False) -> None:
        self.root = Path(tempfile.mkdtemp(prefix="mixtype-fuzz-")).resolve()
        self.token = "k" + secrets.token_hex(8)
        outside = self.root / "outside"
        outside.mkdir()
        self.canary = outside / "secret.csv"
        # A usable CSV, so a reader that should never have opened it would show its column in a result.
        self.canary.write_text(f"# {self.token}\nx,y,{self.token}\n0,0,1\n1,0,2\n0,1,3\n1,1,4\n2,2,5\n")
        self.cases = self.root / "cases"
        self.cases.mkdir()
        self.ceiling_s = ceiling_s
        self.memory_cap = memory_cap
        self.keep = keep
        self.count = 0
        numexpr.set_num_threads(1)
        roots = {sys.prefix, sys.base_prefix, sys.exec_prefix, str(Path(core.cli.check.__file__).parents[2]),
                 "/dev", "/proc", "/sys"}
        roots |= {entry for entry in sys.path if entry and os.path.isdir(entry) and entry != "/"}
        self.allowed = tuple(sorted({os.path.realpath(r) for r in roots if r} - {"/", "/tmp"}))

    def close(self) -> None:
        if not self.keep:
            shutil.rmtree(self.root, ignore_errors=True)

    def __enter__(self) -> Self:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    # -- one case ------------------------------------------------------------------------------------------
    def _substituted(self, data: bytes | str, folder: Path) -> bytes | str:
        up = os.path.relpath(self.canary, folder)
        if isinstance(data, str):
            return data.replace(CANARY_UP_PLACEHOLDER, up).replace(CANARY_PLACEHOLDER, str(self.canary))
        return data.replace(CANARY_UP_PLACEHOLDER.encode(), up.encode()).replace(
            CANARY_PLACEHOLDER.encode(), str(self.canary).encode())

    def run(self, case: Case, command: Callable[..., int] = cli_main) -> Outcome:
        """Run ``case`` in a forked child and classify how it ended.

        ``command(argv, out=, err=) -> exit status`` is the command line's main (another one only for the
        harness's own tests)."""
        self.count += 1
        folder = self.cases / str(self.count)
        folder.mkdir()
        for name, data in case.files:
            target = folder / name
            target.parent.mkdir(parents=True, exist_ok=True)
            target.write_bytes(self._substituted(data, folder))
        argv = [self._substituted(word, folder) for word in case.argv]
        started = time.monotonic()
        try:
            report, died, hung = self._fork(argv, folder, command)
        finally:
            if not self.keep:
                shutil.rmtree(folder, ignore_errors=True)
        outcome = _classified(case, report, died, hung, self.token)
        outcome.seconds = time.monotonic() - started
        return outcome

    def _fork(self, argv: list[str], folder: Path, command: Callable[..., int]) -> tuple[dict, int | None, bool]:
        """(the child's report, the signal that killed it or None, whether the ceiling was reached)."""
        reading, writing = os.pipe()
        stray = tempfile.TemporaryFile(dir=self.root)  # noqa: SIM115 - closed below, after the child ends
        cap = _memory_in_use() + self.memory_cap
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", DeprecationWarning)  # "fork() of a multi-threaded process"
            pid = os.fork()
        if pid == 0:  # the child never returns
            os.close(reading)
            _child(command, argv, folder, writing, stray.fileno(), cap, self.allowed, self.token)
        os.close(writing)
        chunks, hung = [], False
        deadline = time.monotonic() + self.ceiling_s
        while True:
            left = deadline - time.monotonic()
            if left <= 0:
                hung = True
                break
            ready, _, _ = select.select([reading], [], [], left)
            if ready:
                chunk = os.read(reading, 1 << 16)
                if not chunk:
                    break
                chunks.append(chunk)
        if hung:
            os.kill(pid, signal.SIGKILL)
        _, wait_status = os.waitpid(pid, 0)
        os.close(reading)
        stray.seek(0)
        stray_text = stray.read(_OUTPUT_LIMIT).decode("utf-8", "replace")
        stray.close()
        died = os.WTERMSIG(wait_status) if os.WIFSIGNALED(wait_status) and not hung else None
        try:
            report = json.loads(b"".join(chunks).decode("utf-8", "replace")) if chunks else {}
        except json.JSONDecodeError:
            report = {}
        if stray_text:
            report["stray"] = report.get("stray", "") + stray_text
        return report, died, hung


def _child(command: Callable[..., int], argv: list[str], folder: Path, writing: int, stray: int, cap: int, allowed: tuple[str, ...],
           token: str) -> None:
    """Run the command in this forked child; write a JSON report to ``writing`` and exit."""
    report: dict = {}
    try:
        faulthandler.disable()   # a crash is reported by its signal, not by a traceback on the parent's stderr
        os.chdir(folder)
        classify_module._POOL = None   # the parent's thread pool has no threads in a forked child
        resource.setrlimit(resource.RLIMIT_AS, (cap, cap))
        os.dup2(stray, 1)
        os.dup2(stray, 2)
        sys.stdout = sys.stderr = stray_python = io.StringIO()
        case_folder = os.path.realpath(folder)
        roots = (case_folder, *allowed)
        outside: list[str] = []

        def audit(event: str, args: tuple) -> None:
            if event != "open" or not args or isinstance(args[0], int) or args[0] is None:
                return
            try:
                path = os.path.realpath(os.path.join(case_folder, os.fsdecode(args[0])))
            except (ValueError, OSError, TypeError):
                outside.append(repr(args[0])[:200])
                return
            if not any(path == root or path.startswith(root + os.sep) for root in roots):
                outside.append(path[:200])

        out, err = io.StringIO(), io.StringIO()
        with warnings.catch_warnings(record=True) as caught:
            warnings.resetwarnings()
            warnings.simplefilter("always")
            sys.addaudithook(audit)
            try:
                report["status"] = command(argv, out=out, err=err)
            except BaseException as error:  # noqa: BLE001 - what escaped the command line is the finding
                report["escaped"] = f"{type(error).__name__}: {str(error)[:300]}"
                report["traceback"] = traceback.format_exc()[-3000:]
        texts = (out.getvalue(), err.getvalue(), stray_python.getvalue())
        report["leaked"] = any(token in text for text in texts)
        report["stdout"], report["stderr"], report["stray"] = (text[:_OUTPUT_LIMIT] for text in texts)
        report["warnings"] = [f"{w.category.__name__}: {str(w.message)[:200]} ({Path(w.filename).name}:"
                              f"{w.lineno})" for w in caught[:20]]
        report["outside"] = sorted(set(outside))[:20]
        os.write(writing, json.dumps(report).encode())
    except MemoryError:
        os.write(writing, b'{"escaped": "MemoryError: while reporting"}')
    except BaseException as error:  # noqa: BLE001
        os.write(writing, json.dumps({"escaped": f"harness: {type(error).__name__}: {error}"}).encode())
    finally:
        os._exit(0)


def _message_problems(status: int | None, stdout: str, stderr: str) -> list[str]:
    """Messages that are not one clean line each: stderr lines without the 'mixtype: ' prefix, raw control
    characters, a problem in a --json document holding a line break or a control character."""
    problems = []
    for line in stderr.splitlines():
        if not line.startswith("mixtype: "):
            problems.append(f"stderr line without 'mixtype: ': {line[:80]!r}")
        if any(ch in _CONTROL for ch in line):
            problems.append(f"raw control character in a message: {line[:80]!r}")
    if status == 2 and not stderr.strip() and '"problems"' not in stdout:
        problems.append("exit status 2 without a message")
    try:
        document = json.loads(stdout) if stdout.lstrip().startswith("{") else None
    except json.JSONDecodeError:
        document = None
    if isinstance(document, dict):
        data = document.get("data")
        listed = document.get("problems") or (data.get("problems", []) if isinstance(data, dict) else [])
        for problem in listed if isinstance(listed, list) else []:
            if isinstance(problem, str) and any(ch in _CONTROL or ch == "\n" for ch in problem):
                problems.append(f"a problem with a line break or control character: {problem[:80]!r}")
    return problems


def _classified(case: Case, report: dict, died: int | None, hung: bool, token: str) -> Outcome:
    status = report.get("status")
    stdout, stderr = report.get("stdout", ""), report.get("stderr", "")
    everything = stdout + stderr + report.get("escaped", "")
    failures: list[str] = []
    details: list[str] = []
    if hung:
        failures.append("hang")
        details.append("killed at the wall-clock ceiling")
    memory = "MemoryError" in everything
    if memory:
        failures.append("memory cap")
        details.append("MemoryError under the address-space cap")
    if died is not None and not hung:
        failures.append("internal error")
        details.append(f"the child died of signal {signal.Signals(died).name}")
    elif not hung and not memory and (
            "escaped" in report or "internal error" in everything or "Traceback" in everything
            or (status is not None and status not in DOCUMENTED_EXIT_STATUSES) or status is None):
        failures.append("internal error")
        details.append(report.get("escaped") or (stderr.strip().splitlines() or [f"exit status {status}"])[-1])
    if report.get("warnings") or report.get("stray"):
        failures.append("warning")
        details.extend(report.get("warnings", [])[:3])
        if report.get("stray"):
            details.append(f"printed outside the command's streams: {report['stray'][:120]!r}")
    if report.get("outside") or report.get("leaked") or token in everything:
        failures.append("file outside")
        if report.get("outside"):
            details.append(f"opened {report['outside'][0]}")
        if report.get("leaked") or token in everything:
            details.append("the canary file's contents appear in the output")
    bad = _message_problems(status, stdout, stderr) if status is not None else []
    if bad:
        failures.append("bad message")
        details.extend(bad[:2])
    outcome = failures[0] if failures else ("result" if status == 0 else "rejected")
    return Outcome(case, outcome, tuple(dict.fromkeys(failures)), status, stdout, stderr, details)
