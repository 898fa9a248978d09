"""The signal check as strict JSON: a run, its false-edge prediction, the width sweep and the table of
filter time constants.

Strict JSON has no NaN or infinity: a figure that does not exist is ``null``, and where a null
needs a reason a sentence says it (``parked_note``).
"""

from __future__ import annotations

import math

import numpy as np

from bandcalc.signal_check.edges import SignalRun
from bandcalc.signal_check.hysteresis_choice import FilterTable, filter_table_to_dict
from bandcalc.signal_check.noise import FalseEdgeCheck
from bandcalc.signal_check.width_trade import Sweep

__all__ = ["check_to_dict", "signal_to_dict"]


def _number(x: float | None) -> float | None:
    """A finite float, or None."""
    return None if x is None or not math.isfinite(float(x)) else float(x)


def _numbers(values: np.ndarray) -> list[float | None]:
    return [_number(x) for x in np.asarray(values, dtype=float)]


def check_to_dict(check: FalseEdgeCheck) -> dict:
    """The false-edge prediction: noise at the stage, the parked rate, extra edges per crossing, hum."""
    between = check.mean_time_between
    hum = check.source.hum
    return {
        "noise_rms_at_stage": check.noise.rms_at_stage,
        "noise_bandwidth": check.source.noise.bandwidth,
        "noise_source": check.source.source,
        "filter_pole": _number(check.pole),
        "parked_crossings_per_second": check.parked_per_second,
        "parked_mean_time_between": _number(between),
        "parked_note": None if math.isfinite(between) else
        "no false switching expected: Rice's rate is below 1e-300 per second",
        "extra_edges_per_crossing": {"upper": _number(check.extra_upper),
                                     "lower": _number(check.extra_lower)},
        "slopes": {"upper": _number(check.slope_upper), "lower": _number(check.slope_lower)},
        "crossings_per_second": check.crossings_per_second,
        "hum": {"frequency": hum.frequency, "amplitude": hum.amplitude,
                "harmonics": {str(k): a for k, a in hum.harmonics},
                "span_at_stage": check.hum.span()},
        "simplifications": list(check.simplifications),
    }


def _sweep_to_dict(sweep: Sweep) -> dict:
    predicted = None if sweep.predicted_extra is None else _numbers(sweep.predicted_extra)
    return {"centre": sweep.centre, "widths": sweep.widths.tolist(),
            "edge_counts": sweep.edge_counts.tolist(),
            "best_width": sweep.best_width, "best_mean_delay": _number(sweep.best_mean_delay),
            "best_max_delay": _number(sweep.best_max_delay), "seeds": sweep.runs,
            "run_best_widths": sweep.run_best_widths, "predicted_extra_edges": predicted,
            "predicted_best_width": sweep.predicted_best_width}


def signal_to_dict(run: SignalRun, unit: str, sweep: Sweep | None = None,
                   table: FilterTable | None = None) -> dict:
    """A run of :func:`bandcalc.signal_check.edges.run_design` (its check included), with the width
    sweep and the filter table where they were asked for."""
    out = {
        "unit": unit, "upper": run.upper, "lower": run.lower, "edges": run.edge_count,
        "edge_times": run.edge_times.tolist(), "edge_directions": run.edge_directions.tolist(),
        "clean_edges": run.clean_edge_count, "extra_edges": run.extra_edges, "missed": run.missed_count,
        "delay_mean": _number(run.delay_mean), "delay_max": _number(run.delay_max),
        "output_high_fraction": run.output_high_fraction,
        "noise_rms": run.noise.rms, "noise_peak_to_peak": run.noise.peak_to_peak,
        "sample_rate": _number((len(run.wave) - 1) / run.wave.duration),
        "timing": {"delay": run.delay, "rise": run.rise_time, "fall": run.fall_time},
        "findings": list(run.findings),
    }
    if run.check is not None:
        out.update(check_to_dict(run.check))
    if sweep is not None:
        out["sweep"] = _sweep_to_dict(sweep)
    if table is not None:
        out["filter_table"] = filter_table_to_dict(table)
    return out
