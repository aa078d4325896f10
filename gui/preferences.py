"""User preferences (recent files, window layout, last folder), kept apart from any project.

Stored as an INI file through QSettings. The folder is ``$MIXTYPE_SETTINGS_DIR`` when that is set (tests point
it at a temporary folder) and the platform's per-user configuration folder otherwise. The autosave recovery
file lives in the same folder.
"""

from __future__ import annotations

import os
from pathlib import Path

from PySide6.QtCore import QSettings, QStandardPaths

__all__ = ["MAX_RECENT", "Preferences", "settings_folder"]

MAX_RECENT = 8


def settings_folder() -> Path:
    """Where preferences and the recovery file live (created on demand)."""
    override = os.environ.get("MIXTYPE_SETTINGS_DIR", "")
    if override:
        folder = Path(override)
    else:
        base = QStandardPaths.writableLocation(QStandardPaths.StandardLocation.GenericConfigLocation)
        folder = Path(base or Path.home() / ".config") / "mixtype"
    folder.mkdir(parents=True, exist_ok=True)
    return folder


class Preferences:
    """Typed access to the preferences file."""

    def __init__(self, folder: Path | None = None) -> None:
        self.folder = Path(folder) if folder is not None else settings_folder()
        self.folder.mkdir(parents=True, exist_ok=True)
        self._settings = QSettings(str(self.folder / "preferences.ini"), QSettings.Format.IniFormat)

    @property
    def recovery_path(self) -> Path:
        """The autosave file: written while a study has unsaved edits, removed on a clean exit."""
        return self.folder / "recovery.mixtype.json"

    def recent_files(self) -> list[str]:
        value = self._settings.value("recent/files", [])
        if isinstance(value, str):
            value = [value] if value else []
        return [str(v) for v in value if str(v)][:MAX_RECENT]

    def add_recent_file(self, path: str | os.PathLike) -> list[str]:
        text = str(Path(path).resolve())
        files = [text] + [f for f in self.recent_files() if f != text]
        self._settings.setValue("recent/files", files[:MAX_RECENT])
        self._settings.sync()
        return files[:MAX_RECENT]

    def clear_recent_files(self) -> None:
        self._settings.setValue("recent/files", [])
        self._settings.sync()

    def last_folder(self) -> str:
        return str(self._settings.value("files/last_folder", str(Path.home())))

    def set_last_folder(self, folder: str) -> None:
        self._settings.setValue("files/last_folder", folder)

    def window_state(self) -> tuple[bytes | None, bytes | None]:
        geometry = self._settings.value("window/geometry")
        state = self._settings.value("window/state")
        return geometry, state

    def set_window_state(self, geometry, state) -> None:
        self._settings.setValue("window/geometry", geometry)
        self._settings.setValue("window/state", state)
        self._settings.sync()
