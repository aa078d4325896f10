"""Text made safe for a terminal: control and invisible formatting characters shown as escapes.

Messages and tables echo what the user typed or a file held (a name, a path, an expression); a raw escape
sequence in them (ESC [2J clears the screen) or a right-to-left override would act on the user's terminal
instead of being read. Everything the command line writes passes through PrintableStream: newlines and tabs
stay, every other control character (C0, DEL, C1) and the bidirectional and zero-width formatting characters
become ``\\xNN`` or ``\\uNNNN``. JSON output is unchanged by it (json.dump escapes control characters itself
and, with its default ASCII output, every other non-ASCII character).
"""

from __future__ import annotations

from typing import TextIO

__all__ = ["PrintableStream", "printable"]

_FORMATTING = (0x00AD, 0x061C, 0x180E, *range(0x200B, 0x2010), *range(0x202A, 0x202F), *range(0x2060, 0x2070),
               0xFEFF)
_ESCAPES = {code: f"\\x{code:02x}" for code in (*range(0x20), *range(0x7F, 0xA0)) if chr(code) not in "\n\t"}
_ESCAPES.update({code: f"\\u{code:04x}" for code in _FORMATTING})


def printable(text: str) -> str:
    """``text`` with control and invisible formatting characters (except newline and tab) escaped."""
    return text.translate(_ESCAPES)


class PrintableStream:
    """A text stream that writes ``printable`` text to the stream it wraps."""

    def __init__(self, stream: TextIO) -> None:
        self._stream = stream

    def write(self, text: str) -> int:
        return self._stream.write(printable(text))

    def writelines(self, lines) -> None:
        for line in lines:
            self.write(line)

    def flush(self) -> None:
        self._stream.flush()

    def __getattr__(self, name: str):             # encoding, isatty, ... of the wrapped stream
        return getattr(self._stream, name)
