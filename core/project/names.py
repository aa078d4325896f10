"""Free names for things added to a study: copies of equations and domains, new definitions and parameters.

A Project refuses two equations (or two domains) of the same name, and an equation refuses a definition and a
parameter of the same name; whoever adds one picks the name here, so every part of the program numbers copies
and new rows the same way.
"""

from __future__ import annotations

from collections.abc import Collection

__all__ = ["free_name", "numbered_name"]


def free_name(name: str, taken: Collection[str]) -> str:
    """``name`` when it is not in ``taken``, else the first of ``name (2)``, ``name (3)``, ... that is not."""
    if name not in taken:
        return name
    number = 2
    while f"{name} ({number})" in taken:
        number += 1
    return f"{name} ({number})"


def numbered_name(prefix: str, taken: Collection[str]) -> str:
    """The first of ``prefix1``, ``prefix2``, ... not in ``taken`` (names of new definitions and parameters)."""
    number = 1
    while f"{prefix}{number}" in taken:
        number += 1
    return f"{prefix}{number}"
