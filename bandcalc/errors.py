"""The one base of every error a user can cause, so a caller catches them all with one clause.

Each error's message names the key, argument or file at fault and what is allowed.  Every class
here derives from :class:`BandcalcError`, itself a ``ValueError``; nothing a user types reaches
them as ``KeyError``, ``ZeroDivisionError`` or ``OverflowError``.
"""

from __future__ import annotations

__all__ = ["BandcalcError", "DesignError"]


class BandcalcError(ValueError):
    """Input bandcalc cannot use; the message says what is wrong and what is allowed."""


class DesignError(BandcalcError):
    """A design that cannot be built; the message names the key and what is allowed."""
