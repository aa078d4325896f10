"""Reading and writing Mixtype project files (``*.mixtype.json``): strict on the way in, atomic on the way out.

Reading refuses oversized files, text that is not UTF-8, invalid JSON, NaN/Infinity literals and repeated
keys before the data reach the checks of core.project.codec (format version, schema, meaning). Expressions
in a file are text for the whitelist parser, never code. Writing validates the project the same way first
(a file Mixtype writes is always one it can read back), renders the keys in a fixed order with floats as
their shortest exact repr, and replaces the file atomically keeping the previous version beside it.

The file layout is documented by resources/schema/mixtype-project-v<N>.schema.json.
"""

from __future__ import annotations

import json
import os
from dataclasses import replace
from datetime import datetime
from pathlib import Path

from core.project.codec import ProjectError, project_from_dict, project_to_dict
from core.project.form_checks import NonFiniteNumber, RepeatedKeys
from core.project.migrate import MigrationError
from core.project.migrate import migrate as _migrate
from core.project.model import PROJECT_SUFFIX, Project
from core.project.safe_write import BACKUP_SUFFIX, write_file_atomically
from core.project.schema import CURRENT_FORMAT_VERSION

__all__ = [
    "BACKUP_SUFFIX",
    "CURRENT_FORMAT_VERSION",
    "MAX_FILE_BYTES",
    "PROJECT_SUFFIX",
    "ProjectError",
    "dumps_project",
    "load_project",
    "loads_project",
    "migrate",
    "project_from_dict",
    "project_to_dict",
    "save_project",
]

MAX_FILE_BYTES = 16 * 1024 * 1024
_MAX_INTEGER_DIGITS = 400
_INLINE_WIDTH = 100


def migrate(data: dict, *, source: str = "<data>") -> dict:
    """A copy of parsed file data brought to the current format version (see core.project.migrate).

    Raises ProjectError for data that are not a project, or that come from a newer Mixtype.
    """
    try:
        return _migrate(data)
    except MigrationError as error:
        raise ProjectError([f"{source}: {error.path}: {error.message}"]) from None


# -- reading ---------------------------------------------------------------------------------------------
def _object(pairs: list[tuple[str, object]]) -> dict:
    result = dict(pairs)
    if len(result) == len(pairs):
        return result
    marked = RepeatedKeys(result)
    seen: set[str] = set()
    repeated: set[str] = set()
    for key, _ in pairs:
        (repeated if key in seen else seen).add(key)
    marked.repeated = tuple(sorted(repeated))
    return marked


def _integer(text: str) -> int | NonFiniteNumber:
    return int(text) if len(text.lstrip("-")) <= _MAX_INTEGER_DIGITS else NonFiniteNumber(text)


def _float(text: str) -> float | NonFiniteNumber:
    value = float(text)
    return value if value - value == 0.0 else NonFiniteNumber(text)


def _parse(text: str, source: str) -> object:
    if len(text) > MAX_FILE_BYTES:
        raise ProjectError([(f"{source}: the text is longer than {MAX_FILE_BYTES} characters, the limit for "
                            "project files")])
    if not text.strip():
        raise ProjectError([f"{source}: the file is empty"])
    try:
        return json.loads(text, object_pairs_hook=_object, parse_constant=NonFiniteNumber,
                          parse_int=_integer, parse_float=_float)
    except json.JSONDecodeError as error:
        raise ProjectError([(f"{source}: line {error.lineno}, column {error.colno}: "
                            f"not valid JSON ({error.msg})")]) from None
    except RecursionError:
        raise ProjectError([f"{source}: the JSON is nested too deeply"]) from None
    except ValueError as error:  # e.g. Python's own limit on integer digits
        raise ProjectError([f"{source}: not valid JSON ({str(error)[:120]})"]) from None


def loads_project(text: str | bytes, *, source: str = "<text>") -> Project:
    """A Project from the text of a project file; ProjectError lists every problem as SOURCE: PATH: message."""
    if isinstance(text, bytes | bytearray):
        text = _decode(bytes(text), source)
    return project_from_dict(_parse(text, source), source=source)


def _decode(data: bytes, source: str) -> str:
    if len(data) > MAX_FILE_BYTES:
        raise ProjectError([(f"{source}: the file is larger than {MAX_FILE_BYTES // 2**20} MiB, the limit for "
                            "project files")])
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        raise ProjectError([f"{source}: byte {error.start}: the file is not UTF-8 text"]) from None


def _read_bytes(path: Path, source: str) -> bytes:
    try:
        with open(path, "rb") as stream:
            size = os.fstat(stream.fileno()).st_size
            if size > MAX_FILE_BYTES:
                raise ProjectError([(f"{source}: the file is {size} bytes, more than the {MAX_FILE_BYTES // 2**20}"
                                    " MiB allowed for project files")])
            return stream.read(MAX_FILE_BYTES + 1)
    except OSError as error:
        reason = error.strerror or type(error).__name__
        raise ProjectError([f"{source}: cannot read the file ({reason})"]) from None


def load_project(path: str | os.PathLike) -> Project:
    """The project stored at ``path`` (any supported format version, migrated in memory)."""
    source = str(path)
    return loads_project(_read_bytes(Path(path), source), source=source)


# -- writing ---------------------------------------------------------------------------------------------
def _render(value: object, indent: str = "") -> str:
    """JSON text: objects and lists of objects on several lines, short flat items on one line."""
    flat = json.dumps(value, ensure_ascii=False, allow_nan=False)
    if not isinstance(value, dict | list) or (len(flat) + len(indent) <= _INLINE_WIDTH and _is_flat(value)):
        return flat
    inner = indent + "  "
    if isinstance(value, list):
        items = [inner + _render(item, inner) for item in value]
        return "[\n" + ",\n".join(items) + "\n" + indent + "]"
    items = [inner + json.dumps(k, ensure_ascii=False) + ": " + _render(v, inner) for k, v in value.items()]
    return "{\n" + ",\n".join(items) + "\n" + indent + "}"


def _is_flat(value: dict | list) -> bool:
    """No nested objects; lists of scalars inside count as flat."""
    items = value.values() if isinstance(value, dict) else value
    return all(not isinstance(v, dict) and not (isinstance(v, list) and any(isinstance(i, dict | list) for i in v))
               for v in items)


def dumps_project(project: Project) -> str:
    """The text of the project's file. The project is checked as a file would be (ProjectError if not valid).

    The same project always gives the same text: keys in a fixed order, floats as their shortest exact repr.
    """
    data = project_to_dict(project)
    project_from_dict(data, source="<project>")
    text = _render(data) + "\n"
    if len(text.encode("utf-8")) > MAX_FILE_BYTES:
        raise ProjectError([f"<project>: the project would take more than {MAX_FILE_BYTES // 2**20} MiB"])
    return text


def _stored_project(path: Path) -> tuple[Project | None, bytes | None]:
    """The project currently at ``path`` and its bytes, (None, None) when there is none or it is unreadable."""
    try:
        data = _read_bytes(path, str(path))
        return loads_project(data, source=str(path)), data
    except ProjectError:
        return None, None


def save_project(project: Project, path: str | os.PathLike, *, now: datetime | None = None,
                 backup: bool = True) -> Project:
    """Write ``project`` to ``path`` atomically and return the project as written.

    The modification time is set to ``now`` (default: the current UTC time) when no valid project file is
    at ``path`` or its content (everything but metadata) differs; otherwise the project's metadata are kept,
    so saving an unchanged project again writes identical bytes (and then leaves the file alone).
    ``backup`` keeps the replaced file as NAME.backup beside it. Raises ProjectError for a project that does
    not validate (nothing is written) and OSError when the file system refuses (the old file is untouched).
    """
    path = Path(path)
    stored, stored_bytes = _stored_project(path)
    written = project
    if stored is None or not stored.content_equals(project):
        written = replace(project, metadata=project.metadata.touched(now))
    data = dumps_project(written).encode("utf-8")
    if data != stored_bytes:
        write_file_atomically(path, data, backup=backup)
    return written
