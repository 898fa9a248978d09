"""The design carried in the page address, so a reload keeps it and the link can be shared.

The design file's JSON, written compactly, compressed with zlib and encoded as URL-safe
base64 (no padding), sits under one query parameter, :data:`PARAM`.  Pure functions: no
Streamlit here.

The address is text anyone can change or share, so reading it never lets anything but a
:class:`~bandcalc.errors.DesignError` out: a value too large for a float, JSON nested past the
parser's depth, a zlib bomb all end in a message naming the address.
"""

from __future__ import annotations

import base64
import binascii
import json
import logging
import zlib
from typing import Any

from bandcalc.errors import DesignError
from bandcalc.model.design import Design
from bandcalc.model.design_file import design_from_dict, design_to_dict

__all__ = ["PARAM", "address_to_design", "design_to_address"]

log = logging.getLogger("bandcalc.page")

PARAM = "design"
# A design is well under a kilobyte of JSON; refuse anything that inflates far beyond that.
_MAX_JSON = 64_000
_WHERE = f"page address ({PARAM}=...)"


def _not_text(data: Any, where: str = "") -> str | None:
    """The design-file key of the first string in ``data`` that UTF-8 cannot hold (a lone surrogate,
    as JSON's escape \\ud800 gives), or ``None``."""
    if isinstance(data, str):
        try:
            data.encode("utf-8")
        except UnicodeEncodeError:
            return where or "design"
        return None
    items = data.items() if isinstance(data, dict) else enumerate(data) if isinstance(data, list) else ()
    for key, value in items:
        found = _not_text(value, f"{where}[{key}]" if isinstance(key, int) else
                          f"{where}.{key}" if where else str(key))
        if found:
            return found
    return None


def design_to_address(design: Design) -> str:
    """The query-parameter text for a design.

    Raises
    ------
    DesignError
        Naming the key whose text cannot be written (a lone surrogate is not text).
    """
    data = design_to_dict(design)
    text = json.dumps(data, separators=(",", ":"), ensure_ascii=False)
    try:
        raw = text.encode("utf-8")
    except UnicodeEncodeError:
        raise DesignError(f"{_not_text(data)}: holds a character that is not text (a lone UTF-16 "
                          f"surrogate, as the JSON escape \\ud800 writes one); write it out as a "
                          f"character") from None
    packed = zlib.compress(raw, 9)
    return base64.urlsafe_b64encode(packed).decode("ascii").rstrip("=")


def address_to_design(text: str) -> Design:
    """Read a design back from its query-parameter text.

    Raises
    ------
    DesignError
        Naming the address parameter and what is wrong (not readable, or not a valid design).
    """
    if not isinstance(text, str) or not text.strip():
        raise DesignError(f"{_WHERE}: empty; it should hold a design written by this page")
    try:
        packed = base64.urlsafe_b64decode(text.strip() + "=" * (-len(text.strip()) % 4))
        inflater = zlib.decompressobj()
        raw = inflater.decompress(packed, _MAX_JSON)
        if inflater.unconsumed_tail:
            raise DesignError(f"{_WHERE}: too long to be a design")
        data = json.loads(raw.decode("utf-8"))
    except RecursionError:
        raise DesignError(f"{_WHERE}: nested deeper than any design; it may have been changed by hand"
                          ) from None
    except (binascii.Error, ValueError, zlib.error, UnicodeDecodeError) as exc:
        if isinstance(exc, DesignError):
            raise
        raise DesignError(f"{_WHERE}: cannot be read (it may have been cut short or changed by hand)"
                          ) from None
    try:
        return design_from_dict(data)
    except (ValueError, TypeError) as exc:
        raise DesignError(f"{_WHERE}: {exc}") from None
    except Exception as exc:  # anything else a changed address can provoke: never past this point
        log.info("page address refused: %r", exc)
        raise DesignError(f"{_WHERE}: holds a value no design can have (a number beyond the range of "
                          f"a float, or the like); it may have been changed by hand") from None
