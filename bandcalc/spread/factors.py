"""What varies in a design, and how it enters the stage model.

Every varied quantity is a :class:`Factor` with a range ``[low, high]`` in its own unit: a part
value at 25 C, a rail, the comparator's offset and bias current, the temperature, or a drift
coefficient.  A factor is driven by a unit variable ``z`` in [-1, 1] (the tolerance box);
Monte Carlo draws ``z`` normal with the bound at 3 sigma, or uniform.

Over temperature, a resistor is ``R25 (1 + tempco (T - 25 C))`` (linear coefficient, common
practice), with the coefficient its kind shares, so like resistors drift together; a fixed
reference is ``V25 (1 + drift (T - 25 C))`` and the offset ``offset25 + drift (T - 25 C)``,
each drift coefficient a factor of its own within +/- its bound, as its sign is unknown.
:class:`VariedModel` builds the model parameters from factor values and evaluates the points
through :func:`bandcalc.model.network.switching_points`, many sets of values in one call.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from bandcalc.model.design import Design, DividerReference, FixedReference
from bandcalc.model.front_end import front_end_of, front_end_tolerances
from bandcalc.model.parts import parameters, part, resistors_of, tolerance_of
from bandcalc.model.points import design_points
from bandcalc.model.tolerances import NOMINAL_CELSIUS, Tolerances
from bandcalc.model.units import format_si, format_value

__all__ = ["QUANTITIES", "Factor", "VariedModel", "factors"]

QUANTITIES = ("upper", "lower", "hysteresis")
_STEP = 1e-3  # finite-difference step in unit-variable terms


@dataclass(frozen=True)
class Factor:
    """One varied quantity, in its own unit, with its range and how Monte Carlo draws it.

    ``name`` is the design-file parameter path ("resistors.feedback", "supply.positive",
    "reference.volts", "comparator.offset", ...) or "temperature" (degrees Celsius),
    "reference.drift" (ppm/K) or "comparator.offset_drift" (V/K).
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
        """Standard deviation of the unit variable: 1/3 (normal, bound = 3 sigma) or 1/sqrt(3)."""
        return 1.0 / 3.0 if self.distribution == "normal" else 1.0 / math.sqrt(3.0)

    def at(self, z: float | np.ndarray) -> float | np.ndarray:
        """The factor's value for unit variable ``z`` (-1: low, 0: centre, +1: high)."""
        return self.centre + 0.5 * (self.high - self.low) * z

    def format(self, value: float) -> str:
        """A value of this factor for people: "25 C", "+100 ppm/K", "4.7 kOhm"."""
        if self.unit == "degC":
            return f"{value:g} C"
        if self.unit == "ppm/K":
            return f"{value:+g} ppm/K"
        return format_value(value, self.unit, 4)  # kelvin (Beta) plain, volts and amperes prefixed

    def draw(self, rng: np.random.Generator, n: int, out: np.ndarray | None = None) -> np.ndarray:
        """``n`` random values: normal with the bounds at +/-3 sigma, or uniform between the bounds.

        ``out`` (shape ``(n,)``) is filled instead of a new array; the numbers are the same.
        """
        x = np.empty(n) if out is None else out
        if self.distribution == "normal":
            rng.standard_normal(out=x)
            x *= (self.high - self.low) / 6.0  # half the range is 3 sigma
            x += self.centre
        else:
            rng.random(out=x)
            x *= self.high - self.low
            x += self.low
        return x


def _resistor_factors(design: Design, tol: Tolerances, dist: str,
                      notes: list[str]) -> tuple[list[Factor], dict[str, float]]:
    ohms_by_key = resistors_of(design)
    given = {n for n, _ in tol.resistors.parts + tol.resistor_tempco.parts}
    for name in sorted(given - set(ohms_by_key)):
        notes.append(f"tolerances: this design has no {name} resistor; its entry is not used.")
    out, tempco = [], {}
    for key, ohms in ohms_by_key.items():
        path, t = part(key).path, tolerance_of(design, key, tol)
        if t.percent > 0:
            out.append(Factor(path, "Ohm", ohms, ohms * (1 - t.percent / 100), ohms * (1 + t.percent / 100),
                              dist, f"{t.percent:g} %, {t.why}"))
        ppm = tol.resistor_tempco.get(key) or 0.0
        if ppm:
            tempco[path] = ppm * 1e-6
    return out, tempco


def _model_factors(design: Design, tol: Tolerances) -> tuple[list[Factor], dict[str, float], list[str]]:
    """The varied factors, each resistor's temperature coefficient (1/K), and notes on unused entries."""
    nominal, dist, notes = parameters(design), tol.distribution, []
    out, tempco = _resistor_factors(design, tol, dist, notes)
    for key, frac in front_end_tolerances(front_end_of(design)).items():  # a thermistor's R25, Beta
        v = nominal[key]
        out.append(Factor(key, "Ohm" if key == "front_end.r25" else "K", v, v * (1 - frac),
                          v * (1 + frac), dist, f"{100 * frac:g} %"))
    rails = ["supply.positive", "supply.negative", "output.pullup_volts", "output.low_volts"]
    for key in (k for k in rails if k in nominal and nominal[k] != 0 and tol.supply > 0):
        v, dv = nominal[key], abs(nominal[key]) * tol.supply / 100
        out.append(Factor(key, "V", v, v - dv, v + dv, dist, f"{tol.supply:g} %"))
    fixed = isinstance(design.reference, FixedReference)
    kind = "a divider" if isinstance(design.reference, DividerReference) else "none"
    if tol.reference > 0:
        if fixed:
            v = nominal["reference.volts"]
            dv = abs(v) * tol.reference / 100
            out.append(Factor("reference.volts", "V", v, v - dv, v + dv, dist, f"{tol.reference:g} %"))
        else:
            notes.append(f"tolerances.reference is for a fixed reference; this design's reference is {kind} "
                         "(a divider's resistors take tolerances.resistors and it follows the supply).")
    for key, unit, bound in (("comparator.offset", "V", tol.offset),
                             ("comparator.bias_current", "A", tol.bias_current)):
        if bound > 0:
            v = nominal[key]
            out.append(Factor(key, unit, v, v - bound, v + bound, dist, f"+/-{format_si(bound, unit)}"))
    drifts = [("reference.drift", "ppm/K", tol.reference_drift if fixed else 0.0),
              ("comparator.offset_drift", "V/K", tol.offset_drift)]
    if tol.reference_drift and not fixed:
        notes.append("tolerances.reference_drift is for a fixed reference; "
                     f"this design's reference is {kind}.")
    moved = bool(tempco) or any(bound for _, _, bound in drifts)
    if tol.temperature is None:
        if moved:
            notes.append("tolerances: temperature coefficients are given but no temperature range; "
                         "add \"temperature\": [lowest, highest] in degrees Celsius.")
        return out, {}, notes
    if not moved:
        notes.append("tolerances.temperature: no temperature coefficient or drift is given, so the "
                     "temperature moves nothing.")
        return out, {}, notes
    low, high = tol.temperature
    out.append(Factor("temperature", "degC", NOMINAL_CELSIUS, low, high, "uniform",
                      f"{low:g} to {high:g} C, uniform"))
    out += [Factor(key, unit, 0.0, -bound, bound, dist,
                   f"+/-{bound:g} ppm/K" if unit == "ppm/K" else f"+/-{format_si(bound, unit)}")
            for key, unit, bound in drifts if bound > 0]
    return out, tempco, notes


def factors(design: Design, tolerances: Tolerances | None = None) -> tuple[Factor, ...]:
    """The quantities that vary in a design under its tolerances (the design's own if not given)."""
    return tuple(VariedModel(design, tolerances).factors)


class VariedModel:
    """The stage model driven by factor values: builds the parameters and evaluates the points."""

    def __init__(self, design: Design, tolerances: Tolerances | None) -> None:
        self.design = design
        self.notes: list[str] = []
        tol = tolerances if tolerances is not None else design.tolerances
        if tol is None:
            tol = Tolerances()
            self.notes.append("No tolerances section: resistors at the usual tolerance of their series, "
                              "every other part exact, at 25 C.")
        self.tolerances = tol
        self.nominal = parameters(design)
        found, self.tempco, notes = _model_factors(design, tol)
        self.factors = found
        self.notes += notes

    def values(self, x: Mapping[str, np.ndarray]) -> dict[str, np.ndarray]:
        """Model parameters from factor values (arrays that broadcast)."""
        out = {k: v for k, v in x.items() if k in self.nominal}
        if "temperature" not in x:
            return out
        d_t = x["temperature"] - NOMINAL_CELSIUS
        scale: dict[float, np.ndarray] = {}
        for key, alpha in self.tempco.items():
            if alpha not in scale:
                scale[alpha] = 1.0 + alpha * d_t
            out[key] = out.get(key, self.nominal[key]) * scale[alpha]
        if "reference.drift" in x:
            v = out.get("reference.volts", self.nominal["reference.volts"])
            out["reference.volts"] = v * (1.0 + 1e-6 * x["reference.drift"] * d_t)
        if "comparator.offset_drift" in x:
            v = out.get("comparator.offset", self.nominal["comparator.offset"])
            out["comparator.offset"] = v + x["comparator.offset_drift"] * d_t
        return out

    def evaluate(self, x: Mapping[str, np.ndarray], n: int) -> dict[str, np.ndarray]:
        """Upper point, lower point and hysteresis for ``n`` sets of factor values, in the design's unit."""
        with np.errstate(divide="ignore", invalid="ignore"):
            pts = design_points(self.design, self.values(x))
        upper = np.broadcast_to(np.asarray(pts.upper, dtype=float), (n,))
        lower = np.broadcast_to(np.asarray(pts.lower, dtype=float), (n,))
        return {"upper": upper, "lower": lower, "hysteresis": upper - lower}

    def at_unit(self, z: np.ndarray) -> dict[str, np.ndarray]:
        """Points for rows of unit variables, shape (n, number of factors)."""
        return self.evaluate({f.name: f.at(z[:, i]) for i, f in enumerate(self.factors)}, z.shape[0])

    def corner(self, z: np.ndarray) -> dict[str, float]:
        return {f.name: float(f.at(z[i])) for i, f in enumerate(self.factors)}

    def gradient(self) -> dict[str, np.ndarray]:
        """d(quantity)/dz for each factor at the centre of the box, by central differences.

        A drift coefficient acts through drift x (T - 25 C), so its derivative is taken with the
        temperature at 25 C + the root mean square of (T - 25 C) over the range: that makes the
        first-order variance of the product exact.
        """
        k = len(self.factors)
        z = np.zeros((2 * k, k))
        z[np.arange(k), np.arange(k)] = _STEP
        z[k + np.arange(k), np.arange(k)] = -_STEP
        names = [f.name for f in self.factors]
        if "temperature" in names:
            t = self.factors[names.index("temperature")]
            rms = math.sqrt((t.centre - NOMINAL_CELSIUS) ** 2 + (t.high - t.low) ** 2 / 12)
            half = 0.5 * (t.high - t.low)
            # A range narrower than a float step has no width: its centre is the rms distance away.
            z_rms = (NOMINAL_CELSIUS + rms - t.centre) / half if half > 0 else 0.0
            for i, name in enumerate(names):
                if name.endswith("drift"):
                    z[[i, k + i], names.index("temperature")] = z_rms
        q = self.at_unit(z)
        return {name: (q[name][:k] - q[name][k:]) / (2 * _STEP) for name in QUANTITIES}
