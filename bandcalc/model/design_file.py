"""The design file: a :class:`~bandcalc.model.design.Design` read from and written to JSON.

The file mirrors the design's classes section by section, values in SI units; resistances may
be written in the IEC 60062 code ("4k7") or with SI prefixes ("4.7k").  Errors name the key at
fault and what is allowed.
"""

from __future__ import annotations

import json
from dataclasses import fields
from pathlib import Path
from typing import Any

from bandcalc.errors import DesignError
from bandcalc.model.design import (
    FORMAT,
    RESISTOR_KEYS,
    Comparator,
    Design,
    DividerReference,
    FixedReference,
    InputFilter,
    OpenDrain,
    PushPull,
    Resistors,
    Source,
    Supply,
)
from bandcalc.model.front_end import front_end_from_dict
from bandcalc.model.signal_settings import signal_settings_from_dict, signal_settings_to_dict
from bandcalc.model.tolerances import ToleranceError, Tolerances, tolerances_from_dict, tolerances_to_dict
from bandcalc.model.units import UnitError, parse_quantity, parse_resistance
from bandcalc.model.validation import section

__all__ = [
    "design_from_dict",
    "design_from_json",
    "design_to_dict",
    "design_to_json",
    "load_design",
    "save_design",
]

_TOP_KEYS = ("format", "name", "notes", "stage", "supply", "reference", "resistors", "output",
             "comparator", "source", "tolerances", "front_end", "protective", "filter", "signal")
_UNITS = {"volts": "V", "offset": "V", "bias_current": "A", "delay": "s", "load_capacitance": "F",
          "capacitance": "F", "recovery": "s", "delay_overdrive": "V",
          "high_drop": "V", "low_drop": "V", "pullup_volts": "V", "low_volts": "V",
          "positive": "V", "negative": "V", "common_mode_low": "V", "common_mode_high": "V",
          "low": "V", "high": "V"}
_OHM_KEYS = {"resistance", "pullup", "top", "bottom", *RESISTOR_KEYS}


def _values(data: dict, key: str) -> dict[str, float | None]:
    """Read each entry of a section as a number (resistances in either notation)."""
    out: dict[str, float | None] = {}
    for name, raw in data.items():
        where = f"{key}.{name}"
        if raw is None:
            out[name] = None
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
        return FixedReference(**_values(data, "reference"))
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
    data = section(data, "design", _TOP_KEYS, ("format", "stage", "supply", "resistors"))
    if data["format"] != FORMAT:
        raise DesignError(f"format: {data['format']!r} is not a design file format this version reads; "
                          f"allowed: {FORMAT}")
    for key in ("name", "notes"):
        if not isinstance(data.get(key, ""), str):
            raise DesignError(f"{key}: must be text")
    if data.get("protective") not in (None, True, False):
        raise DesignError("protective: must be true or false (or left out)")
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
        name=data.get("name", ""),
        notes=data.get("notes", ""),
        protective=data.get("protective"),
        tolerances=_tolerances_from(data.get("tolerances")),
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
    if design.filter is not None:
        out["filter"] = _dropping_none(design.filter)
    if design.signal is not None:
        out["signal"] = signal_settings_to_dict(design.signal)
    return out


def load_design(path: str | Path) -> Design:
    """Read a design file; errors name the file and the key at fault."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        raise DesignError(f"{path}: cannot read the file ({exc.strerror})") from None
    except UnicodeDecodeError:
        raise DesignError(f"{path}: not a UTF-8 text file") from None
    return design_from_json(text, str(path))


def design_from_json(text: str, where: str = "design") -> Design:
    """Parse JSON text into a Design; errors start with ``where``."""
    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise DesignError(f"{where}: not valid JSON (line {exc.lineno}, "
                          f"column {exc.colno}: {exc.msg})") from None
    try:
        return design_from_dict(data)
    except DesignError as exc:
        raise DesignError(f"{where}: {exc}") from None
    except TypeError as exc:  # a wrong field reaching a dataclass constructor
        raise DesignError(f"{where}: {exc}") from None


def design_to_json(design: Design) -> str:
    return json.dumps(design_to_dict(design), indent=2, ensure_ascii=False) + "\n"


def save_design(design: Design, path: str | Path) -> None:
    Path(path).write_text(design_to_json(design), encoding="utf-8")

