"""The design carried in the page address, so a reload keeps it and the link can be shared.

The design file's JSON, written compactly, compressed with zlib and encoded as URL-safe
base64 (no padding), sits under one query parameter, :data:`PARAM`.  Pure functions: no
Streamlit here.

The address holds at most :data:`ADDRESS_MAX` characters of it.  Measured with Streamlit 1.67 and
Chromium: the page's server (uvicorn with h11) refuses a request whose head passes 16 KiB unless
it arrives in one piece, and proxies commonly refuse request lines over 8 KiB; Chromium itself
takes addresses up to 2 MB.  8,000 characters leave room for the rest of the request, and hold a
design with several pages of notes.  A design that does not fit is refused
(:func:`design_to_address` raises, naming its longest text), so the page never takes what a
reload would lose.

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
from collections.abc import Iterator
from typing import Any

from bandcalc.errors import DesignError
from bandcalc.model.design import Design
from bandcalc.model.design_file import design_from_dict, design_to_dict, read_json

__all__ = ["ADDRESS_MAX", "PARAM", "address_to_design", "design_to_address"]

log = logging.getLogger("bandcalc.page")

PARAM = "design"
#: The most characters of design the page puts in its address (and reads back from it).
ADDRESS_MAX = 8_000
# The most bytes of JSON the page writes, and inflates when reading (a zlib bomb stops here).
_MAX_JSON = 64_000
_WHERE = f"page address ({PARAM}=...)"


def _texts(data: Any, where: str = "") -> Iterator[tuple[str, str]]:
    """Every string in the design file's data, with its key ("name", "front_end.unit", ...)."""
    if isinstance(data, str):
        yield where or "design", data
        return
    items = data.items() if isinstance(data, dict) else enumerate(data) if isinstance(data, list) else ()
    for key, value in items:
        yield from _texts(value, f"{where}[{key}]" if isinstance(key, int) else
                          f"{where}.{key}" if where else str(key))


def _not_text(data: Any) -> str:
    """The key of the first string UTF-8 cannot hold (a lone surrogate, as JSON's \\ud800 gives)."""
    for key, text in _texts(data):
        try:
            text.encode("utf-8")
        except UnicodeEncodeError:
            return key
    return "design"


def design_to_address(design: Design) -> str:
    """The query-parameter text for a design.

    Raises
    ------
    DesignError
        Naming the key whose text cannot be written (a lone surrogate is not text), or the longest
        text of a design too long for the address.
    """
    data = design_to_dict(design)
    text = json.dumps(data, separators=(",", ":"), ensure_ascii=False)
    try:
        raw = text.encode("utf-8")
    except UnicodeEncodeError:
        raise DesignError(f"{_not_text(data)}: holds a character that is not text (a lone UTF-16 "
                          f"surrogate, as the JSON escape \\ud800 writes one); write it out as a "
                          f"character") from None
    address = base64.urlsafe_b64encode(zlib.compress(raw, 9)).decode("ascii").rstrip("=")
    if len(address) > ADDRESS_MAX or len(raw) > _MAX_JSON:
        key, longest = max(_texts(data), key=lambda item: len(item[1]))
        raise DesignError(f"{key}: too long for the page address ({len(longest):,} characters): the design "
                          f"would take {len(address):,} characters of address and {len(raw):,} bytes of "
                          f"file, and the page keeps at most {ADDRESS_MAX:,} and {_MAX_JSON:,}, so that a "
                          f"reload or a shared link brings the design back")
    return address


def address_to_design(text: str) -> Design:
    """Read a design back from its query-parameter text.

    Raises
    ------
    DesignError
        Naming the address parameter and what is wrong (not readable, or not a valid design).
    """
    if not isinstance(text, str) or not text.strip():
        raise DesignError(f"{_WHERE}: empty; it should hold a design written by this page")
    if len(text.strip()) > ADDRESS_MAX:
        raise DesignError(f"{_WHERE}: longer than the page writes ({len(text.strip()):,} characters, at "
                          f"most {ADDRESS_MAX:,}); it may have been changed by hand")
    try:
        packed = base64.urlsafe_b64decode(text.strip() + "=" * (-len(text.strip()) % 4))
        inflater = zlib.decompressobj()
        raw = inflater.decompress(packed, _MAX_JSON)
        if inflater.unconsumed_tail:
            raise DesignError(f"{_WHERE}: too long to be a design")
        data = read_json(raw.decode("utf-8"))  # strict: no repeated keys, no deep nesting
    except RecursionError:
        raise DesignError(f"{_WHERE}: nested deeper than any design; it may have been changed by hand"
                          ) from None
    except (binascii.Error, ValueError, zlib.error, UnicodeDecodeError) as exc:
        if isinstance(exc, DesignError):
            raise exc if str(exc).startswith(_WHERE) else DesignError(f"{_WHERE}: {exc}") from None
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
