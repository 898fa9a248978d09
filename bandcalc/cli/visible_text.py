"""User text made safe to print: nothing in it can act on a terminal or hide in a document.

A name, a unit or a file path reaches bandcalc's output as the user wrote it.  Printed raw, an
escape sequence in it (ESC ``[2J`` clears the screen, ESC ``]`` sets the window title, a C1
control does the same in one byte) would act on the reader's terminal, a bidirectional override
would show the text in another order than it reads, and a lone surrogate cannot be written as
UTF-8 at all.  :func:`visible_text` writes each such character as its escape, ``\\u001b``, so the
reader sees exactly what is there.  Every table the command line prints, and the design summary,
pass user text through it.
"""

from __future__ import annotations

import re

__all__ = ["visible_text"]

# C0 controls (line breaks and tabs too: user text is shown on one line), DEL, C1 controls, the
# Arabic letter mark, left-to-right / right-to-left marks, line and paragraph separators, the
# bidirectional embeddings, overrides and isolates, and lone surrogates.
_HIDDEN = re.compile("[\x00-\x1f\x7f-\x9f\u061c\u200e\u200f\u2028-\u202e\u2066-\u2069\ud800-\udfff]")
_HIDDEN_BUT_LINE_BREAKS = re.compile(
    "[\x00-\x09\x0b-\x1f\x7f-\x9f\u061c\u200e\u200f\u2028-\u202e\u2066-\u2069\ud800-\udfff]")


def visible_text(text: object, *, keep_lines: bool = False) -> str:
    """``text`` with every control, bidirectional control and lone surrogate written as ``\\uXXXX``;
    with ``keep_lines``, line feeds stay (a whole table or JSON document, printed as it is laid out).

    The escapes are also JSON's: a line of JSON passed through stays valid JSON, the same text
    (``json.dumps`` escapes line breaks inside strings, so the others only stand inside strings).
    """
    hidden = _HIDDEN_BUT_LINE_BREAKS if keep_lines else _HIDDEN
    return hidden.sub(lambda m: f"\\u{ord(m.group()):04x}", str(text))
