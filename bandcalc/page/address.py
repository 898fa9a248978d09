"""The design carried in the page address, so a reload keeps it and the link can be shared.

The design file's JSON, written compactly, compressed with zlib and encoded as URL-safe
base64 (no padding), sits under one query parameter, :data:`PARAM`.  Pure functions: no
Streamlit here.
"""

from __future__ import annotations

import base64
import binascii
import json
import zlib

from bandcalc.errors import DesignError
from bandcalc.model.design import Design
from bandcalc.model.design_file import design_from_dict, design_to_dict

__all__ = ["PARAM", "address_to_design", "design_to_address"]

PARAM = "design"
# A design is well under a kilobyte of JSON; refuse anything that inflates far beyond that.
_MAX_JSON = 64_000


def design_to_address(design: Design) -> str:
    """The query-parameter text for a design."""
    text = json.dumps(design_to_dict(design), separators=(",", ":"), ensure_ascii=False)
    packed = zlib.compress(text.encode("utf-8"), 9)
    return base64.urlsafe_b64encode(packed).decode("ascii").rstrip("=")


def address_to_design(text: str) -> Design:
    """Read a design back from its query-parameter text.

    Raises
    ------
    DesignError
        Naming the address parameter and what is wrong (not readable, or not a valid design).
    """
    where = f"page address ({PARAM}=...)"
    if not isinstance(text, str) or not text.strip():
        raise DesignError(f"{where}: empty; it should hold a design written by this page")
    try:
        packed = base64.urlsafe_b64decode(text.strip() + "=" * (-len(text.strip()) % 4))
        inflater = zlib.decompressobj()
        raw = inflater.decompress(packed, _MAX_JSON)
        if inflater.unconsumed_tail:
            raise DesignError(f"{where}: too long to be a design")
        data = json.loads(raw.decode("utf-8"))
    except (binascii.Error, ValueError, zlib.error, UnicodeDecodeError) as exc:
        if isinstance(exc, DesignError):
            raise
        raise DesignError(f"{where}: cannot be read (it may have been cut short or changed by hand)"
                          ) from None
    try:
        return design_from_dict(data)
    except DesignError as exc:
        raise DesignError(f"{where}: {exc}") from None
    except TypeError as exc:
        raise DesignError(f"{where}: {exc}") from None
