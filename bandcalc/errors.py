"""The one base of every error a user can cause, so a caller catches them all with one clause.

Each error's message names the key, argument or file at fault and what is allowed.  Every class
here derives from :class:`BandcalcError`, itself a ``ValueError``; nothing a user types reaches
them as ``KeyError``, ``ZeroDivisionError`` or ``OverflowError``.
"""

from __future__ import annotations

__all__ = ["BandcalcError", "DesignError", "shown"]

#: Longest text of a user's value a message repeats; a megabyte of pasted text is not repeated back.
SHOWN_CHARACTERS = 60


class BandcalcError(ValueError):
    """Input bandcalc cannot use; the message says what is wrong and what is allowed."""


class DesignError(BandcalcError):
    """A design that cannot be built; the message names the key and what is allowed."""


def shown(value: object) -> str:
    """A user's value as a message repeats it: its repr (control characters and lone surrogates
    escaped), cut to :data:`SHOWN_CHARACTERS` with "..." where it was cut."""
    if isinstance(value, int) and not isinstance(value, bool) and abs(value) > 10**SHOWN_CHARACTERS:
        return f"an integer of more than {SHOWN_CHARACTERS} digits"
    try:
        text = repr(value)
    except (RecursionError, ValueError):  # nesting too deep, an integer too long for text
        text = f"<{type(value).__name__}>"
    return text if len(text) <= SHOWN_CHARACTERS else text[:SHOWN_CHARACTERS - 3] + "..."
