"""Reading and writing quantities the way people type them.

One parser serves the design file, the command line and the page: plain numbers, SI prefixes
("4.7k", "100n", "2.2M") and, for resistances, the IEC 60062 code ("4k7", "2R2", "1M5", "R47").
Values inside bandcalc are plain floats in SI base units; formatting happens only at the edge.
"""

from __future__ import annotations

import math
import re

from bandcalc.errors import BandcalcError, shown

__all__ = [
    "MICRO",
    "PREFIXED_UNITS",
    "SI_UNITS",
    "SYMBOLS",
    "UnitError",
    "format_code",
    "format_interval",
    "format_ohms",
    "format_probability",
    "format_si",
    "format_value",
    "format_volts",
    "parse_quantity",
    "parse_resistance",
    "symbol",
]

# Prefixes as powers of ten, applied to the decimal text so "100n" is exactly 1e-7.
_PREFIX = {
    "p": -12, "n": -9, "u": -6, "µ": -6, "μ": -6, "m": -3,
    "": 0, "k": 3, "K": 3, "M": 6, "meg": 6, "G": 9,
}
# IEC 60062 letter codes for resistance: the letter stands where the decimal point goes.
_CODE_LETTER = {"R": 0, "r": 0, "K": 3, "k": 3, "M": 6, "G": 9, "T": 12}
_OHM_UNITS = ("ohms", "ohm", "Ohms", "Ohm", "OHM", "Ω", "Ω")

_NUMBER = r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?"
_SI_RE = re.compile(rf"^\s*(?P<num>{_NUMBER})\s*(?P<prefix>meg|[pnuµμmkKMG]?)\s*(?P<unit>°?[A-Za-zΩΩ]*)\s*$")
_CODE_RE = re.compile(r"^\s*(?P<int>\d*)(?P<letter>[RrKkMGT])(?P<frac>\d*)\s*(?P<unit>[A-Za-zΩΩ]*)\s*$")

_RES_HINT = "write ohms as a number, with an SI prefix (4.7k, 2.2M) or in the IEC 60062 code (4k7, 2R2, 1M5)"


class UnitError(BandcalcError):
    """A typed quantity that cannot be read; the message names the field and the text."""


def _scaled(number: str, exponent: int) -> float:
    return float(f"{number}e{exponent}") if "e" not in number.lower() else float(number) * 10.0**exponent


def _check_number(value: float, what: str) -> float:
    if isinstance(value, bool):
        raise UnitError(f"{what}: expected a number, got {value!r}")
    try:
        number = float(value)
    except OverflowError:  # an integer beyond the largest float, about 1.8e308
        raise UnitError(f"{what}: the integer written is too large for a number (more than 308 digits); "
                        "write the value in SI units, e.g. 4.7e3 or 4k7") from None
    if not math.isfinite(number):
        raise UnitError(f"{what}: must be a finite number, got {number!r}")
    return number


def parse_quantity(value: float | int | str, unit: str = "", what: str = "value") -> float:
    """Read a number or an SI-prefixed string ("2.5", "50m", "100 nA", "3.3V").

    Parameters
    ----------
    value : number or str
    unit : str
        The unit symbol that may follow the prefix ("V", "A", "s", "F"); empty accepts none.
    what : str
        The field's name, used in error messages.

    Returns
    -------
    float, in SI base units.
    """
    if not isinstance(value, str):
        try:
            return _check_number(value, what)
        except (TypeError, ValueError) as exc:
            if isinstance(exc, UnitError):
                raise
            raise UnitError(f"{what}: expected a number, got {shown(value)}") from None
    m = _SI_RE.match(value)
    if m and (m["unit"] in ("", unit, symbol(unit)) or (unit and m["unit"].lower() == unit.lower())):
        return _check_number(_scaled(m["num"], _PREFIX[m["prefix"]]), what)
    if m and m["prefix"] == "" and m["unit"] and m["unit"][0] in _PREFIX and m["unit"][1:] in ("", unit):
        return _check_number(_scaled(m["num"], _PREFIX[m["unit"][0]]), what)
    with_unit = f" and the unit {unit}" if unit else ""
    raise UnitError(f"{what}: cannot read {shown(value)}; write a number, optionally with an SI prefix "
                    f"(e.g. 2.5, 50m, 100n){with_unit}")


def parse_resistance(value: float | int | str, what: str = "resistance") -> float:
    """Read a resistance in ohms: a number, "4.7k", "2.2 MOhm", "470R" or the IEC 60062 "4k7".

    "4k7" is always 4700 ohm, never 4 with a unit "k7".  The result may be zero or negative;
    callers that need a positive part check that themselves.
    """
    if not isinstance(value, str):
        return parse_quantity(value, "", what)
    text = value.strip()
    code = _CODE_RE.match(text)
    if code and (code["int"] or code["frac"]) and _is_ohm_unit(code["unit"]):
        if code["letter"] in "Rr" and not code["frac"] and not code["int"]:
            raise UnitError(f"{what}: cannot read {shown(value)}; {_RES_HINT}")
        digits = f"{code['int'] or '0'}.{code['frac'] or '0'}"
        return _check_number(_scaled(digits, _CODE_LETTER[code["letter"]]), what)
    m = _SI_RE.match(text)
    if m and _is_ohm_unit(m["unit"]):
        return _check_number(_scaled(m["num"], _PREFIX[m["prefix"]]), what)
    if m and m["prefix"] == "" and m["unit"][:1] in _PREFIX and _is_ohm_unit(m["unit"][1:]):
        return _check_number(_scaled(m["num"], _PREFIX[m["unit"][0]]), what)
    raise UnitError(f"{what}: cannot read {shown(value)}; {_RES_HINT}")


def _is_ohm_unit(unit: str) -> bool:
    return unit in ("",) + _OHM_UNITS


#: The prefix micro as people read it (SI Brochure, 9th edition, Table 7): the MICRO SIGN U+00B5.
MICRO = "\u00b5"
#: The units bandcalc names in ASCII inside, as people read them: the ohm "Ω" and the degree Celsius
#: "°C" (SI Brochure, 9th edition, Table 4).  Text a program reads keeps the ASCII names.
SYMBOLS = {"Ohm": "\u03a9", "C": "\u00b0C"}


def symbol(unit: str) -> str:
    """A unit as people read it: "Ohm" as "Ω", "C" as "°C" (and "C/s" as "°C/s"), any other as it is."""
    head, per, tail = unit.partition("/")
    return SYMBOLS.get(head, head) + per + tail


_SI_STEPS = ((12, "T"), (9, "G"), (6, "M"), (3, "k"), (0, ""), (-3, "m"), (-6, MICRO),
             (-9, "n"), (-12, "p"))


def _round(value: float, digits: int) -> float:
    return float(f"{value:.{digits}g}")


def _plain(value: float, digits: int) -> str:
    text = f"{value:.{digits}f}".rstrip("0").rstrip(".")
    return "0" if text in ("", "-0") else text  # no "-0" from -0.0


# Magnitudes written with a prefix (0.1 p to 999 T) or as a plain figure; anything beyond is
# written in E notation ("1e-300 V"), never as "0 pV" or a figure of 300 digits.
_PREFIXED_SPAN = (1e-13, 1e15)
_PLAIN_SPAN = (1e-9, 1e15)


def _beyond(value: float, unit: str, digits: int, span: tuple[float, float]) -> str | None:
    """The text of a value no prefix or plain figure reads well: none, infinite, or out of ``span``."""
    if math.isnan(value):
        return "n/a"  # no unit: there is no value to have one
    if math.isinf(value):
        return f"{'+' if value > 0 else '-'}inf {unit}".strip()
    mag = _round(abs(value), digits)
    if mag and not span[0] <= mag < span[1]:
        return f"{value:.{digits}g} {unit}".strip()
    return None


def format_si(value: float, unit: str, digits: int = 3, *, plain: bool = False) -> str:
    """Format a value with an SI prefix and `digits` significant figures: "4.7 kΩ", "50 mV".

    Micro is written "µ" ("1.2 µA") and the unit by its symbol (:func:`symbol`); with ``plain``,
    in ASCII ("1.2 uA", "4.7 kOhm") for text only a program reads.  :func:`parse_quantity` reads
    either.  Trailing zeros are dropped; zero prints as "0 V"; NaN prints as "n/a" and infinities
    as "+inf V"; magnitudes beyond the prefixes pico to tera in E notation ("1e-300 V").
    """
    value = float(value)
    unit = unit if plain else symbol(unit)
    special = _beyond(value, unit, digits, _PREFIXED_SPAN)
    if special is not None:
        return special
    mag = _round(abs(value), digits)
    if mag == 0:
        return f"0 {unit}".strip()
    exponent, prefix = next(((e, p) for e, p in _SI_STEPS if mag >= 10.0**e), _SI_STEPS[-1])
    scaled = _round(mag / 10.0**exponent, digits)
    sign = "-" if value < 0 else ""
    prefix = "u" if plain and prefix == MICRO else prefix
    return f"{sign}{_plain(scaled, digits)} {prefix}{unit}".rstrip()


def format_volts(volts: float) -> str:
    """A voltage as findings and summaries write it: four significant figures, "2.949 V"."""
    return format_si(volts, "V", 4)


#: SI units that the parser reads after a prefix ("100 nA").
SI_UNITS = ("V", "A", "Ohm", "s", "F", "W", "Hz")
#: Units written with an SI prefix ("10 mV", "1.5 mW/K"); any other unit (K, C, kPa, %) prints as
#: a plain figure ("3950 K", "32.01 °C").
PREFIXED_UNITS = (*SI_UNITS, "W/K", "V/K", "V/s")


def format_value(value: float, unit: str, digits: int = 4, *, plain: bool = False) -> str:
    """A value for people: prefixed in :data:`PREFIXED_UNITS` ("2.95 V"), else plain ("3950 K",
    "32.01 °C"); with ``plain``, in ASCII for text a program reads ("32.01 C").

    NaN prints as "n/a"; magnitudes a plain figure cannot show well in E notation ("2.5e+300 kPa").
    """
    value = float(value)
    if unit in PREFIXED_UNITS:
        return format_si(value, unit, digits, plain=plain)
    unit = unit if plain else symbol(unit)
    special = _beyond(value, unit, digits, _PLAIN_SPAN)
    if special is not None:
        return special
    return f"{_plain(_round(value, digits), max(digits, 12))} {unit}".strip()


def format_code(ohms: float, digits: int = 3) -> str:
    """Format a resistance in the IEC 60062 code: 4700 -> "4k7", 2.2 -> "2R2", 1.5e6 -> "1M5"."""
    ohms = float(ohms)
    if not math.isfinite(ohms) or ohms <= 0:
        raise UnitError(f"resistance code: needs a positive finite value, got {ohms!r}")
    mag = _round(ohms, digits)
    exponent, letter = next(((e, p) for e, p in ((12, "T"), (9, "G"), (6, "M"), (3, "k"))
                             if mag >= 10.0**e), (0, "R"))
    whole, _, frac = _plain(_round(mag / 10.0**exponent, digits), digits).partition(".")
    return f"{'' if whole == '0' and letter == 'R' else whole}{letter}{frac}"


def format_ohms(ohms: float, code: bool = False, digits: int = 3) -> str:
    """A resistance the trade's way: "4.7 kΩ", or with ``code`` the IEC 60062 code "4k7"."""
    return format_code(ohms, digits) if code else format_si(ohms, "Ohm", digits)


def format_probability(p: float, digits: int = 3) -> str:
    """A probability for people, to ``digits`` significant figures: percent from 0.1 % up ("0.196 %"),
    parts per million below ("1.96 ppm", "0.00123 ppm"), in powers of ten below 1e-12 ("3.2e-16");
    "0" for none."""
    if p == 0:
        return "0"
    if p < 1e-12:
        return f"{p:.{max(digits - 1, 0)}e}"
    value, unit = (100.0 * p, "%") if p >= 1e-3 else (1e6 * p, "ppm")
    decimals = max(0, digits - 1 - math.floor(math.log10(value)))
    text = f"{value:.{decimals}f}"
    return f"{text.rstrip('0').rstrip('.') if '.' in text else text} {unit}"


# Spans of time people read more easily than seconds, longest first (a Julian year of 365.25 days).
_INTERVALS = ((365.25 * 86400.0, "year"), (86400.0, "day"), (3600.0, "hour"), (60.0, "minute"))


def format_interval(seconds: float, digits: int = 2) -> str:
    """A mean time between events for people: "3.2 years", "5.1 days", "12 ms", "never" (infinite)."""
    seconds = float(seconds)
    if math.isnan(seconds):
        return "n/a"
    if math.isinf(seconds):
        return "never"
    for span, name in _INTERVALS:
        if seconds >= span:
            count = _round(seconds / span, digits)
            text = f"{count:.3g}" if count < 1e6 else f"{count:.{digits}e}"
            return f"{text} {name}{'' if count == 1 else 's'}"
    return format_si(seconds, "s", digits)
