"""Mixtype's colours: one hue per equation type, two for the characteristic families, all colour-blind safe.

Hues come from the Okabe-Ito set (Okabe & Ito, "Color Universal Design", 2008), a published palette that stays
distinguishable under the common colour-vision deficiencies. Colours are plain hex strings so that both Qt
code and headless exports can use them.
"""

from __future__ import annotations

import numpy as np

from core.analysis.classify import TypeCode

__all__ = [
    "FAMILY_COLOURS",
    "FAMILY_DASHES",
    "HIGHLIGHT_COLOUR",
    "PIN_COLOUR",
    "SEGMENT_COLOUR",
    "TYPE_COLOURS",
    "TYPE_DESCRIPTIONS",
    "TYPE_LINE_COLOUR",
    "hex_to_rgba",
    "type_lookup_table",
]

# One fill colour per TypeCode (elliptic sky blue, hyperbolic orange, parabolic near-black, undefined grey).
TYPE_COLOURS: dict[TypeCode, str] = {
    TypeCode.UNDEFINED: "#B8B8B8",
    TypeCode.ELLIPTIC: "#56B4E9",
    TypeCode.PARABOLIC: "#262626",
    TypeCode.HYPERBOLIC: "#E69F00",
}
TYPE_DESCRIPTIONS: dict[TypeCode, str] = {
    TypeCode.ELLIPTIC: "elliptic (D < 0): no real characteristics",
    TypeCode.HYPERBOLIC: "hyperbolic (D > 0): two real characteristic directions",
    TypeCode.PARABOLIC: "parabolic (D = 0 within tolerance): one double direction",
    TypeCode.UNDEFINED: "undefined: a coefficient is not a finite real number",
}
TYPE_LINE_COLOUR = "#111111"          # type-change lines drawn over the map
FAMILY_COLOURS = {1: "#0072B2", 2: "#009E73"}   # blue, bluish green: both stand out on the hyperbolic orange
FAMILY_DASHES = {1: "solid", 2: "dash"}
PIN_COLOUR = "#CC79A7"                # reddish purple
SEGMENT_COLOUR = "#CC79A7"            # reddish purple, dotted: seed segments are user marks, like pins
HIGHLIGHT_COLOUR = "#D55E00"          # vermillion: the pocket chosen in the pockets table (tint, box, peak)


def hex_to_rgba(colour: str, alpha: int = 255) -> tuple[int, int, int, int]:
    """'#RRGGBB' -> (r, g, b, alpha) integers in 0..255."""
    text = colour.lstrip("#")
    if len(text) != 6:
        raise ValueError(f"colour must look like '#RRGGBB', got {colour!r}")
    return int(text[0:2], 16), int(text[2:4], 16), int(text[4:6], 16), alpha


def type_lookup_table() -> np.ndarray:
    """(4, 4) uint8 RGBA rows indexed by TypeCode value: the discrete colour table of the type map."""
    table = np.zeros((len(TypeCode), 4), dtype=np.uint8)
    for code, colour in TYPE_COLOURS.items():
        table[int(code)] = hex_to_rgba(colour)
    return table
