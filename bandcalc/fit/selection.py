"""Fit standard resistor values to the switching points the designer wants.

Give a design (its stage, supply, reference, output and comparator; its resistor values are
only a starting point), the upper and lower switching points wanted, a series and a range of
values.  The fit chooses which resistors are free, adds a + pin leg where the stage as drawn
cannot place both points, finds the exact continuous solution, and lists the best standard
values, ranked by the larger of the two errors (ties: lower network current).

Every fit answers within seconds or refuses at once: before searching, the number of
combinations the search may have to check is estimated from the grid's size and the number of
free values (:func:`bandcalc.fit.grid_search.search_size`); beyond ten times the search's budget
the fit refuses and says what would help (hold values, narrow the range, a coarser series).
Otherwise the search runs with its budget and, where it reaches it, the candidates are the best
it found, marked not proven (``FitResult.stopped``).

Every number reported comes from the general model (:func:`bandcalc.model.network.switching_points`),
so open-drain loading, offset, bias current and source resistance are always included.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, replace

import numpy as np

from bandcalc.errors import BandcalcError
from bandcalc.fit.exact import solve
from bandcalc.fit.grades import GradeError, Grades
from bandcalc.fit.grid_search import BUDGET, Aim, Evaluate, Progress, search, search_size, window
from bandcalc.fit.margin import CornerModel, MarginError
from bandcalc.fit.robust import RANKINGS, YIELD_BUILDS, rank
from bandcalc.model.design import (
    RESISTOR_KEYS,
    Design,
    DividerReference,
    FixedReference,
    OpenDrain,
    Resistors,
    divider_thevenin,
)
from bandcalc.model.network import Points, signal_path, switching_points
from bandcalc.model.parts import parameters, part, value_at, with_values
from bandcalc.model.points import design_points, input_range, stage_design, stage_targets
from bandcalc.model.standard_values import SERIES, EseriesError, series_values
from bandcalc.model.tolerances import Limits, PerResistor, Tolerances
from bandcalc.model.units import UnitError, format_si, format_value, parse_resistance, symbol
from bandcalc.spread.propagation import DEFAULT_SEED, Yield, simplifications

__all__ = [
    "MAX_COUNT",
    "Candidate",
    "FitError",
    "FitResult",
    "apply_candidate",
    "builds_columns",
    "candidate_to_dict",
    "fit",
    "fit_to_dict",
]

# Both points within this many volts (relative to the larger target, at least 1 V) count as exact.
_EXACT = 1e-9
_WIDE = (1e-3, 1e15)  # ohms: the bounds of "any value at all" when explaining a failure
# Candidates a fit lists at most.
MAX_COUNT = 100
# A search estimated at more than this many times its budget is refused before it starts: it
# would stop having checked only a small part of what it may have to.
_REFUSE_BEYOND = 10


class FitError(BandcalcError):
    """Targets or settings the fit cannot work with; the message says why and what would help."""


@dataclass(frozen=True)
class Candidate:
    """One set of resistor values and the switching points the model gives for it.

    ``resistors`` holds the whole resistors section of the resulting design (design-file keys,
    ohms); ``reference`` the fitted divider, where the fit chose it.  Errors are actual minus
    target, volts; ``network_current`` in amperes (see :func:`fit`).
    """

    resistors: dict[str, float]
    reference: DividerReference | None
    upper: float
    lower: float
    error_upper: float
    error_lower: float
    worst_error: float
    network_current: float
    design: Design
    # Ranked by what the builds do (:mod:`bandcalc.fit.robust`); None where not asked for.
    margin: float | None = None  # worst-case margin, design's unit; None with ``margin_why``
    margin_why: str | None = None
    grades: dict[str, float] | None = None  # tolerance (percent) chosen per fitted position
    cost: float | None = None  # relative cost of those grades; None where no grade will do
    build_yield: Yield | None = None
    not_told_apart: tuple[int, ...] = ()  # ranks whose yield intervals overlap this one's

    def value(self, position: str) -> float:
        """Ohms at a fitted position: a resistor key ("feedback") or "reference.top" / "reference.bottom"."""
        return value_at(self.design, part(position).path)


@dataclass(frozen=True)
class FitResult:
    """Candidates best first, the exact continuous solution, and what the fit did and why."""

    design: Design  # the design as fitted: held values applied, any added leg in place
    upper: float
    lower: float
    series: str
    min_ohms: float
    max_ohms: float
    fitted: tuple[str, ...]  # positions fitted: resistor keys, "reference.top", "reference.bottom"
    candidates: tuple[Candidate, ...]
    exact: Candidate | None
    added_leg: str | None
    notes: tuple[str, ...]
    problems: tuple[str, ...]  # why the targets cannot be met exactly, and what would help
    checked: int  # combinations the search checked (evaluated with the model or predicted)
    stopped: str | None  # None, or why the candidates are the best found, not proven the best
    by: str = "nominal"  # the ranking: "nominal", "margin" or "yield"
    windows: dict[str, tuple[float, float]] | None = None  # what margin and yield are measured against
    grades: Grades | None = None  # grades offered, where the fit chose them
    min_yield: float | None = None
    assumptions: tuple[str, ...] = ()  # where the margin's and yield's model simplifies, in words


def _ohms(value: float, digits: int = 3) -> str:
    return format_si(value, "Ohm", digits)


def _volts(value: float) -> str:
    return format_si(value, "V", 4)


# --- Positions and the model -----------------------------------------------------------------

def _positions(design: Design) -> list[str]:
    """The positions the fit may move: the resistors present and a reference divider.

    The inverting stage's input resistor carries only bias current (it protects the pin);
    the output pull-up is an output-stage choice.  Neither is fitted.
    """
    out = [k for k in RESISTOR_KEYS if getattr(design.resistors, k) is not None]
    if design.inverting and "input" in out:
        out.remove("input")
    if isinstance(design.reference, DividerReference):
        out += ["reference.top", "reference.bottom"]
    return out


def _network_current(design: Design, p: Mapping, pts: Points) -> np.ndarray:
    """Current the network draws, amperes: the larger, over both points, of the total flowing
    into the + pin from its legs, plus the current down a reference divider."""
    totals = []
    for signal, nodes in ((pts.upper, pts.at_upper), (pts.lower, pts.at_lower)):
        far = {"feedback": nodes.output, "to_positive": p["supply.positive"],
               "to_negative": p["supply.negative"], "to_ground": 0.0, "to_reference": nodes.reference}
        legs = [(v, p[f"resistors.{k}"]) for k, v in far.items() if f"resistors.{k}" in p]
        if not design.inverting:
            legs.append((signal, signal_path(p)))
        total = sum(np.maximum(v - nodes.plus, 0.0) / r for v, r in legs)
        if "reference.top" in p:
            total = total + (p["supply.positive"] - nodes.reference) / p["reference.top"]
        totals.append(total)
    return np.maximum(*totals)


def _evaluator(design: Design, params: list[str]) -> Evaluate:
    base = parameters(design)

    def evaluate(values: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        cols = {k: values[:, j] for j, k in enumerate(params)}
        pts = switching_points(design, cols)
        return pts.upper, pts.lower, _network_current(design, {**base, **cols}, pts)

    return evaluate


# --- The continuous solution -------------------------------------------------------------------

def _exact(design: Design, params: list[str], targets: tuple[float, float], bounds: tuple[float, float],
           starts: np.ndarray) -> np.ndarray | None:
    """The first start's solution that places both points exactly within bounds, or None."""
    k = len(params)
    low = np.array([bounds[0] if not p.endswith(".volts") else -1e6 for p in params])
    high = np.array([bounds[1] if not p.endswith(".volts") else 1e6 for p in params])
    tol = _EXACT * max(1.0, *map(abs, targets))
    log = np.array([not p.endswith(".volts") for p in params])
    values, worst = solve(_evaluator(design, params), log, targets, starts.reshape(-1, k), low, high, tol)
    ok = worst <= tol
    return values[np.argmax(ok)] if ok.any() else None


def _starts(design: Design, params: list[str], bounds: tuple[float, float], extra: int = 14) -> np.ndarray:
    """The design's own values, the middle of the range and a fixed spread of others."""
    p = parameters(design)
    own = np.array([p[k] for k in params])
    log_lo, log_hi = math.log(bounds[0]), math.log(bounds[1])
    middle = np.full(len(params), math.exp((log_lo + log_hi) / 2))
    spread = np.exp(np.random.default_rng(0).uniform(log_lo, log_hi, (extra, len(params))))
    rows = np.vstack([own, middle, spread])
    volts = np.array([k.endswith(".volts") for k in params])
    return np.where(volts, own, rows)


# --- Checks and explanations -------------------------------------------------------------------

def _is_number(value: object) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)


def _grid(series: str, min_ohms: float, max_ohms: float, named: Mapping[str, str]) -> np.ndarray:
    for key, value in (("min_ohms", min_ohms), ("max_ohms", max_ohms)):
        if not _is_number(value) or value <= 0:
            raise FitError(f"{named[key]}: must be a positive number of ohms, got {value!r}")
    if min_ohms >= max_ohms:
        raise FitError(f"{named['min_ohms']} ({_ohms(min_ohms)}) must be below {named['max_ohms']} "
                       f"({_ohms(max_ohms)})")
    try:
        grid = series_values(series, min_ohms, max_ohms)
    except EseriesError as exc:
        raise FitError(f"{named['series']}: {exc}") from None
    if not len(grid):
        raise FitError(f"{named['series']}: no {series} value lies between {_ohms(min_ohms)} and "
                       f"{_ohms(max_ohms)}")
    return grid


def _output_levels(design: Design) -> tuple[float, float]:
    """High and low output level with no feedback load, volts (from the model)."""
    pts = switching_points(design, {"resistors.feedback": 1e18})
    at_high, at_low = (pts.at_upper, pts.at_lower) if design.inverting else (pts.at_lower, pts.at_upper)
    return float(at_high.output), float(at_low.output)


def _check_order(upper: float, lower: float, unit: str) -> None:
    """Targets in the design's unit: two numbers, the upper above the lower."""
    for key, value in (("upper", upper), ("lower", lower)):
        if not _is_number(value):
            raise FitError(f"{key}: must be a number ({symbol(unit)}), got {value!r}")
    if upper <= lower:
        raise FitError(f"the upper point ({format_value(upper, unit, 4)}) must be above the lower point "
                       f"({format_value(lower, unit, 4)}): a rising input switches the stage at the upper "
                       "point, a falling one at the lower")


def _check_range(design: Design, upper: float, lower: float) -> None:
    """Targets in the design's unit against the range its input reaches, naming the key that sets
    it: ``front_end.low`` / ``high`` with a front end, ``source.low`` / ``high`` without one."""
    low, high = input_range(design)
    q = lambda x: format_value(x, design.unit, 4)  # noqa: E731
    if design.front_end is None:
        key, reach, signal, it = "source", "signal the stage can see", "signal", "the signal"
    else:
        key, reach, signal, it = "front_end", "value the front end watches", "input", "it"
    if upper > high:
        raise FitError(f"the upper point {q(upper)} is above the highest {reach} ({q(high)}); a rising "
                       f"{signal} would never reach it (set {key}.high if {it} goes higher)")
    if lower < low:
        raise FitError(f"the lower point {q(lower)} is below the lowest {reach} ({q(low)}); a falling "
                       f"{signal} would never reach it (set {key}.low if {it} goes lower)")


def _check_targets(design: Design, upper: float, lower: float) -> None:
    """The stage's own targets (volts at its source) against what the stage can do."""
    _check_order(upper, lower, "V")
    if design.inverting:
        out_high, out_low = _output_levels(design)
        if upper - lower >= out_high - out_low:
            raise FitError(f"a hysteresis of {_volts(upper - lower)} is wider than the output swing allows: "
                           f"the inverting stage feeds only part of the output's swing ({_volts(out_low)} to "
                           f"{_volts(out_high)}) back to the + pin. Use the non-inverting stage, or a wider "
                           "output swing (higher rails or pull-up supply)")


def _held(design: Design, fixed: Mapping[str, float | str], named: Mapping[str, str]) -> dict[str, float]:
    """Held values by parameter name; keys may be positions ("feedback") or paths ("resistors.feedback")."""
    allowed = _positions(design) + (["input"] if design.inverting and design.resistors.input else [])
    out = {}
    for key, value in fixed.items():
        position = str(key).removeprefix("resistors.")
        where = f"{named['fixed']}{key}"
        if position not in allowed:
            raise FitError(f"{where}: not a resistor of this design; allowed: {', '.join(allowed)}")
        try:
            ohms = parse_resistance(value, where)
        except UnitError as exc:
            raise FitError(str(exc)) from None
        if ohms <= 0:
            raise FitError(f"{where}: must be greater than zero, got {value!r}")
        out[part(position).path] = ohms
    return out


def _addable(design: Design) -> list[str]:
    """Legs the fit may add to the + pin, in the order it tries them."""
    legs = ["to_ground", "to_positive"]
    if design.supply.negative != 0:
        legs.append("to_negative")
    if design.inverting and design.reference is not None:
        legs.append("to_reference")
    return [leg for leg in legs if getattr(design.resistors, leg) is None]


def _reference_needed(design: Design, params: list[str], targets: tuple[float, float],
                      bounds: tuple[float, float]) -> str | None:
    """A sentence on the reference that would place both points with these resistors, if any."""
    if design.reference is None or not any(p.startswith("resistors.") for p in params):
        return None
    ref = design.reference
    volts = ref.volts if isinstance(ref, FixedReference) else float(
        divider_thevenin(ref.top, ref.bottom, design.supply.positive, design.supply.negative)[0])
    trial = replace(design, reference=FixedReference(volts))
    trial_params = [p for p in params if p.startswith("resistors.")] + ["reference.volts"]
    found = _exact(trial, trial_params, targets, bounds, _starts(trial, trial_params, bounds))
    if found is None:
        return None
    need, names = float(found[-1]), _names(trial_params[:-1])
    vp, vn = design.supply.positive, design.supply.negative
    if need > vp or need < vn:
        side, rail = ("above", vp) if need > vp else ("below", vn)
        remedy = "use the inverting stage or a higher rail" if need > vp else "use a lower negative rail"
        return (f"with {names} it needs a reference of {_volts(need)}, {side} the {_volts(rail)} rail: "
                f"{remedy}")
    if abs(need - volts) < 1e-4 * max(1.0, abs(volts)):
        return None  # the reference is not what stands in the way
    what = "the divider gives" if isinstance(ref, DividerReference) else "it has"
    return f"with {names} it needs a reference of {_volts(need)}, where {what} {_volts(volts)}"


def _why_not(design: Design, params: list[str], targets: tuple[float, float],
             bounds: tuple[float, float]) -> list[str]:
    """Plain sentences: why no values in range place both points, and what would."""
    out = []
    reference = _reference_needed(design, params, targets, bounds)
    if reference:
        out.append(reference[0].upper() + reference[1:] + ".")
    wide = None if reference else _exact(design, params, targets, _WIDE, _starts(design, params, bounds))
    if wide is not None:
        outside = [f"{part(p).key} {_ohms(v)}" for p, v in zip(params, wide, strict=True)
                   if not bounds[0] <= v <= bounds[1]]
        out.append(f"With {_names(params)} both points need values outside the allowed range "
                   f"({_ohms(bounds[0])} to {_ohms(bounds[1])}): {', '.join(outside)}; widen the range.")
    if not out:
        out.append(f"No values of {_names(params)} between {_ohms(bounds[0])} and {_ohms(bounds[1])} "
                   "place both points.")
    return out


def _names(params: list[str]) -> str:
    names = [part(p).key for p in params]
    return names[0] if len(names) == 1 else f"{', '.join(names[:-1])} and {names[-1]}"


_WHAT_HELPS = "hold a value, narrow the range or use a coarser series"


def _check_size(params: list[str], grid: np.ndarray, series: str, bounds: tuple[float, float], budget: int,
                added: str | None = None) -> None:
    """Refuse, saying what would help, a search too large to finish within ten times its budget."""
    n, k, limit = len(grid), len(params), _REFUSE_BEYOND * budget
    size = search_size(n, k)
    if size <= limit:
        return
    leg = ", a leg the fit added to place both points" if added else ""
    helps = []
    hold = next((h for h in range(1, k) if search_size(n, k - h) <= limit), None)
    if hold is not None:
        helps.append(f"hold {hold} of them at a given value")
    most = next(m for m in range(n, 0, -1) if search_size(m, k) <= limit)
    decades = f" (about {most / len(SERIES[series]):.2g} decades)" if most > 1 else ""
    helps.append(f"narrow the range to at most {most:,} {series} values{decades}" if most > 1
                 else "narrow the range")
    order = list(SERIES)
    coarser = [e for e in order[:order.index(series)]
               if search_size(len(series_values(e, *bounds)), k) <= limit]
    helps.append(f"use a coarser series ({coarser[-1]} or coarser)" if coarser else "use a coarser series")
    raise FitError(f"too many combinations to search: {k} free values ({_names(params)}{leg}), each one "
                   f"of {n:,} {series} values from {_ohms(bounds[0])} to {_ohms(bounds[1])}; the search may "
                   f"have to check about {size:,} combinations of all but one of them, more than "
                   f"{_REFUSE_BEYOND} times its limit of {budget:,} (a few seconds of work). To search, "
                   f"{', '.join(helps[:-1])} or {helps[-1]}")


def _standing_notes(design: Design, held: Mapping[str, float]) -> list[str]:
    notes = []
    if held:
        notes.append("Held as given: " + ", ".join(f"{part(k).key} {_ohms(v, 4)}" for k, v in held.items())
                     + ".")
    if design.inverting and design.resistors.input is not None and "resistors.input" not in held:
        notes.append(f"The input resistor ({_ohms(design.resistors.input)}) carries only the - pin's bias "
                     "current in the inverting stage; it is kept, and its drop is included.")
    if isinstance(design.output, OpenDrain):
        notes.append(f"The pull-up ({_ohms(design.output.pullup)}) is an output-stage choice and is kept; "
                     "its loading of the output is included in every point.")
    return notes


# --- The fit -------------------------------------------------------------------------------------

def _candidate(design: Design, params: list[str], row: np.ndarray, targets: tuple[float, float],
               evaluated: tuple[float, float, float] | None = None) -> Candidate:
    """A candidate from parameter values; the points come from the model."""
    d = with_values(design, dict(zip(params, (float(v) for v in row), strict=True)))
    u, l, cur = evaluated or (float(a[0]) for a in _evaluator(design, params)(row[None, :]))  # noqa: E741
    eu, el = float(u) - targets[0], float(l) - targets[1]
    fitted_divider = any(p.startswith("reference.") for p in params)
    return Candidate(resistors=d.resistors.present(), reference=d.reference if fitted_divider else None,
                     upper=float(u), lower=float(l), error_upper=eu, error_lower=el,
                     worst_error=max(abs(eu), abs(el)), network_current=float(cur), design=d)


def _leg_options(design: Design, params: list[str], targets: tuple[float, float],
                 bounds: tuple[float, float]) -> list[tuple[str, Design, list[str], np.ndarray]]:
    """Legs whose addition places both points exactly in range, most robust first.

    Each entry: the leg, the design with it, the parameters to fit, and an exact solution.  A
    reference divider is first kept as drawn (the leg takes over its job, and five free values
    would make the search slow); only if no leg works that way is it fitted as well.
    """
    divider = [p for p in params if p.startswith("reference.")]
    for free in ([p for p in params if p not in divider], params) if divider else (params,):
        options = []
        for leg in _addable(design):
            trial = with_values(design, {f"resistors.{leg}": math.sqrt(bounds[0] * bounds[1])})
            trial_params = [*free, f"resistors.{leg}"]
            found = _exact(trial, trial_params, targets, bounds, _starts(trial, trial_params, bounds))
            if found is not None:
                options.append((_offset_gain(trial, trial_params, found), leg, trial, trial_params, found))
        if options:
            return [option[1:] for option in sorted(options, key=lambda o: o[0])]
    return []


def _neighbours(grid: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Every combination of the grid values next below and next above each value: (2**k, k)."""
    at = np.clip(np.searchsorted(grid, values), 1, len(grid) - 1)
    pairs = np.stack([grid[at - 1], grid[at]], axis=1)  # (k, 2)
    return np.stack(np.meshgrid(*pairs, indexing="ij"), axis=-1).reshape(-1, len(values))


def _search_order(design: Design, params: list[str], values: np.ndarray) -> np.ndarray:
    """Positions by falling sensitivity of the points (per relative change) at the given values."""
    step = np.exp(np.eye(len(params)) * 1e-3)
    u, l, _ = _evaluator(design, params)(np.vstack([values, values * step]))  # noqa: E741
    gain = np.maximum(np.abs(u[1:] - u[0]), np.abs(l[1:] - l[0]))
    return np.argsort(-gain, kind="stable")


def _offset_gain(design: Design, params: list[str], values: np.ndarray) -> float:
    """How far the points move per volt of comparator offset at these values (from the model).

    A leg whose far end sits near the + pin's switching potential moves the points only through
    the offset and bias current; such a solution has a large gain and is fragile.
    """
    d = with_values(design, {k: float(v) for k, v in zip(params, values, strict=True)})
    offset = d.comparator.offset + np.array([0.0, 1e-3])
    pts = switching_points(d, {"comparator.offset": offset})
    return float(max(abs(np.diff(pts.upper)[0]), abs(np.diff(pts.lower)[0])) / 1e-3)


def fit(design: Design, upper: Aim | None, lower: Aim | None, *, series: str = "E24", min_ohms: float = 1e3,
        max_ohms: float = 10e6, count: int = 5, fixed: Mapping[str, float | str] | None = None,
        add_leg: bool = True, names: Mapping[str, str] | None = None, budget: int = BUDGET,
        progress: Progress | None = None, by: str = "nominal", grades: Grades | None = None,
        min_yield: float = 0.99) -> FitResult:
    """Standard resistor values that place the switching points at ``upper`` and ``lower``.

    Targets are in the design's unit: volts of the signal's open-circuit voltage or, for a design
    with a front end, the watched quantity (battery volts, degrees C): see :func:`_fit_through_input`.

    Parameters
    ----------
    design : Design
        The stage; its resistor values are only a starting point.
    upper, lower : float, (float, float) or None
        Target switching points, in the design's unit.  Ranked by margin or yield, each may be a
        window (lowest, highest; one side may be infinite) or None: the design's window
        (``tolerances.limits``); a target is a window of zero width.
    series : str
        IEC 60063 series the values come from ("E3" to "E192").
    min_ohms, max_ohms : float
        Allowed range for every fitted resistor, ohms.
    count : int
        Candidates to return, best first: 1 to ``MAX_COUNT``.
    fixed : mapping, optional
        Resistors to hold at a given value (ohms or text such as "1M2"), by design-file key
        ("feedback", "input", "to_ground", ..., "reference.top", "reference.bottom").
    add_leg : bool
        Allow the fit to add a leg from the + pin to ground, a rail or the reference when the
        stage as drawn cannot place both points.
    names : mapping, optional
        What the caller's user calls a setting, for the messages: ``series``, ``min_ohms``,
        ``max_ohms``, ``count``, and ``fixed`` the words before a held resistor's key (the
        command line passes ``{"min_ohms": "--min-ohms", "fixed": "--hold ", ...}``).
    budget : int
        Combinations the search may check (:func:`bandcalc.fit.grid_search.search`).  A search
        estimated at more than ten times as many is refused before it starts; one that reaches
        the budget returns the best it found, with ``stopped`` saying they are not proven best.
    progress : callable, optional
        ``progress(checked, budget)`` before each step of the search; it may raise to stop it.
    by : "nominal", "margin" or "yield"
        The ranking (see Returns and :mod:`bandcalc.fit.robust`).
    grades : Grades, optional
        Tolerance grades to choose from for each fitted part (margin and yield rankings): the
        cheapest keeping the margin positive, or the yield at least ``min_yield`` (a fraction).

    Returns
    -------
    FitResult
        Candidates ranked by the larger of the two errors (``by="nominal"``), by the worst-case
        margin over the tolerance box and temperature range (larger first), or by the per-build
        yield; with grades by cost first.  Ties go to the lower network current (the larger, over
        both switching points, of the total current flowing into the + pin from its legs, plus
        the current down a reference divider).

    Raises
    ------
    FitError
        Settings that cannot be used, targets no resistor values can meet, or a search too large
        to answer within seconds; the message says why and what would help.
    """
    named = {"series": "series", "min_ohms": "min_ohms", "max_ohms": "max_ohms", "count": "count",
             "fixed": "fixed.", "upper": "upper", "lower": "lower", "by": "by", "grades": "grades",
             "min_yield": "min_yield"} | dict(names or {})
    if not isinstance(count, int) or isinstance(count, bool) or not 1 <= count <= MAX_COUNT:
        raise FitError(f"{named['count']}: must be a whole number from 1 to {MAX_COUNT}, got {count!r}")
    if not isinstance(budget, int) or isinstance(budget, bool) or budget < 1:
        raise FitError(f"budget: must be a whole number of 1 or more, got {budget!r}")
    settings = dict(series=series, min_ohms=min_ohms, max_ohms=max_ohms, fixed=fixed, add_leg=add_leg,
                    named=named, budget=budget, progress=progress)
    if by not in RANKINGS:
        raise FitError(f"{named['by']}: {by!r} is not a ranking; allowed: {', '.join(RANKINGS)}")
    if by == "nominal":
        if grades is not None:
            raise FitError(f"{named['grades']}: grades are chosen for the margin or yield ranking; rank by "
                           "margin or yield to choose them")
        for key, value in (("upper", upper), ("lower", lower)):
            if not _is_number(value):
                raise FitError(f"{named[key]}: must be a number ({symbol(design.unit)}), got {value!r}")
        return _fit_through_input(design, upper, lower, count, settings)
    if not (isinstance(min_yield, (int, float)) and not isinstance(min_yield, bool) and 0 < min_yield <= 1):
        raise FitError(f"{named['min_yield']}: must be above 0 % and at most 100 %, got {min_yield!r}")
    windows = _windows(design, {"upper": upper, "lower": lower}, named)
    return _fit_for_builds(design, windows, count, settings, by, grades, min_yield)


# --- Fit for what the builds do ----------------------------------------------------------------------

def _windows(design: Design, given: Mapping[str, Aim | None], named: Mapping[str, str]
             ) -> dict[str, tuple[float, float]]:
    """The windows margin and yield are measured against: those given, else the design's own."""
    out = dict(design.tolerances.limits.windows()) if design.tolerances is not None else {}
    unit = design.unit
    for key in ("upper", "lower"):
        value = given[key]
        if value is None:
            if key not in out:
                raise FitError(f"{named[key]}: no window for the {key} point; give one here or as "
                               f"tolerances.limits.{key} in the design file")
            continue
        lo, hi = window(value) if isinstance(value, tuple) or _is_number(value) else (math.nan, math.nan)
        if math.isnan(lo) or math.isnan(hi) or lo > hi or (math.isinf(lo) and math.isinf(hi)):
            raise FitError(f"{named[key]}: give a value or a window lowest,highest ({symbol(unit)}), the "
                           f"lowest not above the highest, one side at most open; got {value!r}")
        out[key] = (lo, hi)
    return out


# What the nominal fit to the windows' middles could not do: notes of a fit for the builds.
_AT_MIDDLES = "At the windows' middles: "


def _aim(w: tuple[float, float]) -> float:
    lo, hi = w
    return hi if math.isinf(lo) else lo if math.isinf(hi) else 0.5 * (lo + hi)


def _watched_evaluator(design: Design, params: list[str], middle: float) -> Evaluate:
    """Nominal points in the design's unit (through any front end) and the stage's network current."""
    stage = stage_design(design, middle)
    base = parameters(stage)

    def evaluate(values: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        cols = {k: values[:, j] for j, k in enumerate(params)}
        pts = switching_points(stage, cols)
        w = pts if stage is design else design_points(design, cols)
        return w.upper, w.lower, _network_current(stage, {**base, **cols}, pts)

    return evaluate


def _with_tolerances(design: Design, windows: Mapping[str, tuple[float, float]],
                     grades: Mapping[str, float] | None) -> Design:
    """The design with the windows as its tolerances' limits and any grades as its parts' tolerances."""
    graded = _with_grades(design, grades)
    tol = graded.tolerances or Tolerances()
    edge = lambda x: None if math.isinf(x) else x  # noqa: E731
    limits = Limits(**{q: (edge(lo), edge(hi)) for q, (lo, hi) in windows.items()})
    return replace(graded, tolerances=replace(tol, limits=limits))


def _with_grades(design: Design, grades: Mapping[str, float] | None) -> Design:
    """The design with ``grades`` (design-file key -> percent) as those parts' own tolerances."""
    if not grades:
        return design
    tol = design.tolerances or Tolerances()
    parts = {**dict(tol.resistors.parts), **grades}
    return replace(design, tolerances=replace(tol, resistors=PerResistor(tol.resistors.default,
                                                                         tuple(parts.items()))))


def _fit_for_builds(design: Design, windows: dict[str, tuple[float, float]], count: int, settings: dict,
                    by: str, grades: Grades | None, min_yield: float) -> FitResult:
    """The fit for what the builds do; where it adds a + pin leg, also without it.

    Placing both points exactly may need a third resistor where the windows do not: the leg is
    kept only where it gives the best candidate a larger margin than the stage as drawn, and a
    note says by how much (a leg that moves a point by a millivolt or two against tens of
    millivolts of spread is a part for nothing).
    """
    with_leg = _ranked_for_builds(design, windows, count, settings, by, grades, min_yield)
    if with_leg.added_leg is None or not with_leg.candidates:
        return with_leg
    try:
        drawn = _ranked_for_builds(design, windows, count, {**settings, "add_leg": False}, by, grades,
                                   min_yield)
    except FitError:
        return with_leg
    leg = f"the added resistor (resistors.{with_leg.added_leg})"
    unit = design.unit
    gain = _best_margin(with_leg) - _best_margin(drawn)
    if not math.isfinite(gain) or gain <= 0:
        note = (f"The stage as drawn does as well for the builds as with {leg}, which would only place the "
                "points' nominal values exactly: the fit leaves it out.")
        return replace(drawn, notes=(note, *(n for n in drawn.notes if not n.startswith(_AT_MIDDLES))))
    note = (f"Without {leg} the best margin is {format_value(_best_margin(drawn), unit, 3)}: the resistor "
            f"gains {format_value(gain, unit, 3)} of margin (fit with no extra leg to leave it out).")
    return replace(with_leg, notes=(*with_leg.notes, note))


def _best_margin(result: FitResult) -> float:
    best = result.candidates[0].margin if result.candidates else None
    return -math.inf if best is None else float(best)


def _ranked_for_builds(design: Design, windows: dict[str, tuple[float, float]], count: int, settings: dict,
                       by: str, grades: Grades | None, min_yield: float) -> FitResult:
    """Which resistors move and where the search starts come from the nominal fit to the windows'
    middles; the candidates from :func:`bandcalc.fit.robust.rank` over every combination."""
    targets = _aim(windows["upper"]), _aim(windows["lower"])
    inner = _fit_through_input(design, *targets, count, settings)
    base, params = inner.design, [part(p).path for p in inner.fitted]
    grid = _grid(settings["series"], settings["min_ohms"], settings["max_ohms"], settings["named"])
    keys = [part(p).key for p in params]
    seeds = np.array([[c.value(p) for p in inner.fitted] for c in inner.candidates]).reshape(-1, len(params))

    def design_of(values: np.ndarray, percents: np.ndarray) -> Design:
        d = with_values(base, dict(zip(params, (float(v) for v in values), strict=True)))
        return _with_tolerances(d, windows, dict(zip(keys, (float(p) for p in percents), strict=True)))

    try:
        corners = CornerModel(base, params)
        evaluate = _watched_evaluator(base, params, 0.5 * sum(targets))
        ranked = rank(by, corners, evaluate, grid, windows, count, budget=settings["budget"],
                      design_of=design_of, progress=settings["progress"], seeds=seeds, grades=grades,
                      min_yield=min_yield)
    except (MarginError, GradeError) as exc:
        raise FitError(str(exc)) from None
    found = ranked.found
    candidates = []
    for i, values in enumerate(found.values):
        c = _candidate(base, params, values, targets, (found.upper[i], found.lower[i], found.current[i]))
        m = float(found.margin[i])
        lacking = found.lacking[i]
        why = None if math.isfinite(m) else (
            f"a corner of the tolerance box has no {lacking or 'switching'} point somewhere in the range")
        cost = None if ranked.cost is None or math.isnan(ranked.cost[i]) else float(ranked.cost[i])
        candidates.append(replace(
            c, margin=m if math.isfinite(m) else None, margin_why=why,
            grades=None if grades is None else dict(zip(keys, map(float, found.percents[i]), strict=True)),
            cost=cost, build_yield=None if ranked.yields is None else ranked.yields[i],
            not_told_apart=ranked.apart[i] if ranked.apart else ()))
    notes = [*inner.notes, *(_AT_MIDDLES + p for p in inner.problems), *ranked.notes]
    problems = _builds_problems(candidates, by, grades, min_yield, design.unit)
    stopped = inner.stopped
    if not ranked.proven:
        stopped = (f"Not proven the best: {ranked.why_not}. For a proven ranking {_WHAT_HELPS}.")
    assumptions = list(simplifications(corners.model))
    if by == "yield":
        assumptions.append(f"Yield: {YIELD_BUILDS:,} builds per candidate (seed {DEFAULT_SEED}, the same "
                           "builds for every candidate), each over the whole temperature range; 95 % Wilson "
                           "interval.")
    return replace(inner, candidates=tuple(candidates), notes=tuple(notes), problems=tuple(problems),
                   checked=inner.checked + found.checked, stopped=stopped, by=by, windows=dict(windows),
                   grades=grades, min_yield=min_yield if by == "yield" and grades is not None else None,
                   assumptions=tuple(assumptions))


def _builds_problems(candidates: list[Candidate], by: str, grades: Grades | None, min_yield: float,
                     unit: str) -> list[str]:
    if not candidates:
        return ["No candidate was found."]
    best = candidates[0]
    if grades is not None and best.cost is None:
        need = ("keeps every build inside the windows" if by == "margin"
                else f"gives a yield of {100 * min_yield:g} %")
        return [f"No grade offered (down to {grades.tightest:g} %) {need} for any candidate; the candidates "
                "are shown at the tightest grade."]
    if by == "margin" and (best.margin is None or best.margin <= 0):
        worst = ("no finite margin" if best.margin is None
                 else f"a margin of {format_value(best.margin, unit, 3)}")
        return [f"No candidate keeps every build inside the windows: the best has {worst}. Widen the "
                "windows, use tighter parts, or narrow the temperature range."]
    return []


def _fit_stage(design: Design, upper: float, lower: float, count: int, *, series: str, min_ohms: float,
               max_ohms: float, fixed: Mapping[str, float | str] | None, add_leg: bool,
               named: Mapping[str, str], budget: int, progress: Progress | None) -> FitResult:
    """The fit of a stage without a front end (targets in volts at its signal source)."""
    grid = _grid(series, min_ohms, max_ohms, named)
    series = series.strip().upper()
    _check_targets(design, upper, lower)
    held = _held(design, fixed or {}, named)
    base = with_values(design, held)
    targets, bounds = (float(upper), float(lower)), (float(min_ohms), float(max_ohms))
    params = [part(p).path for p in _positions(base) if part(p).path not in held]
    if not params:
        raise FitError("nothing to fit: every resistor of the stage is held; free at least one "
                       f"of {', '.join(_positions(base))}")
    _check_size(params, grid, series, bounds, budget)
    notes, problems = _standing_notes(base, held), []
    solution = _exact(base, params, targets, bounds, _starts(base, params, bounds))
    added = None
    if solution is None:
        why = _why_not(base, params, targets, bounds)
        options = _leg_options(base, params, targets, bounds)
        if options and add_leg:
            kept = "reference.top" in params and "reference.top" not in options[0][2]
            added, base, params, solution = options[0]
            notes.append(f"The stage as drawn cannot place both points. {' '.join(why)} The fit adds a "
                         f"resistor from the + pin to {part(added).far_end} (resistors.{added})"
                         + (", of the legs that work the one least sensitive to the comparator's offset."
                            if len(options) > 1 else ".")
                         + (" The reference divider is kept as drawn." if kept else ""))
        else:
            problems = why
            if options:
                problems.append(f"A resistor from the + pin to {part(options[0][0]).far_end} would make it "
                                "possible; the fit adds one unless told not to.")
            problems.append("The candidates are the closest the stage comes.")
    if added:
        _check_size(params, grid, series, bounds, budget, added)
    # Search with the resistors the points are most sensitive to outermost (much faster; the
    # answer does not depend on the order), and report in the design's own order; the standard
    # values around the exact solution first.
    start = solution if solution is not None else _starts(base, params, bounds)[0]
    order = _search_order(base, params, start)
    found = search(_evaluator(base, [params[i] for i in order]), grid, len(params), *targets, count,
                   budget=budget, progress=progress, seeds=_neighbours(grid, start)[:, order])
    if not len(found.values):
        raise FitError(f"the search reached its limit of {budget:,} combinations checked before it "
                       f"evaluated any candidate: {_WHAT_HELPS}")
    stopped = None if found.proven else (
        f"The search stopped at its limit of {budget:,} combinations checked: the candidates are the best it "
        f"found, not proven the best. For a proven ranking {_WHAT_HELPS}.")
    found = replace(found, values=found.values[:, np.argsort(order)])
    candidates = tuple(_candidate(base, params, found.values[i], targets,
                                  (found.upper[i], found.lower[i], found.current[i]))
                       for i in range(len(found.values)))
    exact = None
    if solution is not None:
        nearest = _exact(base, params, targets, bounds, found.values[:1])
        exact = _candidate(base, params, solution if nearest is None else nearest, targets)
        if len(params) > 2:
            notes.append(f"With {len(params)} free values the exact solutions form a family; the one shown "
                         "is the nearest to the best candidate.")
    return FitResult(design=base, upper=targets[0], lower=targets[1], series=series,
                     min_ohms=bounds[0], max_ohms=bounds[1], fitted=tuple(part(p).key for p in params),
                     candidates=candidates, exact=exact, added_leg=added, notes=tuple(notes),
                     problems=tuple(problems), checked=found.checked, stopped=stopped)


# With a thermistor the stage's source resistance differs a little between the two target
# temperatures; the stage is fitted at their middle and this many times more candidates are
# re-ranked exactly through the front end.
_INPUT_POOL = 4


def _fit_through_input(design: Design, upper: float, lower: float, count: int, settings: dict) -> FitResult:
    """Fit a design to targets in its own unit, through whatever lies ahead of the stage.

    The targets map to targets at the stage's source (:func:`bandcalc.model.points.stage_targets`;
    exact for a divider or a linear sensor, whose resistance is fixed, and the targets themselves
    without a front end).  The stage is fitted as it sees its input; where the map is not the
    identity, every candidate is evaluated through the whole front end and stage
    (:func:`bandcalc.model.points.design_points`) and ranked again on those exact figures.
    """
    unit = design.unit
    _check_order(upper, lower, unit)
    _check_range(design, upper, lower)
    try:
        t = stage_targets(design, upper, lower)
        stage = stage_design(design, 0.5 * (upper + lower))
    except ValueError as exc:
        raise FitError(f"targets {format_value(upper, unit)} / {format_value(lower, unit)}: {exc}") from None
    s_up, s_low = sorted((float(t.upper), float(t.lower)), reverse=True)
    if not (math.isfinite(s_up) and math.isfinite(s_low)):
        raise FitError(f"targets {format_value(upper, unit)} / {format_value(lower, unit)}: outside what "
                       "the front end can map to the stage; check the front end's range")
    if (s_up, s_low) == (upper, lower) and t.upper_resistance == t.lower_resistance:
        return _fit_stage(stage, s_up, s_low, count, **settings)  # the stage's own targets
    inner = _fit_stage(stage, s_up, s_low, max(count * _INPUT_POOL, 20), **settings)

    def watched(c: Candidate) -> Candidate:
        full = apply_candidate(replace(design, resistors=inner.design.resistors), c)
        w = design_points(full)
        eu, el = float(w.upper) - upper, float(w.lower) - lower
        worst = max(abs(eu), abs(el)) if math.isfinite(eu + el) else math.inf
        return replace(c, upper=float(w.upper), lower=float(w.lower), error_upper=eu, error_lower=el,
                       worst_error=worst, design=full)

    ranked = sorted((watched(c) for c in inner.candidates), key=lambda c: (c.worst_error, c.network_current))
    note = (f"Targets of {format_value(upper, unit)} and {format_value(lower, unit)} map to "
            f"{format_value(s_up, 'V')} and {format_value(s_low, 'V')} at the stage's source; every "
            "candidate's points are computed through the front end and stage together.")
    return replace(inner, design=replace(design, resistors=inner.design.resistors,
                                         reference=inner.design.reference),
                   upper=float(upper), lower=float(lower), candidates=tuple(ranked[:count]),
                   exact=None if inner.exact is None else watched(inner.exact),
                   notes=(note, *inner.notes),
                   problems=tuple(f"At the stage: {p}" for p in inner.problems))


def apply_candidate(design: Design, candidate: Candidate) -> Design:
    """The design with a candidate's resistors (and fitted divider) and, where the fit chose them, its
    grades as the tolerances of those parts; everything else unchanged."""
    return _with_grades(replace(design, resistors=Resistors(**candidate.resistors),
                                reference=candidate.reference or design.reference), candidate.grades)


def candidate_to_dict(c: Candidate) -> dict:
    """JSON shape of a candidate: resistors and any fitted divider in the design file's shape."""
    out: dict = {"resistors": dict(c.resistors)}
    if c.reference is not None:
        out["reference"] = {"divider": {"top": c.reference.top, "bottom": c.reference.bottom}}
    out.update(upper=c.upper, lower=c.lower, error_upper=c.error_upper, error_lower=c.error_lower,
               worst_error=c.worst_error, network_current=c.network_current)
    if c.margin is not None or c.margin_why is not None:
        out.update(margin=c.margin, margin_why=c.margin_why)
    if c.grades is not None:
        out.update(grades=dict(c.grades), cost=c.cost)
    if c.build_yield is not None or c.margin_why is not None or c.not_told_apart:
        y = c.build_yield
        out["yield"] = None if y is None else {
            "fraction": y.fraction, "low": y.low, "high": y.high, "confidence": 0.95, "passed": y.passed,
            "samples": y.samples, "not_told_apart": list(c.not_told_apart)}
    return out


def builds_columns(r: FitResult) -> list[tuple[str, list[str]]]:
    """The columns a fit ranked by what the builds do adds, as text (heading, one cell per candidate):
    margin; yield with its 95 % interval and the ranks it is not told apart from; grades and cost."""
    if r.by == "nominal":
        return []
    rows, unit = r.candidates, r.design.unit
    out = [("margin", [format_value(c.margin, unit, 3) if c.margin is not None else "none" for c in rows])]
    if r.by == "yield":
        out.append(("yield (95 %)", ["not run" if (y := c.build_yield) is None else
                                     f"{100 * y.fraction:.2f} % ({100 * y.low:.2f} to {100 * y.high:.2f})"
                                     for c in rows]))
        out.append(("not told apart from", [", ".join(f"#{j}" for j in c.not_told_apart) for c in rows]))
    if r.grades is not None:
        out.append(("grades", [" ".join(f"{c.grades[p]:g} %" for p in r.fitted) if c.grades else ""
                               for c in rows]))
        out.append(("cost", ["none will do" if c.cost is None else f"{c.cost:g}" for c in rows]))
    return out


def fit_to_dict(r: FitResult) -> dict:
    """JSON shape of a fit: candidates best first, the exact solution, notes and problems, and
    whether the ranking is proven (``stopped`` says why not, else null)."""
    return {"targets": {"upper": r.upper, "lower": r.lower}, "series": r.series,
            "min_ohms": r.min_ohms, "max_ohms": r.max_ohms, "fitted": list(r.fitted),
            "added_leg": r.added_leg, "candidates": [candidate_to_dict(c) for c in r.candidates],
            "exact": None if r.exact is None else candidate_to_dict(r.exact),
            "notes": list(r.notes), "problems": list(r.problems), "checked": r.checked,
            "proven": r.stopped is None, "stopped": r.stopped, "by": r.by,
            "windows": None if r.windows is None else
            {q: [None if math.isinf(v) else v for v in w] for q, w in r.windows.items()},
            "grades": None if r.grades is None else
            [{"percent": p, "cost": c} for p, c in zip(r.grades.percents, r.grades.costs, strict=True)],
            "min_yield": r.min_yield, "assumptions": list(r.assumptions)}
