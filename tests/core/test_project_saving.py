"""Saving never leaves a broken file: kills mid-save, failures, symlinks, modes, backups."""

from __future__ import annotations

import errno
import os
import random
import signal
import stat
import subprocess
import sys
import time
from dataclasses import replace
from datetime import UTC, datetime
from pathlib import Path

import pytest

from core.project import safe_write
from core.project.io import load_project, save_project
from core.project.safe_write import backup_path, leftover_temporaries, write_file_atomically

ROOT = Path(__file__).resolve().parents[2]
SAMPLE = ROOT / "tests" / "data" / "project-v1-all-fields.mixtype.json"
T0 = datetime(2025, 3, 1, 12, 0, 0, tzinfo=UTC)
posix_only = pytest.mark.skipif(os.name != "posix", reason="needs POSIX signals, fork, modes and symlinks")


def _folder_names(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir())


# -- killed while saving -----------------------------------------------------------------------------------
_CHILD = """
import sys
sys.path.insert(0, sys.argv[1])
from core.project.safe_write import write_file_atomically
payloads = [open(p, "rb").read() for p in sys.argv[3:]]
print("ready", flush=True)
while True:
    for data in payloads:
        write_file_atomically(sys.argv[2], data)
"""


@posix_only
def test_a_fresh_process_killed_while_writing_leaves_a_complete_file(tmp_path):
    # payloads of a few MiB make each write long enough for kills to land inside it
    payloads = [bytes([65 + i]) * (3 * 2**20 + i * 4099) for i in range(3)]
    paths = []
    for index, data in enumerate(payloads):
        paths.append(tmp_path / f"payload{index}")
        paths[-1].write_bytes(data)
    folder = tmp_path / "out"
    folder.mkdir()
    target = folder / "study.mixtype.json"
    target.write_bytes(payloads[0])
    rng = random.Random(7)
    for _ in range(12):
        child = subprocess.Popen([sys.executable, "-I", "-c", _CHILD, str(ROOT), str(target), *map(str, paths)],
                                 stdout=subprocess.PIPE)
        assert child.stdout.readline() == b"ready\n"
        time.sleep(rng.uniform(0.0, 0.06))
        child.send_signal(signal.SIGKILL)
        child.wait()
        child.stdout.close()
        assert target.read_bytes() in payloads
        assert backup_path(target).read_bytes() in payloads if backup_path(target).exists() else True
        stray = set(_folder_names(folder)) - {target.name, backup_path(target).name}
        assert stray == {p.name for p in leftover_temporaries(target)}  # only the documented kind
    write_file_atomically(target, payloads[1])
    assert _folder_names(folder) == sorted([target.name, backup_path(target).name]), _folder_names(folder)


@posix_only
def test_save_project_killed_at_random_moments_leaves_the_old_or_the_new_project(tmp_path):
    base = load_project(SAMPLE)
    # large notes make the save long enough to be interrupted at every stage (read, check, write)
    versions = [replace(base, notes=f"version {i}\n" + "z" * 600_000) for i in range(3)]
    target = tmp_path / "study.mixtype.json"
    versions[0] = save_project(versions[0], target, now=T0)
    expected_notes = {v.notes for v in versions}
    rng = random.Random(11)
    for _ in range(18):
        ready_read, ready_write = os.pipe()
        pid = os.fork()
        if pid == 0:  # child: save the versions in turn until killed
            try:
                os.close(ready_read)
                os.write(ready_write, b"r")
                while True:
                    for version in versions:
                        save_project(version, target, now=T0)
            finally:
                os._exit(1)
        os.close(ready_write)
        assert os.read(ready_read, 1) == b"r"
        os.close(ready_read)
        time.sleep(rng.uniform(0.0, 0.15))
        os.kill(pid, signal.SIGKILL)
        os.waitpid(pid, 0)
        assert load_project(target).notes in expected_notes
        if backup_path(target).exists():
            assert load_project(backup_path(target)).notes in expected_notes
        stray = set(_folder_names(tmp_path)) - {target.name, backup_path(target).name}
        assert stray == {p.name for p in leftover_temporaries(target)}
    save_project(versions[1], target, now=T0)
    assert _folder_names(tmp_path) == sorted([target.name, backup_path(target).name])


@posix_only
def test_a_save_killed_right_after_its_backup_leaves_nothing_behind_next_time(tmp_path):
    # the state such a kill leaves: the backup is a hard link to the target itself
    target = tmp_path / "data.json"
    target.write_bytes(b"current")
    os.link(target, backup_path(target))
    write_file_atomically(target, b"next")
    assert target.read_bytes() == b"next" and backup_path(target).read_bytes() == b"current"
    assert _folder_names(tmp_path) == ["data.json", "data.json.backup"]


# -- failures leave the old file -----------------------------------------------------------------------
def _fail_on_call(monkeypatch, name: str, *, call: int = 1, error: int = errno.EIO):
    real = getattr(os, name)
    count = {"n": 0}

    def failing(*args, **kwargs):
        count["n"] += 1
        if count["n"] == call:
            raise OSError(error, os.strerror(error))
        return real(*args, **kwargs)
    monkeypatch.setattr(safe_write.os, name, failing)


@pytest.mark.parametrize("name, call", [("replace", 1), ("replace", 2), ("fsync", 1), ("write", 2), ("link", 1)])
def test_a_failing_step_leaves_the_old_file_and_no_temporary_file(tmp_path, monkeypatch, name, call):
    target = tmp_path / "data.json"
    target.write_bytes(b"old content")
    _fail_on_call(monkeypatch, name, call=call, error=errno.ENOSPC)
    new = b"n" * 3_000_000  # several os.write calls may be needed
    try:
        write_file_atomically(target, new)
        outcome = "written"
    except OSError as error:
        assert error.errno == errno.ENOSPC
        outcome = "failed"
    monkeypatch.undo()
    if name == "link":  # no hard links: the backup is copied instead, and the save succeeds
        assert outcome == "written" and target.read_bytes() == new
        assert backup_path(target).read_bytes() == b"old content"
    elif outcome == "failed":
        assert target.read_bytes() == b"old content"
    else:  # the write loop may finish before its second call
        assert target.read_bytes() == new
    assert leftover_temporaries(target) == []


def test_a_folder_or_a_missing_folder_is_refused(tmp_path):
    with pytest.raises(IsADirectoryError):
        write_file_atomically(tmp_path, b"x")
    with pytest.raises(FileNotFoundError):
        write_file_atomically(tmp_path / "no" / "such.json", b"x")
    assert _folder_names(tmp_path) == []


def test_backup_can_be_turned_off(tmp_path):
    target = tmp_path / "data.json"
    write_file_atomically(target, b"one", backup=False)
    write_file_atomically(target, b"two", backup=False)
    assert _folder_names(tmp_path) == ["data.json"] and target.read_bytes() == b"two"


# -- modes and symlinks ------------------------------------------------------------------------------------
@posix_only
def test_the_mode_of_an_existing_file_is_kept(tmp_path):
    target = tmp_path / "data.json"
    target.write_bytes(b"old")
    for mode in (0o600, 0o640, 0o664, 0o444):
        os.chmod(target, mode)
        write_file_atomically(target, b"new %o" % mode)
        assert stat.S_IMODE(os.stat(target).st_mode) == mode
        assert target.read_bytes() == b"new %o" % mode


@posix_only
def test_a_new_file_gets_the_usual_mode_under_the_umask(tmp_path):
    old = os.umask(0o027)
    try:
        write_file_atomically(tmp_path / "fresh.json", b"x")
    finally:
        os.umask(old)
    assert stat.S_IMODE(os.stat(tmp_path / "fresh.json").st_mode) == 0o640


@posix_only
def test_a_symlink_is_followed_and_stays_a_link(tmp_path):
    real_folder = tmp_path / "real"
    real_folder.mkdir()
    real = real_folder / "study.mixtype.json"
    project = save_project(load_project(SAMPLE), real, now=T0)
    first = tmp_path / "link-to-link.mixtype.json"
    second = tmp_path / "link.mixtype.json"
    second.symlink_to(real)
    first.symlink_to(second.name)  # a relative link to a link
    changed = save_project(replace(project, notes="through the link"), first, now=T0)
    assert first.is_symlink() and os.readlink(first) == second.name
    assert second.is_symlink() and os.readlink(second) == str(real)
    assert load_project(real) == changed
    assert load_project(real_folder / "study.mixtype.json.backup") == project
    assert _folder_names(tmp_path) == ["link-to-link.mixtype.json", "link.mixtype.json", "real"]


@posix_only
def test_a_dangling_symlink_creates_its_target(tmp_path):
    link = tmp_path / "link.json"
    link.symlink_to(tmp_path / "target.json")
    write_file_atomically(link, b"content")
    assert link.is_symlink() and (tmp_path / "target.json").read_bytes() == b"content"
