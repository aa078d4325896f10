"""Whether Qt can start, decided before it is imported: fake environments, plugin folders and ldd outputs."""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

from gui.platform_check import (
    install_hint,
    missing_libraries,
    offscreen_problem,
    platform_candidates,
    platform_problem,
    run_ldd,
    window_problem,
)
from tests.ceilings import HANG_CEILING_S

ROOT = Path(__file__).resolve().parents[2]

# The shape of real ldd output (Debian 12, PySide6 6.11), including a library reported twice.
LDD_XCB_MISSING = """\
\tlinux-vdso.so.1 (0x00007ffd6c5f2000)
\tlibQt6XcbQpa.so.6 => /site/PySide6/Qt/plugins/platforms/../../lib/libQt6XcbQpa.so.6 (0x00007f6b8f0a0000)
\tlibxcb-cursor.so.0 => not found
\tlibxkbcommon-x11.so.0 => not found
\tlibxcb-cursor.so.0 => not found
\tlibc.so.6 => /lib/x86_64-linux-gnu/libc.so.6 (0x00007f6b8e400000)
"""
LDD_COMPLETE = "\tlibc.so.6 => /lib/x86_64-linux-gnu/libc.so.6 (0x00007f6b8e400000)\n"


@pytest.fixture
def plugins(tmp_path) -> Path:
    """A platforms folder holding (empty stand-ins for) the xcb, wayland and offscreen plugins."""
    folder = tmp_path / "platforms"
    folder.mkdir()
    for name in ("libqxcb.so", "libqwayland.so", "libqoffscreen.so"):
        (folder / name).write_bytes(b"")
    return folder


def fake_ldd(outputs: dict[str, str | None]):
    """An ldd stand-in answering per plugin file name; unknown files have nothing missing."""
    return lambda path: outputs.get(path.name, LDD_COMPLETE)


def linux_window(environ: dict[str, str], folder: Path, outputs: dict[str, str | None]) -> str | None:
    """window_problem on Linux with the plugins in ``folder`` and ldd answering ``outputs``."""
    return window_problem(environ, folders=[folder], ldd=fake_ldd(outputs), system="linux")


def test_missing_libraries_are_read_from_ldd_output_once_each():
    assert missing_libraries(LDD_XCB_MISSING) == ("libxcb-cursor.so.0", "libxkbcommon-x11.so.0")
    assert missing_libraries(LDD_COMPLETE) == ()
    assert missing_libraries(None) == ()


def test_install_hints_name_debian_and_fedora_packages():
    assert install_hint(["libxcb-cursor.so.0", "libxkbcommon-x11.so.0"]) == (
        "(Debian/Ubuntu: sudo apt install libxcb-cursor0 libxkbcommon-x11-0; "
        "Fedora: sudo dnf install xcb-util-cursor libxkbcommon-x11)")
    # Several libraries of one Fedora package name it once; unknown libraries are named without a package.
    assert install_hint(["libxcb-shape.so.0", "libxcb-randr.so.0", "libnothing.so.9"]) == (
        "(Debian/Ubuntu: sudo apt install libxcb-shape0 libxcb-randr0; Fedora: sudo dnf install libxcb)")
    assert install_hint(["libnothing.so.9"]) == "(install the system packages that provide them)"


@pytest.mark.parametrize(("environ", "expected"), [
    ({}, ("xcb",)),
    ({"DISPLAY": ":0"}, ("xcb",)),
    ({"WAYLAND_DISPLAY": "wayland-0"}, ("wayland", "xcb")),
    ({"WAYLAND_DISPLAY": "wayland-0", "XDG_SESSION_TYPE": "x11"}, ("xcb",)),
    ({"QT_QPA_PLATFORM": "offscreen"}, ("offscreen",)),
    ({"QT_QPA_PLATFORM": "wayland;xcb:fontengine=freetype", "DISPLAY": ":0"}, ("wayland", "xcb")),
])
def test_platform_candidates_follow_the_environment(environ, expected):
    assert platform_candidates(environ) == expected


def test_missing_xcb_libraries_are_named_with_their_packages(plugins):
    problem = linux_window({"DISPLAY": ":0"}, plugins, {"libqxcb.so": LDD_XCB_MISSING})
    assert problem == ("Qt's xcb platform needs libxcb-cursor.so.0, libxkbcommon-x11.so.0 "
                       "(Debian/Ubuntu: sudo apt install libxcb-cursor0 libxkbcommon-x11-0; "
                       "Fedora: sudo dnf install xcb-util-cursor libxkbcommon-x11)")


def test_a_window_needs_a_display_unless_a_platform_is_chosen(plugins):
    assert linux_window({}, plugins, {}) == "no display (DISPLAY is not set)"
    assert linux_window({"DISPLAY": ":1"}, plugins, {}) is None
    assert linux_window({"QT_QPA_PLATFORM": "offscreen"}, plugins, {}) is None


def test_no_display_and_missing_libraries_are_both_named(plugins):
    problem = linux_window({}, plugins, {"libqxcb.so": LDD_XCB_MISSING})
    assert problem.startswith("no display (DISPLAY is not set); Qt's xcb platform needs libxcb-cursor.so.0, ")


def test_a_wayland_session_falls_back_to_xcb(plugins):
    wayland_missing = "\tlibwayland-cursor.so.0 => not found\n"
    environ = {"WAYLAND_DISPLAY": "wayland-0", "DISPLAY": ":0"}
    assert linux_window(environ, plugins, {"libqwayland.so": wayland_missing}) is None
    both = linux_window(environ, plugins, {"libqwayland.so": wayland_missing, "libqxcb.so": LDD_XCB_MISSING})
    assert both.startswith("Qt's wayland platform needs libwayland-cursor.so.0 (Debian/Ubuntu: sudo apt "
                           "install libwayland-cursor0; Fedora: sudo dnf install libwayland-cursor); "
                           "Qt's xcb platform needs ")


def test_an_unknown_platform_is_named_with_the_known_ones(plugins):
    problem = linux_window({"QT_QPA_PLATFORM": "cocoa"}, plugins, {})
    assert problem == "Qt has no platform named 'cocoa' (known: offscreen, wayland, xcb)"


def test_unsure_means_no_objection(plugins):
    """Without ldd or without a PySide6 folder nothing is known to be missing: Qt is left to try."""
    assert linux_window({"DISPLAY": ":0"}, plugins, {"libqxcb.so": None}) is None
    assert window_problem({"DISPLAY": ":0"}, folders=[], ldd=fake_ldd({}), system="linux") is None
    assert platform_problem("xcb", {"DISPLAY": ":0"}, [], fake_ldd({})) is None


def test_only_linux_is_checked(plugins):
    ldd = fake_ldd({"libqxcb.so": LDD_XCB_MISSING, "libqoffscreen.so": LDD_XCB_MISSING})
    for system in ("darwin", "win32"):
        assert window_problem({}, folders=[plugins], ldd=ldd, system=system) is None
        assert offscreen_problem({}, folders=[plugins], ldd=ldd, system=system) is None


def test_offscreen_needs_no_display_but_its_libraries(plugins):
    egl_missing = "\tlibEGL.so.1 => not found\n"
    assert offscreen_problem({}, folders=[plugins], ldd=fake_ldd({}), system="linux") is None
    problem = offscreen_problem({}, folders=[plugins], ldd=fake_ldd({"libqoffscreen.so": egl_missing}),
                                system="linux")
    assert problem == ("Qt's offscreen platform needs libEGL.so.1 "
                       "(Debian/Ubuntu: sudo apt install libegl1; Fedora: sudo dnf install libglvnd-egl)")


@pytest.mark.skipif(shutil.which("ldd") is None, reason="needs ldd")
def test_run_ldd_reads_a_real_library():
    output = run_ldd(Path(sys.executable).resolve())
    assert output is not None and "libc.so" in output and missing_libraries(output) == ()
    assert run_ldd(Path("/no/such/ldd/target")) == ""  # ldd runs and reports on stderr


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="the check runs on Linux only")
def test_the_real_plugin_folder_is_found_without_importing_qt():
    script = ("import json, sys; from gui.platform_check import platform_plugin_folders; "
              "folders = platform_plugin_folders({}); "
              "print(json.dumps({'folders': [str(f) for f in folders], "
              "'qt': sorted(m for m in sys.modules if m.startswith(('PySide6', 'shiboken6')))}))")
    completed = subprocess.run([sys.executable, "-c", script], cwd=ROOT, capture_output=True, text=True,
                               check=True, timeout=HANG_CEILING_S)
    found = json.loads(completed.stdout)
    assert found["qt"] == []
    assert any(Path(folder, "libqoffscreen.so").is_file() for folder in found["folders"])
