"""What varies from one build to the next, and how it enters the stage model over temperature.

Every varied quantity is a :class:`Factor` with a range ``[low, high]`` in its own unit: a part
value at 25 C, a rail, an output level within its data-sheet limits, the comparator's offset and
currents, or a temperature coefficient.  A factor is driven by a unit variable ``z`` in [-1, 1]
(the tolerance box); Monte Carlo draws ``z`` as :mod:`bandcalc.spread.draws` says.

One draw of every factor is a *build*.  The temperature is not drawn: it is the operating range
(``tolerances.temperature``) every build must work over, and :class:`VariedModel` evaluates a
build at any temperature:

- each resistor is R25 (1 + alpha (T - 25 C)) with its own coefficient alpha, a factor within
  +/- ``resistor_tempco``; in a resistor network alpha is the network's common coefficient (within
  +/- its ``tempco``) plus the member's own share (within +/- ``tracking``/2);
- the comparator's offset is offset25 + drift (T - 25 C), the drift a factor within +/- its bound;
- a fixed reference drifts by the box method: over the range it stays within
  V25 (1 +/- drift (high - low)) with no shape assumed, so the model takes it at either edge of
  that box (``edge`` -1 or +1) at every temperature; the drift is a factor within +/- its bound.

:class:`VariedModel` builds the model parameters and evaluates the points through
:func:`bandcalc.model.points.design_points`, many builds, temperatures and edges in one call.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from bandcalc.errors import BandcalcError
from bandcalc.model.design import Design, DividerReference, FixedReference, OpenDrain
from bandcalc.model.front_end import front_end_of, front_end_tolerances
from bandcalc.model.parts import parameters, part, resistors_of, tolerance_of
from bandcalc.model.points import design_points
from bandcalc.model.tolerances import NOMINAL_CELSIUS, Tolerances
from bandcalc.model.units import format_si, format_value
from bandcalc.spread.draws import Stream

__all__ = ["QUANTITIES", "Factor", "SpreadError", "VariedModel", "factors"]

QUANTITIES = ("upper", "lower", "hysteresis")
_STEP = 1e-3  # finite-difference step in unit-variable terms
_TEMPCO = ".tempco"  # a coefficient factor's name: the resistor's path (or network) and this


class SpreadError(BandcalcError):
    """A spread request that cannot be run; the message names the setting and what is allowed."""


@dataclass(frozen=True)
class Factor:
    """One varied quantity, in its own unit, with its range and how Monte Carlo draws it.

    ``name`` is the design-file parameter path ("resistors.feedback", "supply.positive",
    "reference.volts", "comparator.offset", "output.high_drop", ...), a resistor's temperature
    coefficient (its path and ".tempco", ppm/K), a network's common coefficient
    ("resistor_networks.RN1.tempco"), "reference.drift" (ppm/K, box method) or
    "comparator.offset_drift" (V/K).
    """

    name: str
    unit: str
    nominal: float
    low: float
    high: float
    distribution: str
    origin: str

    @property
    def centre(self) -> float:
        return 0.5 * (self.low + self.high)

    @property
    def sigma_unit(self) -> float:
        """Standard deviation of the unit variable: 1/3 (normal, bound = 3 sigma), that of the normal
        cut at 3 sigma, or 1/sqrt(3) (uniform)."""
        if self.distribution == "uniform":
            return 1.0 / math.sqrt(3.0)
        if self.distribution == "screened":  # variance of a standard normal cut at +/-3, over 9
            cut = 2.0 * 3.0 * math.exp(-4.5) / math.sqrt(2.0 * math.pi) / math.erf(3.0 / math.sqrt(2.0))
            return math.sqrt(1.0 - cut) / 3.0
        return 1.0 / 3.0

    @property
    def coefficient(self) -> bool:
        """Whether the factor acts through the temperature (a tempco or a drift)."""
        return self.name.endswith(_TEMPCO) or self.name.endswith("drift")

    def at(self, z: float | np.ndarray) -> float | np.ndarray:
        """The factor's value for unit variable ``z`` (-1: low, 0: centre, +1: high)."""
        return self.centre + 0.5 * (self.high - self.low) * z

    def format(self, value: float) -> str:
        """A value of this factor for people: "+100 ppm/K", "4.7 kOhm", "3950 K"."""
        if self.unit == "ppm/K":
            return f"{value:+g} ppm/K"
        return format_value(value, self.unit, 4)  # kelvin (Beta) plain, volts and amperes prefixed

    def draw(self, rng: np.random.Generator, n: int, out: np.ndarray | None = None) -> np.ndarray:
        """``n`` random values as Monte Carlo draws them (``out``, shape ``(n,)``, is filled if given)."""
        z = Stream(self.distribution, rng).take(n, out)
        z *= 0.5 * (self.high - self.low)
        z += self.centre
        return z


def _percent_factor(path: str, unit: str, nominal: float, percent: float, dist: str, why: str) -> Factor:
    half = abs(nominal) * percent / 100
    return Factor(path, unit, nominal, nominal - half, nominal + half, dist, why)


class _Builder:
    """Collects the factors of one design under one tolerances section, with notes on what is unused."""

    def __init__(self, design: Design, tol: Tolerances) -> None:
        self.design, self.tol, self.dist = design, tol, tol.distribution
        self.nominal = parameters(design)
        self.factors: list[Factor] = []
        self.notes: list[str] = []
        self.tempco: dict[str, tuple[str, ...]] = {}  # resistor path -> the factors adding to its alpha
        self.fixed = isinstance(design.reference, FixedReference)
        self.kind = "a divider" if isinstance(design.reference, DividerReference) else "none"
        self.coefficients = False  # whether any resistor has a temperature coefficient

    def add(self, name: str, unit: str, nominal: float, low: float, high: float, origin: str) -> None:
        self.factors.append(Factor(name, unit, nominal, low, high, self.dist, origin))

    def resistors(self) -> None:
        tol, ohms_by_key = self.tol, resistors_of(self.design)
        given = {n for n, _ in tol.resistors.parts + tol.resistor_tempco.parts}
        given |= {n for net in tol.resistor_networks for n in net.resistors}
        for name in sorted(given - set(ohms_by_key)):
            self.notes.append(f"tolerances: this design has no {name} resistor; its entry is not used.")
        for key, ohms in ohms_by_key.items():
            path, t = part(key).path, tolerance_of(self.design, key, tol)
            if t.percent > 0:
                self.factors.append(_percent_factor(path, "Ohm", ohms, t.percent, self.dist,
                                                    f"{t.percent:g} %, {t.why}"))
        for key in ohms_by_key:
            path, net = part(key).path, tol.network_of(key)
            if net is None:
                ppm = tol.resistor_tempco.get(key) or 0.0
                self.coefficients = self.coefficients or bool(ppm)
                if ppm and tol.temperature is not None:
                    self.add(path + _TEMPCO, "ppm/K", 0.0, -ppm, ppm, f"+/-{ppm:g} ppm/K, its own")
                    self.tempco[path] = (path + _TEMPCO,)
                continue
            self.coefficients = self.coefficients or bool(net.tempco or net.tracking)
            if tol.temperature is None:
                continue
            common = f"resistor_networks.{net.name}{_TEMPCO}"
            if net.tempco and not any(f.name == common for f in self.factors):
                self.add(common, "ppm/K", 0.0, -net.tempco, net.tempco,
                         f"+/-{net.tempco:g} ppm/K, {net.name}")
            own = (path + _TEMPCO,) if net.tracking else ()
            if net.tracking:
                self.add(path + _TEMPCO, "ppm/K", 0.0, -0.5 * net.tracking, 0.5 * net.tracking,
                         f"+/-{0.5 * net.tracking:g} ppm/K, tracking within {net.name}")
            if own or net.tempco:
                self.tempco[path] = (*((common,) if net.tempco else ()), *own)

    def front_end(self) -> None:
        units = {"front_end.r25": "Ohm", "front_end.beta": "K", "front_end.offset": "V",
                 "front_end.volts_per_unit": "V"}
        for key, (low, high, origin) in front_end_tolerances(front_end_of(self.design)).items():
            self.add(key, units[key], self.nominal[key], low, high, origin)

    def rails_and_output(self) -> None:
        tol, nominal, out = self.tol, self.nominal, self.design.output
        limits = tol.output.given()
        allowed = ("low_volts", "pullup_volts") if isinstance(out, OpenDrain) else \
            ("high_drop", "low_drop", "resistance")
        for key in (k for k in limits if k not in allowed):
            self.notes.append(f"tolerances.output.{key}: not an entry for this design's {out.kind} output "
                              f"(it takes {', '.join(allowed)}); not used.")
        rails = ["supply.positive", "supply.negative", "output.pullup_volts", "output.low_volts"]
        for key in rails:
            field = key.removeprefix("output.")
            if field in limits and field in allowed:
                continue
            if key in nominal and nominal[key] != 0 and tol.supply > 0:
                self.factors.append(_percent_factor(key, "V", nominal[key], tol.supply, self.dist,
                                                    f"{tol.supply:g} %"))
        for field in (k for k in allowed if k in limits):
            key = f"output.{field}"
            value = self._output_nominal(field)
            least, greatest = limits[field]
            if not least <= value <= greatest:
                unit = "ohm" if field == "resistance" else "V"
                raise SpreadError(f"tolerances.output.{field}: [{least:g}, {greatest:g}] {unit} must include "
                                  f"the design's output.{field}, {value:g} {unit}")
            self.add(key, "Ohm" if field == "resistance" else "V", value, least, greatest,
                     f"data-sheet limits {format_si(least, 'Ohm' if field == 'resistance' else 'V')} "
                     f"to {format_si(greatest, 'Ohm' if field == 'resistance' else 'V')}")

    def _output_nominal(self, field: str) -> float:
        key = f"output.{field}"
        if key in self.nominal:
            return self.nominal[key]
        return self.nominal["supply.negative" if field == "low_volts" else "supply.positive"]

    def reference_and_comparator(self) -> None:
        tol, nominal = self.tol, self.nominal
        if tol.reference > 0:
            if self.fixed:
                self.factors.append(_percent_factor("reference.volts", "V", nominal["reference.volts"],
                                                    tol.reference, self.dist, f"{tol.reference:g} %"))
            else:
                self.notes.append("tolerances.reference is for a fixed reference; this design's reference is "
                                  f"{self.kind} (a divider's resistors take tolerances.resistors and it "
                                  "follows the supply).")
        for key, unit, bound in (("comparator.offset", "V", tol.offset),
                                 ("comparator.bias_current", "A", tol.bias_current),
                                 ("comparator.offset_current", "A", tol.offset_current)):
            if bound > 0:
                v = nominal[key]
                self.add(key, unit, v, v - bound, v + bound, f"+/-{format_si(bound, unit)}")
        if tol.comparator_hysteresis is not None:
            least, greatest = tol.comparator_hysteresis
            v = nominal["comparator.hysteresis"]
            if not least <= v <= greatest:
                raise SpreadError(f"tolerances.comparator_hysteresis: [{least:g}, {greatest:g}] V must "
                                  f"include the design's comparator.hysteresis, {v:g} V")
            self.add("comparator.hysteresis", "V", v, least, greatest,
                     f"data-sheet limits {format_si(least, 'V')} to {format_si(greatest, 'V')}")

    def drifts(self) -> tuple[float, float] | None:
        """The drift factors; returns the temperature range the build works over (None: 25 C only)."""
        tol = self.tol
        drifts = [("reference.drift", "ppm/K", tol.reference_drift if self.fixed else 0.0),
                  ("comparator.offset_drift", "V/K", tol.offset_drift)]
        if tol.reference_drift and not self.fixed:
            self.notes.append("tolerances.reference_drift is for a fixed reference; "
                              f"this design's reference is {self.kind}.")
        moved = self.coefficients or any(bound for _, _, bound in drifts)
        if tol.temperature is None:
            if moved:
                self.notes.append("tolerances: temperature coefficients are given but no temperature range; "
                                  "add \"temperature\": [lowest, highest] in degrees Celsius.")
            return None
        if not moved:
            self.notes.append("tolerances.temperature: no temperature coefficient or drift is given, so the "
                              "temperature moves nothing.")
        for key, unit, bound in drifts:
            if bound > 0:
                box = unit == "ppm/K"
                origin = f"+/-{bound:g} ppm/K, box method" if box else f"+/-{format_si(bound, unit)}"
                self.add(key, unit, 0.0, -bound, bound, origin)
        return tol.temperature


def factors(design: Design, tolerances: Tolerances | None = None) -> tuple[Factor, ...]:
    """The quantities that vary in a design under its tolerances (the design's own if not given)."""
    return tuple(VariedModel(design, tolerances).factors)


class VariedModel:
    """The stage model driven by factor values: builds the parameters and evaluates the points.

    ``temperature`` is the operating range (C) or None; ``moves`` says whether anything in a
    build moves with temperature, and ``box`` whether the reference drifts within a box.
    """

    def __init__(self, design: Design, tolerances: Tolerances | None) -> None:
        self.design = design
        self.notes: list[str] = []
        tol = tolerances if tolerances is not None else design.tolerances
        if tol is None:
            tol = Tolerances()
            self.notes.append("No tolerances section: resistors at the usual tolerance of their series, "
                              "every other part exact, at 25 °C.")
        self.tolerances = tol
        build = _Builder(design, tol)
        build.resistors()
        build.front_end()
        build.rails_and_output()
        build.reference_and_comparator()
        self.temperature = build.drifts()
        self.factors: list[Factor] = build.factors
        self.tempco = build.tempco
        self.notes += build.notes
        self.nominal = build.nominal
        names = {f.name for f in self.factors}
        self.box = "reference.drift" in names
        self.moves = bool(self.tempco) or "comparator.offset_drift" in names
        if self.temperature is None:
            self.box = self.moves = False
        # The points are linear in the reference where the front end's Thevenin equivalent does not
        # depend on it (every source enters the network linearly; an affine front end maps linearly).
        self.linear_in_reference = front_end_of(design).affine

    @property
    def middle(self) -> float:
        """The middle of the temperature range (25 C without one)."""
        return NOMINAL_CELSIUS if self.temperature is None else 0.5 * sum(self.temperature)

    def values(self, x: Mapping[str, np.ndarray], celsius: float | np.ndarray = NOMINAL_CELSIUS,
               edge: float | np.ndarray = 0.0) -> dict[str, np.ndarray]:
        """Model parameters from factor values at ``celsius`` with the reference at ``edge`` of its box.

        ``edge`` -1 and +1 are the box's lower and upper edge (0: the reference at V25); all
        arguments broadcast.
        """
        out = {k: v for k, v in x.items() if k in self.nominal or k in ("output.pullup_volts",
                                                                          "output.low_volts")}
        if self.temperature is None:
            return out
        d_t = np.asarray(celsius, dtype=float) - NOMINAL_CELSIUS
        for path, names in self.tempco.items():
            alpha = sum(x[n] for n in names if n in x)
            if isinstance(alpha, int):  # nothing drawn for this resistor's coefficient
                continue
            out[path] = out.get(path, self.nominal[path]) * (1.0 + 1e-6 * alpha * d_t)
        if "reference.drift" in x:
            low, high = self.temperature
            v = out.get("reference.volts", self.nominal["reference.volts"])
            out["reference.volts"] = v * (1.0 + 1e-6 * (high - low) * x["reference.drift"] * edge)
        if "comparator.offset_drift" in x:
            v = out.get("comparator.offset", self.nominal["comparator.offset"])
            out["comparator.offset"] = v + x["comparator.offset_drift"] * d_t
        return out

    def points(self, x: Mapping[str, np.ndarray], celsius: float | np.ndarray = NOMINAL_CELSIUS,
               edge: float | np.ndarray = 0.0) -> dict[str, np.ndarray]:
        """Upper point, lower point and hysteresis in the design's unit; arrays as the arguments broadcast."""
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            pts = design_points(self.design, self.values(x, celsius, edge))
            upper, lower = np.asarray(pts.upper, dtype=float), np.asarray(pts.lower, dtype=float)
            return {"upper": upper, "lower": lower, "hysteresis": upper - lower}

    def evaluate(self, x: Mapping[str, np.ndarray], n: int) -> dict[str, np.ndarray]:
        """Points for ``n`` builds at the middle of the range, the reference at V25 (shape ``(n,)``)."""
        return {q: np.broadcast_to(v, (n,)) for q, v in self.points(x, self.middle).items()}

    def unit_values(self, z: np.ndarray) -> dict[str, np.ndarray]:
        """Factor values for rows of unit variables, shape (n, number of factors)."""
        return {f.name: f.at(z[:, i]) for i, f in enumerate(self.factors)}

    def corner(self, z: np.ndarray) -> dict[str, float]:
        return {f.name: float(f.at(z[i])) for i, f in enumerate(self.factors)}

    def gradient(self) -> dict[str, np.ndarray]:
        """d(quantity)/dz for each factor at the centre of the box, by central differences.

        A part value's derivative is taken at the middle of the temperature range.  A coefficient
        acts through coefficient x (T - 25 C), so its derivative is taken at 25 C + the root mean
        square of (T - 25 C) over the range, the temperature spread evenly over it: that makes the
        first-order variance of the product exact.  The reference's drift is taken at the upper
        edge of its box, its sign standing for the edge.
        """
        k = len(self.factors)
        z = np.zeros((2 * k, k))
        z[np.arange(k), np.arange(k)] = _STEP
        z[k + np.arange(k), np.arange(k)] = -_STEP
        celsius = np.full(2 * k, self.middle)
        if self.temperature is not None:
            low, high = self.temperature
            centre = 0.5 * (low + high)
            rms = math.sqrt((centre - NOMINAL_CELSIUS) ** 2 + (high - low) ** 2 / 12)
            for i, f in enumerate(self.factors):
                if f.coefficient:
                    celsius[[i, k + i]] = NOMINAL_CELSIUS + rms
        q = self.points(self.unit_values(z), celsius, 1.0)
        return {name: np.broadcast_to(q[name], (2 * k,))[:k] / (2 * _STEP)
                - np.broadcast_to(q[name], (2 * k,))[k:] / (2 * _STEP) for name in QUANTITIES}
