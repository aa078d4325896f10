"""Where Mixtype's bundled files are: equation templates, demo projects with their data, project schemas.

The repository keeps them in its top-level resources/ folder; a built wheel installs that folder as the
package ``mixtype_resources`` (mapped in pyproject.toml), found here with importlib.resources. When core
is imported from a source checkout (pyproject.toml beside it), the checkout's own resources/ folder wins:
several checkouts sharing one interpreter then each read their own files, and
``python -m core.project.schema`` writes into the repository.
"""

from __future__ import annotations

import functools
import importlib.resources
from pathlib import Path

import core

__all__ = ["BUNDLED_PACKAGE", "bundled_path", "bundled_root", "find_bundled_root", "source_resources_folder"]

BUNDLED_PACKAGE = "mixtype_resources"


def source_resources_folder(core_folder: Path | None = None) -> Path | None:
    """The resources/ folder of the source checkout holding ``core_folder`` (default: the imported core).

    None when core was installed from a wheel (no pyproject.toml beside it).
    """
    root = (core_folder or Path(core.__file__).resolve().parent).parent
    folder = root / "resources"
    if (root / "pyproject.toml").is_file() and (folder / "__init__.py").is_file():
        return folder
    return None


def find_bundled_root(core_folder: Path, *, package: str = BUNDLED_PACKAGE) -> Path:
    """The folder of bundled files for the core package in ``core_folder``.

    The checkout's resources/ folder when there is one, else the installed ``package`` as a folder on disk
    (wheels install plain files). When neither exists, the place the package would be, so that callers
    report a missing file with a path rather than failing here.
    """
    checkout = source_resources_folder(core_folder)
    if checkout is not None:
        return checkout
    try:
        installed = importlib.resources.files(package)
    except ModuleNotFoundError:
        return core_folder.parent / package
    if isinstance(installed, Path):
        return installed
    return core_folder.parent / package  # a zipped install: not supported, reported as missing files


@functools.cache
def bundled_root() -> Path:
    """The folder of bundled files for the running Mixtype (looked up once)."""
    return find_bundled_root(Path(core.__file__).resolve().parent)


def bundled_path(*parts: str) -> Path:
    """A bundled file or folder, e.g. ``bundled_path("templates")`` or ``bundled_path("demo", "data")``."""
    return bundled_root().joinpath(*parts)
