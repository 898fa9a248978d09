"""The design file: a :class:`~bandcalc.model.design.Design` read from and written to JSON.

The file mirrors the design's classes section by section, values in SI units; resistances may
be written in the IEC 60062 code ("4k7") or with SI prefixes ("4.7k").  ``null`` leaves an
optional value out.  Errors name the key at fault and what is allowed.

Reading is strict where JSON readers are lenient: a key given twice, text holding a lone
surrogate and nesting deeper than :data:`MAX_DEPTH` are refused, and only a regular file of at
most :data:`MAX_FILE_BYTES` is read (a device or a pipe would be read for ever).  A UTF-8
byte-order mark is skipped.
"""

from __future__ import annotations

import json
import re
from dataclasses import fields
from pathlib import Path
from typing import Any

import numpy as np

from bandcalc.errors import DesignError, shown
from bandcalc.model.design import (
    FORMAT,
    RESISTOR_KEYS,
    Comparator,
    Design,
    DividerReference,
    FixedReference,
    InputFilter,
    Load,
    OpenDrain,
    PushPull,
    Resistors,
    Source,
    Supply,
)
from bandcalc.model.front_end import front_end_from_dict
from bandcalc.model.ratings import ratings_from_dict, ratings_to_dict
from bandcalc.model.signal_settings import signal_settings_from_dict, signal_settings_to_dict
from bandcalc.model.tolerances import ToleranceError, Tolerances, tolerances_from_dict, tolerances_to_dict
from bandcalc.model.units import UnitError, parse_quantity, parse_resistance
from bandcalc.model.validation import LONE_SURROGATE, section, text
from bandcalc.user_files import read_regular_file

__all__ = [
    "MAX_DEPTH",
    "MAX_FILE_BYTES",
    "design_from_dict",
    "design_from_json",
    "design_to_dict",
    "design_to_json",
    "load_design",
    "read_json",
    "save_design",
]

_TOP_KEYS = ("format", "name", "notes", "stage", "supply", "reference", "resistors", "output",
             "comparator", "source", "tolerances", "front_end", "protective", "load", "ratings",
             "filter", "signal")
_UNITS = {"volts": "V", "offset": "V", "bias_current": "A", "delay": "s", "load_capacitance": "F",
          "capacitance": "F", "recovery": "s", "delay_overdrive": "V",
          "high_drop": "V", "low_drop": "V", "pullup_volts": "V", "low_volts": "V",
          "positive": "V", "negative": "V", "common_mode_low": "V", "common_mode_high": "V",
          "low": "V", "high": "V", "hysteresis": "V", "offset_current": "A",
          "logic_low_max": "V", "logic_high_min": "V",
          "input_current_limit": "A", "differential_max": "V"}
_OHM_KEYS = {"resistance", "pullup", "top", "bottom", *RESISTOR_KEYS}
#: Largest design file read, bytes.  A design file is one to two kilobytes (the demos are); a
#: megabyte leaves room for long notes, as much as the page takes in an upload.
MAX_FILE_BYTES = 1 << 20
#: Deepest nesting of arrays and objects read.  A design file nests four levels
#: (tolerances.limits.upper[0]); anything far deeper is not a design, and JSON readers run out of
#: stack near a thousand.
MAX_DEPTH = 64
#: Integers with more digits than this are not read digit by digit (beyond 308 digits an integer
#: is no float anyway, and Python refuses to read more than 4,300).
_MAX_INTEGER_DIGITS = 400


def _values(data: dict, key: str) -> dict[str, float | None]:
    """Read each entry of a section as a number (resistances in either notation)."""
    out: dict[str, float | None] = {}
    for name, raw in data.items():
        where = f"{key}.{name}"
        if raw is None:  # left out: the default applies (section() refused it where required)
            continue
        try:
            if name in _OHM_KEYS:
                out[name] = parse_resistance(raw, where)
            else:
                out[name] = parse_quantity(raw, _UNITS.get(name, ""), where)
        except UnitError as exc:
            raise DesignError(str(exc)) from None
    return out


def _reference_from(data: Any) -> FixedReference | DividerReference | None:
    if data is None:
        return None
    data = section(data, "reference", ("volts", "divider"))
    if len(data) != 1:
        raise DesignError('reference: give exactly one of {"volts": V} or '
                          '{"divider": {"top": R, "bottom": R}}')
    if "volts" in data:
        return FixedReference(**_values(section(data, "reference", ("volts",), ("volts",)), "reference"))
    div = section(data["divider"], "reference.divider", ("top", "bottom"), ("top", "bottom"))
    return DividerReference(**_values(div, "reference.divider"))


def _output_from(data: Any) -> PushPull | OpenDrain:
    if data is None:
        return PushPull()
    kinds = ("push-pull", "open-drain")
    if not isinstance(data, dict) or data.get("kind") not in kinds:
        got = data.get("kind") if isinstance(data, dict) else data
        raise DesignError(f"output.kind: {got!r} is not an output kind; allowed: {', '.join(kinds)}")
    body = {k: v for k, v in data.items() if k != "kind"}
    if data["kind"] == "push-pull":
        allowed = ("kind", "high_drop", "low_drop", "resistance", "load_capacitance")
        section(data, "output", allowed)
        return PushPull(**_values(body, "output"))
    allowed = ("kind", "pullup", "pullup_volts", "low_volts", "load_capacitance")
    section(data, "output", allowed, ("pullup",))
    return OpenDrain(**_values(body, "output"))


def _plain_section(cls: type, data: Any, key: str, required: tuple[str, ...] = ()) -> Any:
    allowed = tuple(f.name for f in fields(cls))
    if data is None and not required:
        return cls()
    return cls(**_values(section(data, key, allowed, required), key))


def design_from_dict(data: Any) -> Design:
    """Build a validated Design from the JSON shape; raise DesignError naming the key at fault."""
    _text_everywhere(data)
    data = section(data, "design", _TOP_KEYS, ("format", "stage", "supply", "resistors"))
    if isinstance(data["format"], bool) or data["format"] != FORMAT:
        raise DesignError(f"format: {shown(data['format'])} is not a design file format this version reads; "
                          f"allowed: {FORMAT}")
    for key in ("name", "notes"):
        text(data.get(key) or "", key)
    protective = data.get("protective")
    if not (protective is None or protective is True or protective is False):
        raise DesignError(f"protective: must be true or false (or left out), got {shown(protective)}")
    resistors = section(data["resistors"], "resistors", RESISTOR_KEYS, ("feedback",))
    return Design(
        stage=data["stage"],
        supply=_plain_section(Supply, data["supply"], "supply", ("positive",)),
        resistors=Resistors(**_values(resistors, "resistors")),
        output=_output_from(data.get("output")),
        reference=_reference_from(data.get("reference")),
        comparator=_plain_section(Comparator, data.get("comparator"), "comparator"),
        source=_plain_section(Source, data.get("source"), "source"),
        front_end=front_end_from_dict(data.get("front_end")),
        name=data.get("name") or "",
        notes=data.get("notes") or "",
        protective=data.get("protective"),
        tolerances=_tolerances_from(data.get("tolerances")),
        load=None if data.get("load") is None else _plain_section(Load, data["load"], "load"),
        ratings=None if data.get("ratings") is None else ratings_from_dict(data["ratings"]),
        filter=None if data.get("filter") is None else _plain_section(
            InputFilter, data["filter"], "filter", ("resistance", "capacitance")),
        signal=None if data.get("signal") is None else signal_settings_from_dict(data["signal"]),
    )


def _tolerances_from(data: Any) -> Tolerances | None:
    try:
        return None if data is None else tolerances_from_dict(data, RESISTOR_KEYS)
    except ToleranceError as exc:
        raise DesignError(str(exc)) from None


def _dropping_none(obj: Any) -> dict:
    return {f.name: getattr(obj, f.name) for f in fields(obj) if getattr(obj, f.name) is not None}


def design_to_dict(design: Design) -> dict:
    """The JSON shape of a design; ``design_from_dict(design_to_dict(d)) == d``."""
    out: dict[str, Any] = {"format": FORMAT, "name": design.name, "notes": design.notes}
    if design.protective is not None:
        out["protective"] = design.protective
    out.update({"stage": design.stage, "supply": _dropping_none(design.supply)})
    if isinstance(design.reference, FixedReference):
        out["reference"] = {"volts": design.reference.volts}
    elif isinstance(design.reference, DividerReference):
        out["reference"] = {"divider": _dropping_none(design.reference)}
    out["resistors"] = design.resistors.present()
    out["output"] = {"kind": design.output.kind, **_dropping_none(design.output)}
    out["comparator"] = _dropping_none(design.comparator)
    out["source"] = _dropping_none(design.source)
    if design.tolerances is not None:
        out["tolerances"] = tolerances_to_dict(design.tolerances)
    if design.front_end is not None:
        out["front_end"] = design.front_end.to_dict()
    if design.load is not None:
        out["load"] = _dropping_none(design.load)
    if design.ratings is not None:
        out["ratings"] = ratings_to_dict(design.ratings)
    if design.filter is not None:
        out["filter"] = _dropping_none(design.filter)
    if design.signal is not None:
        out["signal"] = signal_settings_to_dict(design.signal)
    return out


def load_design(path: str | Path) -> Design:
    """Read a design file (a regular file of at most :data:`MAX_FILE_BYTES`); errors name the file
    and the key at fault."""
    data = read_regular_file(path, MAX_FILE_BYTES, DesignError)
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError:
        raise DesignError(f"{path}: not a UTF-8 text file") from None
    return design_from_json(text, str(path))


def design_from_json(text: str, where: str = "design") -> Design:
    """Parse JSON text into a Design; errors start with ``where``."""
    try:
        return design_from_dict(read_json(text))
    except DesignError as exc:
        raise DesignError(f"{where}: {exc}") from None
    except TypeError as exc:  # a wrong field reaching a dataclass constructor
        raise DesignError(f"{where}: {exc}") from None


class _Object(dict):
    """A JSON object as read, with the first key its text gave twice (None if none)."""

    repeated: str | None = None


def _reader() -> tuple[Any, list[str]]:
    """An ``object_pairs_hook`` that marks repeated keys, and the list it notes each one in."""
    seen: list[str] = []

    def hook(pairs: list[tuple[str, Any]]) -> _Object:
        out = _Object(pairs)
        if len(out) < len(pairs):
            keys: set[str] = set()
            out.repeated = next(k for k, _ in pairs if k in keys or keys.add(k))
            seen.append(out.repeated)
        return out

    return hook, seen


def _integer(digits: str) -> int:
    # An integer too long to read stays one too large for any float, so the key's check refuses it.
    return int(digits[:_MAX_INTEGER_DIGITS])


_STRINGS = re.compile(r'"(?:[^"\\]|\\.)*"')


def _depth(text: str) -> int:
    """How deep arrays and objects nest in JSON text (brackets inside strings not counted); at
    most the number of opening brackets, so a text with few of them is not scanned."""
    if text.count("[") + text.count("{") <= MAX_DEPTH:
        return 0
    code = np.frombuffer(_STRINGS.sub("", text).encode("utf-8", "surrogatepass"), dtype=np.uint8)
    opens, closes = (code == ord("[")) | (code == ord("{")), (code == ord("]")) | (code == ord("}"))
    step = opens.astype(np.int32) - closes
    return int(np.cumsum(step).max(initial=0))


def read_json(text: str) -> Any:
    """The JSON value of a design file's text, read strictly; DesignError says what is wrong.

    A leading byte-order mark is skipped; a key given twice and nesting deeper than
    :data:`MAX_DEPTH` are refused, naming where.
    """
    text = text.removeprefix("\ufeff")
    depth = _depth(text)  # 0 where it cannot be deep
    if depth > MAX_DEPTH:
        raise DesignError(f"nested {depth} levels deep; a design file nests at most {MAX_DEPTH} "
                          "(it needs four)")
    hook, repeated = _reader()
    try:
        data = json.loads(text, object_pairs_hook=hook, parse_int=_integer)
    except json.JSONDecodeError as exc:
        raise DesignError(f"not valid JSON (line {exc.lineno}, column {exc.colno}: {exc.msg})") from None
    if repeated:
        where, obj = _first(data, "design", lambda v: isinstance(v, _Object) and v.repeated is not None)
        raise DesignError(f'{where}: the key "{obj.repeated}" appears twice; give each key once '
                          "(a JSON reader would silently keep only one of them)")
    return data


def _first(data: Any, where: str, found: Any) -> tuple[str, Any]:
    """The path and value of the first value inside ``data`` (its keys included, each standing for
    itself as "PATH (a key)") for which ``found(value)`` holds; ``(None, None)`` if none does."""
    if found(data):
        return where, data
    items = data.items() if isinstance(data, dict) else enumerate(data) if isinstance(data, list) else ()
    for key, value in items:
        inner = (f"{where}[{key}]" if isinstance(data, list) else key if where == "design"
                 else f"{where}.{key}")
        if isinstance(data, dict) and found(key):
            return f"{where} (a key)", key
        hit = _first(value, inner, found)
        if hit[0] is not None:
            return hit
    return None, None


def _text_everywhere(data: Any) -> None:
    """Refuse a lone surrogate in any text of the file, keys included, naming where it is."""
    try:  # one pass in C: text with a lone surrogate has no UTF-8 form
        json.dumps(data, ensure_ascii=False).encode("utf-8")
        return
    except RecursionError:
        raise DesignError(f"design: nested deeper than a design file ever is (at most {MAX_DEPTH} levels)") \
            from None
    except (UnicodeEncodeError, TypeError, ValueError):
        pass
    where, value = _first(data, "design",
                          lambda v: isinstance(v, str) and LONE_SURROGATE.search(v) is not None)
    if where is not None:
        text(value, where)


def design_to_json(design: Design) -> str:
    return json.dumps(design_to_dict(design), indent=2, ensure_ascii=False) + "\n"


def save_design(design: Design, path: str | Path) -> None:
    Path(path).write_text(design_to_json(design), encoding="utf-8")

