"""Panel: the spread of the switching points over tolerances and the operating temperature range.

The tolerances are the design's own ``tolerances`` section: edits here change the design (so they
are in the page address and the saved file).  The run itself (worst case, Monte Carlo with each
build over the range, failure probability, sensitivity) happens on a button press, with a
progress bar, and its result is kept per design and settings (:mod:`bandcalc.page.runs`), so a
slider move never starts it.
"""

from __future__ import annotations

import streamlit as st

from bandcalc.model.design import Design
from bandcalc.model.front_end import front_end_of
from bandcalc.model.tolerances import DISTRIBUTIONS
from bandcalc.model.units import format_probability, format_si, format_value, symbol
from bandcalc.outputs.plots import as_figure, histogram_spec, sensitivity_spec
from bandcalc.outputs.summary import escape_text
from bandcalc.page import runs, state
from bandcalc.page.compute import guarded
from bandcalc.page.inputs import choice_control, read_value, value_field
from bandcalc.page.literal import literal
from bandcalc.page.names import factor_name, part_name
from bandcalc.page.tolerance_edit import (
    WINDOW_KEYS,
    limit_end,
    limit_keys,
    resistor_rows,
    temperature_end,
    tolerance_value,
    tolerances_of,
    window_end,
    with_limit_end,
    with_network,
    with_part_tolerance,
    with_temperature_end,
    with_tolerance,
    with_window_end,
    without_network,
    without_tolerances,
)
from bandcalc.spread.propagation import (
    DEFAULT_SAMPLES,
    DEFAULT_SEED,
    MAX_SAMPLES,
    MIN_SAMPLES,
    PERCENTILES,
    Spread,
    failure_places,
    spread,
)

TITLE = "Spread"

__all__ = ["SAMPLES_KEY", "SEED_KEY", "TITLE", "render"]

SAMPLES_KEY = "page.spread.samples"
SEED_KEY = "page.spread.seed"
_PART_KEY = "page.spread.part"
_NETWORK_FORM = "page.spread.network"
# The panel's own controls: after a tolerance edit only they start again (bandcalc.page.state).
_CONTROLS = "in.tolerances."
_QUANTITIES = {"upper": "Upper switching point", "lower": "Lower switching point", "hysteresis": "Hysteresis"}
_DISTRIBUTIONS = {"normal": "Normal: a tolerance is 3 sigma",
                  "screened": "Screened: normal, cut at the tolerance",
                  "uniform": "Uniform: a tolerance is the bound"}
# Three columns of (key, label, unit, blank means, help): the parts, the comparator, temperature.
_PLAIN = (
    (("resistors", "Resistors, every one", "%", "each at its series' usual tolerance", None),
     ("reference", "Fixed reference", "%", "exact", "A divider reference follows its rail and resistors"),
     ("supply", "Each supply rail", "%", "exact", "Each non-zero rail on its own")),
    (("offset", "Offset voltage, ±", "V", "exact", "About the comparator's nominal offset"),
     ("bias_current", "Bias current, ±", "A", "exact", "About the comparator's nominal bias current"),
     ("offset_current", "Offset current, ±", "A", "exact", "The + pin's current less the - pin's, about its "
                                                          "nominal"),
     ("offset_drift", "Offset drift, ±", "V/K", "none", None)),
    (("resistor_tempco", "Resistor tempco, each ±", "ppm/K", "none",
      "Each resistor's own coefficient lies within ± this, independently of the others'; resistors in one "
      "network can track (below)"),
     ("reference_drift", "Reference drift (box), ±", "ppm/K", "none",
      "Box method: over the range the reference stays within V25 ± drift × V25 × (highest − lowest), "
      "with no shape assumed")),
)
_LIMIT_NAMES = {"output.high_drop": ("Output high, drop below the rail", "V"),
                "output.low_drop": ("Output low, rise above the rail", "V"),
                "output.resistance": ("Output resistance", "Ohm"),
                "output.low_volts": ("Output low level", "V"),
                "output.pullup_volts": ("Pull-up supply", "V"),
                "comparator_hysteresis": ("Comparator's own hysteresis", "V")}


def _section(title: str, name: str):
    """An expander whose body is drawn only while it is open (fewer widgets: a faster rerun); None
    while it is shut."""
    box = st.expander(title, key=f"page.spread.section.{name}", on_change="rerun")
    return box if box.open else None


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
                        optional=True, blank="blank: 25 °C", controls=_CONTROLS,
                        help="The operating range: every build must meet the windows at every temperature "
                             "of it")
    choice_control(st.radio, "Monte Carlo reads a tolerance as", "tolerances.distribution",
                   tolerances_of(design).distribution, lambda d, v: with_tolerance(d, "distribution", v),
                   options=DISTRIBUTIONS, format_func=_DISTRIBUTIONS.get, horizontal=True, controls=_CONTROLS)
    st.markdown(f"**Windows a build must meet** ({literal(symbol(unit))}; a blank side is open)")
    for column, quantity in zip(st.columns(3), WINDOW_KEYS, strict=True):
        with column:
            for end, side in (("low", "lowest"), ("high", "highest")):
                value_field(f"{_QUANTITIES[quantity]}, {side}", f"tolerances.limits.{quantity}.{end}", design,
                            unit, lambda d, q=quantity, e=end: window_end(d, q, e),
                            lambda d, v, q=quantity, e=end: with_window_end(d, q, e, v),
                            where=f"tolerances.limits.{quantity}", optional=True, blank="blank: open",
                            controls=_CONTROLS)


def _data_sheet_limits(design: Design) -> None:
    box = _section("Output and comparator, as their data sheets state them", "limits")
    if box is None:
        return
    with box:
        st.caption("Least and greatest values over temperature; a blank end takes the design's own value. "
                   "A build draws each between its limits like a tolerance about their middle.")
        for key in limit_keys(design):
            label, unit = _LIMIT_NAMES[key]
            left, right = st.columns(2)
            for column, end, word in ((left, "low", "least"), (right, "high", "greatest")):
                with column:
                    value_field(f"{label}, {word}", f"tolerances.{key}.{end}", design, unit,
                                lambda d, k=key, e=end: limit_end(d, k, e),
                                lambda d, v, k=key, e=end: with_limit_end(d, k, e, v),
                                where=f"tolerances.{key}", optional=True,
                                blank="blank: the design's value", controls=_CONTROLS)


def _per_resistor(design: Design) -> None:
    box = _section("Per resistor", "resistors")
    if box is None:
        return
    rows = resistor_rows(design)
    with box:
        st.table({
            "Resistor": [part_name(r["name"]) for r in rows],
            "Value": [format_si(r["ohms"], "Ohm", 4) for r in rows],
            "Tolerance": [f"{r['percent']:g} % ({r['origin']})" for r in rows],
            "Tempco, ±": [f"{r['tempco']:g} ppm/K" + (f" (network {r['network']})" if r["network"] else "")
                          for r in rows],
        }, hide_index=True)
        names = [r["name"] for r in rows]
        if st.session_state.get(_PART_KEY) not in names:
            st.session_state[_PART_KEY] = names[0]
        part = st.selectbox("Give one resistor its own values", names, key=_PART_KEY, format_func=part_name)
        left, right = st.columns(2)
        for column, key, label, unit in ((left, "resistors", "Its tolerance", "%"),
                                         (right, "resistor_tempco", "Its tempco, ±", "ppm/K")):
            own = f"own_{'percent' if key == 'resistors' else 'tempco'}"
            with column:
                value_field(label, f"tolerances.{key}.{part}", design, unit,
                            lambda d, k=own: next(r[k] for r in resistor_rows(d) if r["name"] == part),
                            lambda d, v, k=key: with_part_tolerance(d, k, part, v),
                            where=f"tolerances.{key}.{part}", optional=True, blank="blank: as the others",
                            controls=_CONTROLS)


def _networks(design: Design) -> None:
    box = _section("Resistor networks: coefficients that track", "networks")
    if box is None:
        return
    networks = tolerances_of(design).resistor_networks
    with box:
        st.caption("Resistors in one package (a network or array): each member's coefficient is the "
                   "network's common one, within ± its tempco, plus its own share, so that no two differ by "
                   "more than the tracking bound.")
        for net in networks:
            left, right = st.columns([4, 1], vertical_alignment="center")
            left.markdown(f"**{escape_text(net.name)}**: {', '.join(part_name(r) for r in net.resistors)}; "
                          f"tempco ±{net.tempco:g} ppm/K, tracking {net.tracking:g} ppm/K")
            right.button("Remove", key=f"page.spread.network.remove.{net.name}", on_click=_remove_network,
                         args=(net.name,))
        names = [r["name"] for r in resistor_rows(design)]
        with st.form(_NETWORK_FORM, clear_on_submit=False, border=False):
            name = st.text_input("Network name", value=f"RN{len(networks) + 1}", key=f"{_NETWORK_FORM}.name")
            members = st.multiselect("Its resistors", names, format_func=part_name,
                                     key=f"{_NETWORK_FORM}.members")
            left, right = st.columns(2)
            tempco = left.text_input("Common tempco, ± (ppm/K)", placeholder="blank: 0",
                                     key=f"{_NETWORK_FORM}.tempco")
            tracking = right.text_input("Tracking (ppm/K)", placeholder="blank: 0",
                                        key=f"{_NETWORK_FORM}.tracking",
                                        help="The largest difference between any two members' coefficients")
            if st.form_submit_button("Add or replace the network"):
                _add_network(design, name, tuple(members), tempco, tracking)


def _add_network(design: Design, name: str, members: tuple[str, ...], tempco: str, tracking: str) -> None:
    where = f"tolerances.resistor_networks.{name.strip() or '?'}"
    try:
        values = [None if not text.strip() else read_value(text, "ppm/K", f"{label} ({where}.{key})")
                  for text, label, key in ((tempco, "Common tempco", "tempco"),
                                           (tracking, "Tracking", "tracking"))]
        changed = with_network(design, name, members, *values)
    except ValueError as exc:
        st.error(f"Resistor network: {exc}. The design keeps its networks.")
        return
    state.apply_design(changed, f"Resistor network {name.strip()}: {', '.join(members)}")


def _remove_network(name: str) -> None:
    state.edit(lambda d: without_network(d, name), "Resistor network", controls=_CONTROLS)


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
    span = s.tolerances.temperature
    over = "" if span is None else f" and the whole range, {span[0]:g} to {span[1]:g} °C"
    st.markdown(f"**Worst case** over the whole tolerance box{over}")
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

        rows = [(factor_name(f.name), f"{at(f, f.low)} to {at(f, f.high)}", f.name, f) for f in s.factors]
        if span is not None and (s.worst_case.upper.min_corner.get("temperature") is not None):
            rows.append(("Temperature of the extreme", f"{span[0]:g} to {span[1]:g} °C", "temperature", None))
        table: dict[str, list[str]] = {"Varied quantity": [r[0] for r in rows], "Range": [r[1] for r in rows]}
        for q, name in _QUANTITIES.items():
            e = getattr(wc, q)
            for label, corner in ((f"{name}, least", e.min_corner), (f"{name}, greatest", e.max_corner)):
                table[label] = [(f"{corner[key]:.4g} °C" if f is None else at(f, corner[key]))
                                if key in corner else "" for _, _, key, f in rows]
        st.table(table, hide_index=True)
        if s.design.reference is not None and any(f.name == "reference.drift" for f in s.factors):
            st.caption("Reference drift: the sign says which edge of its box the extreme takes (+: upper).")


def _yield(s: Spread) -> None:
    y = s.monte_carlo.build_yield
    span = s.tolerances.temperature
    if y is None:
        st.caption("No windows given: enter them above to get the yield.")
        return
    outside = ", ".join(f"{_QUANTITIES[k].lower()} {n:,}" for k, n in y.outside.items())
    left, right = st.columns(2)
    left.metric("Yield", f"{100 * y.fraction:.3f} %",
                help="Share of the builds inside every window" +
                ("" if span is None else " at every temperature of the range"))
    f = y.failure
    if f is not None:
        right.metric("Failure probability", format_probability(f.probability),
                     help="Probability that a build misses any window anywhere in the range")
    st.caption(f"95 % interval {100 * y.low:.3f} % to {100 * y.high:.3f} % (Wilson score). "
               f"Builds outside each window: {outside}.")
    if f is not None:
        st.caption(f"Failure probability, 95 % interval {format_probability(f.low)} to "
                   f"{format_probability(f.high)}: {f.method}.")
    places = failure_places(s)
    if places:
        st.markdown("**Where builds fail**")
        st.markdown("\n".join(f"- {literal(p)}" for p in places))


def _monte_carlo(s: Spread, v) -> None:
    mc = s.monte_carlo
    span = s.tolerances.temperature
    over = "" if span is None else f", each over {span[0]:g} to {span[1]:g} °C"
    st.markdown(f"**Monte Carlo**: {mc.samples:,} builds{over}, seed {mc.seed}, tolerances read as "
                f"{s.tolerances.distribution}")
    _yield(s)
    ranged = mc.lowest is not None and mc.lowest["upper"] is not mc.upper
    table = {"Quantity": list(_QUANTITIES.values()),
             "Mean": [v(getattr(mc, q).mean) for q in _QUANTITIES],
             "Standard deviation": [v(getattr(mc, q).std) for q in _QUANTITIES]}
    for p in PERCENTILES:
        table[f"{p:g} %"] = [v((mc.lowest[q] if p < 50 else mc.highest[q] if p > 50 else getattr(mc, q))
                               .percentiles[p]) for q in _QUANTITIES]
    st.table(table, hide_index=True)
    if ranged:
        st.caption(f"Mean and standard deviation at {mc.middle:g} °C; the percentiles below the median are "
                   "of each build's least value over the range, those above of its greatest.")
    windows = {} if mc.build_yield is None else mc.build_yield.windows
    for column, (q, name) in zip(st.columns(3), _QUANTITIES.items(), strict=True):
        e = getattr(s.worst_case, q)
        spec = histogram_spec(mc.lowest[q] if ranged else getattr(mc, q), name, s.unit, window=windows.get(q),
                              nominal=s.worst_case.nominal[q], extremes=(e.min, e.max),
                              greatest=mc.highest[q] if ranged else None)
        column.plotly_chart(as_figure(spec, validate=False), key=f"spread.histogram.{q}",
                            config={"displaylogo": False})
    st.caption(("Bars: each build's least and greatest value over the range. " if ranged else
                "Bars: the sampled builds. ") + "Shaded: the window a build must meet. Solid line: nominal; "
               "dashed lines: the worst case's least and greatest value.")


def _sensitivity(s: Spread) -> None:
    st.markdown("**Sensitivity**: which part to tighten first")
    labels = {f.name: factor_name(f.name) for f in s.factors}
    figure = as_figure(sensitivity_spec(s.sensitivity, labels), validate=False)
    st.plotly_chart(figure, key="spread.sensitivity", config={"displaylogo": False})
    st.caption("Each varied quantity's first-order share of each point's variance; a coefficient's share is "
               "that of coefficient × (T − 25 °C), the temperature taken evenly over the range.")


def _results(s: Spread) -> None:
    v = lambda x: format_value(x, literal(s.unit), 4)  # noqa: E731
    for line in s.cautions:
        st.error(literal(line), icon=":material/warning:")
    for line in s.notes:
        st.info(literal(line), icon=":material/info:")
    _worst_case(s, v)
    _monte_carlo(s, v)
    _sensitivity(s)
    with st.expander("Where the model simplifies", expanded=False):
        st.markdown("\n".join(f"- {literal(line)}" for line in s.simplifications))
    st.caption("The figures cover the initial tolerances and the drifts entered; ageing, solder heat, "
               "humidity and board leakage are not in them.")


def render(sheet) -> None:
    """Tolerance inputs, the run, and its worst case, histograms, yield, failures and sensitivity."""
    design = sheet.design
    unit = design.unit
    st.caption("How far the switching points move over part tolerances and the operating temperature "
               "range, and how often a build misses its windows. The tolerances belong to the design: they "
               "are saved with it and kept in the page address. Figures are in "
               f"{front_end_of(design).quantity} ({literal(symbol(unit))}).")
    _tolerance_inputs(design, unit)
    _data_sheet_limits(design)
    _per_resistor(design)
    _networks(design)
    if design.tolerances is not None:
        st.button("Clear the tolerances section", on_click=_clear, icon=":material/restart_alt:",
                  help="Back to each resistor's series tolerance, every other part exact")
    st.divider()
    st.session_state.setdefault(SAMPLES_KEY, DEFAULT_SAMPLES)
    st.session_state.setdefault(SEED_KEY, DEFAULT_SEED)
    left, middle, right = st.columns([2, 1, 1], vertical_alignment="bottom")
    samples = left.number_input("Builds to sample", MIN_SAMPLES, MAX_SAMPLES, step=100_000, key=SAMPLES_KEY,
                                help=f"{MIN_SAMPLES:,} to {MAX_SAMPLES:,}; each is checked over the whole "
                                     "temperature range, a million in about two seconds")
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
