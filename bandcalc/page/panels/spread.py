"""Panel: the spread of the switching points over tolerances and temperature.

The tolerances are the design's own ``tolerances`` section: edits here change the design (so they
are in the page address and the saved file).  The run itself (worst case, Monte Carlo, sensitivity)
happens on a button press, with a progress bar, and its result is kept per design and settings
(:mod:`bandcalc.page.runs`), so a slider move never starts it.
"""

from __future__ import annotations

import streamlit as st

from bandcalc.model.design import Design
from bandcalc.model.front_end import front_end_of
from bandcalc.model.tolerances import DISTRIBUTIONS
from bandcalc.model.units import format_si, format_value
from bandcalc.outputs.plots import as_figure, histogram_spec, sensitivity_spec
from bandcalc.page import runs, state
from bandcalc.page.compute import guarded
from bandcalc.page.inputs import choice_control, value_field
from bandcalc.page.literal import literal
from bandcalc.page.names import factor_name, part_name
from bandcalc.page.tolerance_edit import (
    WINDOW_KEYS,
    resistor_rows,
    temperature_end,
    tolerance_value,
    tolerances_of,
    window_end,
    with_part_tolerance,
    with_temperature_end,
    with_tolerance,
    with_window_end,
    without_tolerances,
)
from bandcalc.spread.propagation import (
    DEFAULT_SAMPLES,
    DEFAULT_SEED,
    MAX_SAMPLES,
    MIN_SAMPLES,
    PERCENTILES,
    Spread,
    spread,
)

TITLE = "Spread"

__all__ = ["SAMPLES_KEY", "SEED_KEY", "TITLE", "render"]

SAMPLES_KEY = "page.spread.samples"
SEED_KEY = "page.spread.seed"
_PART_KEY = "page.spread.part"
# The panel's own controls: after a tolerance edit only they start again (bandcalc.page.state).
_CONTROLS = "in.tolerances."
_QUANTITIES = {"upper": "Upper switching point", "lower": "Lower switching point", "hysteresis": "Hysteresis"}
_DISTRIBUTIONS = {"normal": "Normal: a tolerance is 3 sigma", "uniform": "Uniform: a tolerance is the bound"}
# Three columns of (key, label, unit, blank means, help): the parts, the comparator, temperature.
_PLAIN = (
    (("resistors", "Resistors, every one", "%", "each at its series' usual tolerance", None),
     ("reference", "Fixed reference", "%", "exact", "A divider reference follows its rail and resistors"),
     ("supply", "Each supply rail", "%", "exact", "Each non-zero rail on its own")),
    (("offset", "Offset voltage, ±", "V", "exact", "About the comparator's nominal offset"),
     ("bias_current", "Bias current, ±", "A", "exact", "About the comparator's nominal bias current"),
     ("offset_drift", "Offset drift, ±", "V/K", "none", None)),
    (("resistor_tempco", "Resistor tempco, shared", "ppm/K", "none", "Resistors of one kind drift together"),
     ("reference_drift", "Reference drift, ±", "ppm/K", "none", None)),
)


def _plain(design: Design, key: str, label: str, unit: str, blank: str, help: str | None) -> None:
    value_field(label, f"tolerances.{key}", design, unit, lambda d: tolerance_value(d, key),
                lambda d, v: with_tolerance(d, key, v), where=f"tolerances.{key}", optional=True,
                blank=f"blank: {blank}", help=help, controls=_CONTROLS)


def _tolerance_inputs(design: Design, unit: str) -> None:
    columns = st.columns(3)
    for column, entries in zip(columns, _PLAIN, strict=True):
        with column:
            for entry in entries:
                _plain(design, *entry)
    with columns[2]:
        for end, label in (("low", "Lowest temperature"), ("high", "Highest temperature")):
            value_field(label, f"tolerances.temperature.{end}", design, "C",
                        lambda d, e=end: temperature_end(d, e),
                        lambda d, v, e=end: with_temperature_end(d, e, v), where="tolerances.temperature",
                        optional=True, blank="blank: 25 C", controls=_CONTROLS)
    choice_control(st.radio, "Monte Carlo reads a tolerance as", "tolerances.distribution",
                   tolerances_of(design).distribution, lambda d, v: with_tolerance(d, "distribution", v),
                   options=DISTRIBUTIONS, format_func=_DISTRIBUTIONS.get, horizontal=True, controls=_CONTROLS)
    st.markdown(f"**Windows a build must meet** ({literal(unit)}; a blank side is open)")
    for column, quantity in zip(st.columns(3), WINDOW_KEYS, strict=True):
        with column:
            for end, side in (("low", "lowest"), ("high", "highest")):
                value_field(f"{_QUANTITIES[quantity]}, {side}", f"tolerances.limits.{quantity}.{end}", design,
                            unit, lambda d, q=quantity, e=end: window_end(d, q, e),
                            lambda d, v, q=quantity, e=end: with_window_end(d, q, e, v),
                            where=f"tolerances.limits.{quantity}", optional=True, blank="blank: open",
                            controls=_CONTROLS)


def _per_resistor(design: Design) -> None:
    rows = resistor_rows(design)
    with st.expander("Per resistor"):
        st.table({
            "Resistor": [part_name(r["name"]) for r in rows],
            "Value": [format_si(r["ohms"], "Ohm", 4) for r in rows],
            "Tolerance": [f"{r['percent']:g} % ({r['origin']})" for r in rows],
            "Tempco": [f"{r['tempco']:g} ppm/K" for r in rows],
        }, hide_index=True)
        names = [r["name"] for r in rows]
        if st.session_state.get(_PART_KEY) not in names:
            st.session_state[_PART_KEY] = names[0]
        part = st.selectbox("Give one resistor its own values", names, key=_PART_KEY, format_func=part_name)
        left, right = st.columns(2)
        for column, key, label, unit in ((left, "resistors", "Its tolerance", "%"),
                                         (right, "resistor_tempco", "Its tempco", "ppm/K")):
            own = f"own_{'percent' if key == 'resistors' else 'tempco'}"
            with column:
                value_field(label, f"tolerances.{key}.{part}", design, unit,
                            lambda d, k=own: next(r[k] for r in resistor_rows(d) if r["name"] == part),
                            lambda d, v, k=key: with_part_tolerance(d, k, part, v),
                            where=f"tolerances.{key}.{part}", optional=True, blank="blank: as the others",
                            controls=_CONTROLS)


def _run(design: Design, samples: int, seed: int) -> None:
    bar = st.progress(0.0, text="Sampling builds…")

    def progress(done: int, total: int) -> None:
        bar.progress(done / total, text=f"Sampled {done:,} of {total:,} builds")

    result = guarded("Spread", spread, design, samples=samples, seed=seed, progress=progress)
    bar.empty()
    if result is not None:
        runs.remember("spread", design, (samples, seed), result)


def _worst_case(s: Spread, v) -> None:
    wc = s.worst_case
    st.markdown("**Worst case** over the whole tolerance box")
    st.table({
        "Quantity": list(_QUANTITIES.values()),
        "Nominal": [v(wc.nominal[q]) for q in _QUANTITIES],
        "Least": [v(getattr(wc, q).min) for q in _QUANTITIES],
        "Greatest": [v(getattr(wc, q).max) for q in _QUANTITIES],
    }, hide_index=True)
    st.caption(f"Found from {wc.method} ({wc.evaluated:,} evaluated).")
    with st.expander("Corners that give each extreme"):
        def at(f, value: float) -> str:
            return format_value(value, literal("C" if f.unit == "degC" else f.unit), 4)

        table: dict[str, list[str]] = {"Varied quantity": [factor_name(f.name) for f in s.factors],
                                       "Range": [f"{at(f, f.low)} to {at(f, f.high)}" for f in s.factors]}
        for q, name in _QUANTITIES.items():
            e = getattr(wc, q)
            table[f"{name}, least"] = [at(f, e.min_corner[f.name]) for f in s.factors]
            table[f"{name}, greatest"] = [at(f, e.max_corner[f.name]) for f in s.factors]
        st.table(table, hide_index=True)


def _monte_carlo(s: Spread, v) -> None:
    mc = s.monte_carlo
    st.markdown(f"**Monte Carlo**: {mc.samples:,} builds, seed {mc.seed}, tolerances read as "
                f"{s.tolerances.distribution}")
    y = mc.build_yield
    if y is None:
        st.caption("No windows given: enter them above to get the yield.")
    else:
        outside = ", ".join(f"{_QUANTITIES[k].lower()} {n:,}" for k, n in y.outside.items())
        st.metric("Yield", f"{100 * y.fraction:.3f} %",
                  help="Share of the builds inside every window")
        st.caption(f"95 % interval {100 * y.low:.3f} % to {100 * y.high:.3f} % (Wilson score). "
                   f"Builds outside each window: {outside}.")
    st.table({"Quantity": list(_QUANTITIES.values()),
              "Mean": [v(getattr(mc, q).mean) for q in _QUANTITIES],
              "Standard deviation": [v(getattr(mc, q).std) for q in _QUANTITIES],
              **{f"{p:g} %": [v(getattr(mc, q).percentiles[p]) for q in _QUANTITIES] for p in PERCENTILES}},
             hide_index=True)
    windows = {} if y is None else y.windows
    for column, (q, name) in zip(st.columns(3), _QUANTITIES.items(), strict=True):
        e = getattr(s.worst_case, q)
        spec = histogram_spec(getattr(mc, q), name, s.unit, window=windows.get(q),
                              nominal=s.worst_case.nominal[q], extremes=(e.min, e.max))
        column.plotly_chart(as_figure(spec, validate=False), key=f"spread.histogram.{q}",
                            config={"displaylogo": False})
    st.caption("Bars: the sampled builds. Shaded: the window a build must meet. Solid line: nominal; "
               "dashed lines: the worst case's least and greatest value.")


def _sensitivity(s: Spread) -> None:
    st.markdown("**Sensitivity**: which part to tighten first")
    labels = {f.name: factor_name(f.name) for f in s.factors}
    figure = as_figure(sensitivity_spec(s.sensitivity, labels), validate=False)
    st.plotly_chart(figure, key="spread.sensitivity", config={"displaylogo": False})
    st.caption("Each varied quantity's first-order share of each point's variance; a drift's share is that "
               "of drift × (T − 25 C).")


def _results(s: Spread) -> None:
    v = lambda x: format_value(x, literal(s.unit), 4)  # noqa: E731
    for line in s.cautions:
        st.error(literal(line), icon=":material/warning:")
    for line in s.notes:
        st.info(literal(line), icon=":material/info:")
    _worst_case(s, v)
    _monte_carlo(s, v)
    _sensitivity(s)
    st.caption("The figures cover the initial tolerances and the drifts entered; ageing, solder heat, "
               "humidity and board leakage are not in them.")


def render(sheet) -> None:
    """Tolerance inputs, the run, and its worst case, histograms, yield and sensitivity."""
    design = sheet.design
    unit = design.unit
    st.caption("How far the switching points move over part tolerances and temperature, and how often a "
               "build misses its windows. The tolerances belong to the design: they are saved with it and "
               f"kept in the page address. Figures are in {front_end_of(design).quantity} ({literal(unit)}).")
    _tolerance_inputs(design, unit)
    _per_resistor(design)
    if design.tolerances is not None:
        st.button("Clear the tolerances section", on_click=_clear, icon=":material/restart_alt:",
                  help="Back to each resistor's series tolerance, every other part exact")
    st.divider()
    st.session_state.setdefault(SAMPLES_KEY, DEFAULT_SAMPLES)
    st.session_state.setdefault(SEED_KEY, DEFAULT_SEED)
    left, middle, right = st.columns([2, 1, 1], vertical_alignment="bottom")
    samples = left.number_input("Builds to sample", MIN_SAMPLES, MAX_SAMPLES, step=100_000, key=SAMPLES_KEY,
                                help=f"{MIN_SAMPLES:,} to {MAX_SAMPLES:,}; a million takes about a second")
    seed = middle.number_input("Seed", 0, 2**31 - 1, step=1, key=SEED_KEY,
                               help="The same seed gives the same numbers")
    if right.button("Run the spread", type="primary", icon=":material/play_arrow:", width="stretch"):
        _run(design, int(samples), int(seed))
    result = runs.recall("spread", design, (int(samples), int(seed)))
    if result is None:
        st.info("Press “Run the spread” to sample this design's builds.")
        return
    _results(result)


def _clear() -> None:
    state.edit(without_tolerances, "Clear the tolerances section", controls=_CONTROLS)
