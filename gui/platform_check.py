"""Can Qt start here? Asked before Qt is imported, so a missing display or library gives one clear line.

Qt aborts the whole process (SIGABRT) when no platform plugin can load, typically on a fresh Linux desktop
that lacks the xcb libraries pip cannot install (libxcb-cursor0 and friends). This module decides which
platforms Qt will try, finds their plugins in the PySide6 folder without importing any Qt module, asks ``ldd``
which shared libraries they cannot find, and names the system packages that provide them. Pure Python; only
Linux is checked (macOS and Windows wheels carry everything Qt needs). Where it cannot tell (no ``ldd``, no
PySide6 folder) it says nothing and lets Qt try.
"""

from __future__ import annotations

import importlib.util
import os
import re
import subprocess
import sys
from collections.abc import Callable, Mapping, Sequence
from pathlib import Path

__all__ = [
    "SYSTEM_PACKAGES",
    "LddRunner",
    "install_hint",
    "missing_libraries",
    "offscreen_problem",
    "platform_candidates",
    "platform_plugin_folders",
    "platform_problem",
    "run_ldd",
    "window_problem",
]

LddRunner = Callable[[Path], str | None]
"""Runs ``ldd`` on a file and returns its output, or None when ldd cannot run."""

# Shared library -> (Debian/Ubuntu package, Fedora package). Debian names checked with apt-cache on Debian 12;
# Fedora names from memory. A library not listed is named as it is, without a package.
SYSTEM_PACKAGES: dict[str, tuple[str, str]] = {
    "libxcb-cursor.so.0": ("libxcb-cursor0", "xcb-util-cursor"),
    "libxcb-icccm.so.4": ("libxcb-icccm4", "xcb-util-wm"),
    "libxcb-image.so.0": ("libxcb-image0", "xcb-util-image"),
    "libxcb-keysyms.so.1": ("libxcb-keysyms1", "xcb-util-keysyms"),
    "libxcb-render-util.so.0": ("libxcb-render-util0", "xcb-util-renderutil"),
    "libxcb-util.so.1": ("libxcb-util1", "xcb-util"),
    "libxcb-randr.so.0": ("libxcb-randr0", "libxcb"),
    "libxcb-shape.so.0": ("libxcb-shape0", "libxcb"),
    "libxcb-shm.so.0": ("libxcb-shm0", "libxcb"),
    "libxcb-sync.so.1": ("libxcb-sync1", "libxcb"),
    "libxcb-xfixes.so.0": ("libxcb-xfixes0", "libxcb"),
    "libxcb-xinerama.so.0": ("libxcb-xinerama0", "libxcb"),
    "libxcb-xinput.so.0": ("libxcb-xinput0", "libxcb"),
    "libxcb-xkb.so.1": ("libxcb-xkb1", "libxcb"),
    "libxcb-render.so.0": ("libxcb-render0", "libxcb"),
    "libxcb-glx.so.0": ("libxcb-glx0", "libxcb"),
    "libxcb.so.1": ("libxcb1", "libxcb"),
    "libxkbcommon-x11.so.0": ("libxkbcommon-x11-0", "libxkbcommon-x11"),
    "libxkbcommon.so.0": ("libxkbcommon0", "libxkbcommon"),
    "libX11-xcb.so.1": ("libx11-xcb1", "libX11-xcb"),
    "libX11.so.6": ("libx11-6", "libX11"),
    "libXau.so.6": ("libxau6", "libXau"),
    "libXdmcp.so.6": ("libxdmcp6", "libXdmcp"),
    "libSM.so.6": ("libsm6", "libSM"),
    "libICE.so.6": ("libice6", "libICE"),
    "libEGL.so.1": ("libegl1", "libglvnd-egl"),
    "libGL.so.1": ("libgl1", "libglvnd-glx"),
    "libGLX.so.0": ("libglx0", "libglvnd-glx"),
    "libOpenGL.so.0": ("libopengl0", "libglvnd-opengl"),
    "libGLdispatch.so.0": ("libglvnd0", "libglvnd"),
    "libfontconfig.so.1": ("libfontconfig1", "fontconfig"),
    "libfreetype.so.6": ("libfreetype6", "freetype"),
    "libdbus-1.so.3": ("libdbus-1-3", "dbus-libs"),
    "libglib-2.0.so.0": ("libglib2.0-0", "glib2"),
    "libgthread-2.0.so.0": ("libglib2.0-0", "glib2"),
    "libwayland-client.so.0": ("libwayland-client0", "libwayland-client"),
    "libwayland-cursor.so.0": ("libwayland-cursor0", "libwayland-cursor"),
    "libwayland-egl.so.1": ("libwayland-egl1", "libwayland-egl"),
}

_DISPLAY_VARIABLE = {"xcb": "DISPLAY", "wayland": "WAYLAND_DISPLAY"}
_PLUGIN_FILES = {"wayland": ("libqwayland.so", "libqwayland-generic.so", "libqwayland-egl.so")}
_NOT_FOUND = re.compile(r"^\s*(\S+)\s+=>\s+not found\s*$", re.MULTILINE)


def run_ldd(path: Path) -> str | None:
    """``ldd PATH``'s output (stdout), or None when ldd is missing or fails to run."""
    try:
        completed = subprocess.run(["ldd", str(path)], capture_output=True, text=True, timeout=30,
                                   check=False)
    except (OSError, subprocess.SubprocessError):
        return None
    return completed.stdout


def missing_libraries(ldd_output: str | None) -> tuple[str, ...]:
    """The libraries ldd reports as 'not found', each once, in order (none when ldd did not run)."""
    if not ldd_output:
        return ()
    return tuple(dict.fromkeys(_NOT_FOUND.findall(ldd_output)))


def install_hint(libraries: Sequence[str]) -> str:
    """Which system packages provide ``libraries``: '(Debian/Ubuntu: sudo apt install ...; Fedora: ...)'."""
    known = [SYSTEM_PACKAGES[name] for name in libraries if name in SYSTEM_PACKAGES]
    if not known:
        return "(install the system packages that provide them)"
    debian = " ".join(dict.fromkeys(packages[0] for packages in known))
    fedora = " ".join(dict.fromkeys(packages[1] for packages in known))
    return f"(Debian/Ubuntu: sudo apt install {debian}; Fedora: sudo dnf install {fedora})"


def platform_candidates(environ: Mapping[str, str]) -> tuple[str, ...]:
    """The Qt platforms that will be tried on Linux, in order: QT_QPA_PLATFORM's list, else Qt's default."""
    chosen = environ.get("QT_QPA_PLATFORM", "").strip()
    if chosen:  # 'wayland;xcb' lists fallbacks; 'xcb:option=value' carries options
        names = (entry.split(":", 1)[0].strip() for entry in chosen.split(";"))
        return tuple(name for name in names if name)
    if environ.get("WAYLAND_DISPLAY") and environ.get("XDG_SESSION_TYPE") != "x11":
        return ("wayland", "xcb")
    return ("xcb",)


def platform_plugin_folders(environ: Mapping[str, str]) -> tuple[Path, ...]:
    """Folders that may hold Qt platform plugins: the environment's, then PySide6's (found without import)."""
    folders: list[Path] = []
    if environ.get("QT_QPA_PLATFORM_PLUGIN_PATH"):
        folders.append(Path(environ["QT_QPA_PLATFORM_PLUGIN_PATH"]))
    folders += [Path(entry) / "platforms" for entry in environ.get("QT_PLUGIN_PATH", "").split(os.pathsep)
                if entry]
    try:
        spec = importlib.util.find_spec("PySide6")  # a top-level spec: locates the package, imports nothing
    except (ImportError, ValueError):
        spec = None
    if spec is not None and spec.submodule_search_locations:
        folders += [Path(entry) / "Qt" / "plugins" / "platforms" for entry in spec.submodule_search_locations]
    return tuple(folder for folder in folders if folder.is_dir())


def _plugin_file(name: str, folders: Sequence[Path]) -> Path | None:
    for folder in folders:
        for file_name in _PLUGIN_FILES.get(name, (f"libq{name}.so",)):
            if (folder / file_name).is_file():
                return folder / file_name
    return None


def platform_problem(name: str, environ: Mapping[str, str], folders: Sequence[Path],
                     ldd: LddRunner = run_ldd) -> str | None:
    """Why Qt's platform ``name`` cannot start, in a few words, or None when it can (or when unsure)."""
    problems: list[str] = []
    variable = _DISPLAY_VARIABLE.get(name)
    if variable is not None and not environ.get(variable):
        problems.append(f"no display ({variable} is not set)")
    plugin = _plugin_file(name, folders)
    if plugin is None:
        if folders:  # PySide6 found, but not this plugin: Qt would abort on it
            known = sorted(p.name.removeprefix("libq").removesuffix(".so") for f in folders
                           for p in f.glob("libq*.so"))
            problems.append(f"Qt has no platform named {name!r} (known: {', '.join(known)})")
    else:
        missing = missing_libraries(ldd(plugin))
        if missing:
            problems.append(f"Qt's {name} platform needs {', '.join(missing)} {install_hint(missing)}")
    return "; ".join(problems) or None


def window_problem(environ: Mapping[str, str] | None = None, *, folders: Sequence[Path] | None = None,
                   ldd: LddRunner = run_ldd, system: str = sys.platform) -> str | None:
    """Why no Qt platform can show the window here (one line), or None when one can.

    A window needs a display: with none (no DISPLAY, no WAYLAND_DISPLAY) this is a problem, not a reason to
    open an invisible window offscreen; an explicit QT_QPA_PLATFORM (tests use offscreen) is obeyed. When
    Qt has fallbacks (wayland, then xcb) and all fail, every one's problem is named.
    """
    if not system.startswith("linux"):
        return None
    environ = os.environ if environ is None else environ
    folders = platform_plugin_folders(environ) if folders is None else folders
    problems = [platform_problem(name, environ, folders, ldd) for name in platform_candidates(environ)]
    if not problems or any(problem is None for problem in problems):
        return None
    return "; ".join(dict.fromkeys(problems))


def offscreen_problem(environ: Mapping[str, str] | None = None, *, folders: Sequence[Path] | None = None,
                      ldd: LddRunner = run_ldd, system: str = sys.platform) -> str | None:
    """Why Qt cannot start even offscreen (``render``), or None when it can."""
    if not system.startswith("linux"):
        return None
    environ = os.environ if environ is None else environ
    folders = platform_plugin_folders(environ) if folders is None else folders
    return platform_problem("offscreen", environ, folders, ldd)
