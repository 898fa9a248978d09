"""Panel: a synthetic or recorded signal run through the design's switching points.

Shows the input, both points and the output with its edges over time, the edge count against the
noise-free signal's (chatter), the delays, the time high, the false edges predicted from the noise's
spectrum (Rice's formula) with the model's simplifications, the trade-off between hysteresis width
and edges and delay over several noise draws beside the prediction, and, for a false-edge target,
the table of hysteresis and delay over filter time constants.  A recording's noise and hum are
read from its spectrum, and a design can be made from it (:mod:`bandcalc.signal_check.from_recording`).
With a front end the signal is the watched quantity itself (battery volts, degrees C, ...).  The run
happens on a button press and is kept for the design (:mod:`bandcalc.page.runs`); only the latest run
is kept, as it holds its waveform.
"""

from __future__ import annotations

from dataclasses import dataclass

import streamlit as st

from bandcalc.errors import BandcalcError
from bandcalc.model.design import Design
from bandcalc.model.front_end import front_end_of
from bandcalc.model.signal_settings import SignalSettings
from bandcalc.model.units import format_interval, format_si, format_value, symbol
from bandcalc.outputs.plots import DISPLAY_POINTS, as_figure, signal_spec, tradeoff_spec
from bandcalc.page import runs, state
from bandcalc.page.compute import guarded
from bandcalc.page.inputs import read_value, unit_label
from bandcalc.page.literal import literal
from bandcalc.signal_check.edges import SignalRun, run_design, run_points
from bandcalc.signal_check.from_recording import design_from_recording
from bandcalc.signal_check.hysteresis_choice import FilterTable, filter_table_for
from bandcalc.signal_check.noise import Disturbance, FalseEdgeCheck, disturbance_of, given_disturbance
from bandcalc.signal_check.recording import read_waveform_csv
from bandcalc.signal_check.waveform import (
    DEFAULT_NOISE_BANDWIDTH,
    HUM_FREQUENCIES,
    SHAPES,
    SyntheticSignal,
    Waveform,
)
from bandcalc.signal_check.width_trade import Sweep, sweep_design

TITLE = "Signal check"

__all__ = ["MAX_CSV_MB", "SETTINGS", "SignalResult", "TITLE", "render"]

#: Largest recorded-signal file taken, MB (the page's server.maxUploadSize is the same).
MAX_CSV_MB = 50
_PREFIX = "page.signal."
_SOURCES = {"synthetic": "Synthetic signal", "recorded": "Recorded signal (CSV file)"}
_SHAPES = {"sine": "Sine", "triangle": "Triangle", "ramp": "One slow ramp", "steps": "Square steps"}
# name -> (label, unit or "watched", default text, blank means); the unit "watched" is the signal's.
SETTINGS = {
    "offset": ("Centre of the signal", "watched", "", "the design's centre"),
    "amplitude": ("Amplitude (peak)", "watched", "", "the design's hysteresis"),
    "frequency": ("Frequency", "Hz", "50 Hz", None),
    "duration": ("Record length", "s", "100 ms", None),
    "rate": ("Sample rate", "Hz", "100 kHz", None),
    "noise": ("Noise, RMS", "watched", "", "the design's, else none"),
    "noise_bandwidth": ("Noise bandwidth", "Hz", "",
                        f"the design's, else {DEFAULT_NOISE_BANDWIDTH / 1e3:g} kHz"),
    "hum": ("Mains hum, peak", "watched", "", "the design's, else none"),
    "target": ("False edges a year, at most", "", "", "no table"),
    "budget": ("Delay budget", "s", "", "none"),
}
_SYNTHETIC = ("offset", "amplitude", "frequency", "duration", "rate", "noise", "noise_bandwidth", "hum")
_WHERE = {"centre": "Centre of the points", "upper": "Upper point", "lower": "Lower point"}


@dataclass(frozen=True, eq=False)
class SignalResult:
    """One signal check: the run, the width sweep (None if not asked for), what the signal was and
    the table over filter time constants (None without a target)."""

    run: SignalRun
    sweep: Sweep | None
    described: str
    table: FilterTable | None = None


def _setting_changed(name: str, label: str, unit: str, optional: bool) -> None:
    key, good = _PREFIX + name, _PREFIX + name + ".ok"
    text = str(st.session_state[key]).strip()
    try:
        if text:
            read_value(text, unit, label)
        elif not optional:
            raise BandcalcError(f"{label}: needs a value")
    except ValueError as exc:
        kept = st.session_state.get(good, SETTINGS[name][2])
        state.say("error", f"{exc}. The signal check keeps {kept or 'a blank'}.")
        st.session_state[key] = kept
        return
    st.session_state[good] = text


def _setting(name: str, unit: str) -> None:
    label, kind, default, blank = SETTINGS[name]
    unit = unit if kind == "watched" else kind
    key = _PREFIX + name
    st.session_state.setdefault(key, default)
    st.text_input(unit_label(label, unit), key=key, placeholder=f"blank: {blank}" if blank else None,
                  on_change=_setting_changed, args=(name, label, unit, blank is not None))


def _value(name: str, unit: str) -> float | None:
    label, kind, _, _ = SETTINGS[name]
    text = str(st.session_state.get(_PREFIX + name, "")).strip()
    return read_value(text, unit if kind == "watched" else kind, label) if text else None


def _given(design: Design) -> SignalSettings:
    return design.signal or SignalSettings()


def _synthetic_settings(design: Design, unit: str) -> SyntheticSignal:
    upper, lower, _ = run_points(design)
    given = _given(design)
    columns = st.columns(4)
    st.session_state.setdefault(_PREFIX + "shape", "sine")
    columns[0].selectbox("Shape", SHAPES, key=_PREFIX + "shape", format_func=_SHAPES.get)
    for i, name in enumerate(_SYNTHETIC):
        with columns[(i + 1) % 4]:
            _setting(name, unit)
    st.session_state.setdefault(_PREFIX + "hum_frequency", int(given.hum_frequency))
    columns[1].selectbox("Mains frequency (Hz)", HUM_FREQUENCIES, key=_PREFIX + "hum_frequency")
    st.session_state.setdefault(_PREFIX + "seed", 1)
    columns[2].number_input("Noise seed", 0, 2**31 - 1, key=_PREFIX + "seed",
                            help="The same seed gives the same noise; the sweep runs this and the next four")
    offset, amplitude = _value("offset", unit), _value("amplitude", unit)
    noise, bandwidth, hum = _value("noise", unit), _value("noise_bandwidth", unit), _value("hum", unit)
    v = lambda x: format_value(x, literal(unit))  # noqa: E731
    st.caption(f"Blank centre and amplitude follow the design: centre {v(0.5 * (upper + lower))}, "
               f"amplitude {v(upper - lower)} (so the signal crosses both points). The noise is flat to its "
               "bandwidth and nothing above; the record is sampled at least 10 x that bandwidth.")
    return SyntheticSignal(
        st.session_state[_PREFIX + "shape"], 0.5 * (upper + lower) if offset is None else offset,
        upper - lower if amplitude is None else amplitude, _value("frequency", unit),
        _value("duration", unit), _value("rate", unit),
        noise_rms=(given.noise or 0.0) if noise is None else noise,
        hum_amplitude=(given.hum or 0.0) if hum is None else hum,
        hum_frequency=float(st.session_state[_PREFIX + "hum_frequency"]),
        seed=int(st.session_state[_PREFIX + "seed"]),
        noise_bandwidth=given.noise_bandwidth if bandwidth is None else bandwidth,
        hum_harmonics=given.hum_harmonics)


def _target_settings(unit: str) -> tuple[float | None, float | None]:
    left, right = st.columns(2)
    with left:
        _setting("target", unit)
    with right:
        _setting("budget", unit)
    return _value("target", unit), _value("budget", unit)


def _described(wave: Waveform) -> str:
    return f"{len(wave):,} samples over {format_si(wave.duration, 's')}"


def _uploaded() -> None:
    upload = st.session_state[_PREFIX + "upload"]
    if upload is None:
        return
    kept = st.session_state.get(_PREFIX + "recorded")
    keeps = f"The signal check keeps {kept[0]}." if kept else "No recorded signal is loaded."
    wave = state.read_upload(upload, lambda u: read_waveform_csv(u.getvalue()), keeps)
    if wave is not None:
        st.session_state[_PREFIX + "recorded"] = (upload.name, upload.file_id, wave, disturbance_of(wave))
        state.say("success", f"Read {upload.name}: {_described(wave)}.")


def _disturbance_words(found: Disturbance, unit: str) -> str:
    v = lambda x: format_value(x, unit, 3)  # noqa: E731
    hum = found.hum
    harmonics = "".join(f", {v(a)} at harmonic {k}" for k, a in hum.harmonics)
    return (f"noise {v(found.noise.rms)} RMS, effective bandwidth {format_si(found.noise.bandwidth, 'Hz')}; "
            f"hum {v(hum.amplitude)} at {hum.frequency:g} Hz{harmonics}")


def _recorded_settings(unit: str) -> tuple | None:
    st.file_uploader("Recorded signal: time (s) and value columns", type=["csv", "txt", "tsv"],
                     key=_PREFIX + "upload", on_change=_uploaded, max_upload_size=MAX_CSV_MB,
                     help=f"Header optional; comma, semicolon or tab; decimal point or comma; values in "
                          f"{literal(symbol(unit))}; up to {MAX_CSV_MB} MB")
    recorded = st.session_state.get(_PREFIX + "recorded")
    if recorded is None:
        st.caption("No recorded signal loaded yet.")
        return None
    name, file_id, wave, found = recorded
    st.caption(f"Using {literal(name)}: {_described(wave)}. From its spectrum: "
               f"{literal(_disturbance_words(found, unit))}."
               + "".join(f" {literal(n)}" for n in found.notes))
    return ("recorded", name, file_id)


def _to_design(design: Design, unit: str) -> None:
    """The recording to a design: where the points go, the target and budget, whether a filter may
    be added; the design replaces the current one."""
    name = st.session_state[_PREFIX + "recorded"][0]
    with st.expander("Make a design from this recording", key=_PREFIX + "make", on_change="rerun"):
        with st.form(_PREFIX + "make.form", border=False):
            where = st.radio("Place", tuple(_WHERE), format_func=_WHERE.get, horizontal=True,
                             key=_PREFIX + "make.where")
            left, middle, right = st.columns(3)
            level = left.text_input(f"At ({symbol(unit)})", key=_PREFIX + "make.level")
            target = middle.text_input("False edges a year, at most", "1", key=_PREFIX + "make.target")
            budget = right.text_input("Delay budget (s)", key=_PREFIX + "make.budget",
                                      placeholder="blank: none")
            allow = st.checkbox("An input filter may be added", True, key=_PREFIX + "make.filter")
            pressed = st.form_submit_button("Make the design", icon=":material/auto_fix_high:")
        if not pressed:
            st.caption("Reads the noise and hum, chooses the hysteresis (and a filter) for the target within "
                       "the budget, fits standard values; the new design's notes explain each step.")
            return
        try:
            where_value = {where: read_value(level, unit, _WHERE[where])}
            target_value = read_value(target, "", "False edges a year")
            budget_value = read_value(budget, "s", "Delay budget") if budget.strip() else None
        except ValueError as exc:
            st.error(f"{exc}. Nothing was changed.")
            return
        wave = st.session_state[_PREFIX + "recorded"][2]
        with st.spinner("Choosing and fitting…"):
            made = guarded("Design from the recording", design_from_recording, design, wave, **where_value,
                           false_edges_per_year=target_value, delay_budget=budget_value, allow_filter=allow)
        if made is not None:
            state.apply_design(made.design, f"Made from {name}: the notes give each step.")


def _run(design: Design, settings: tuple, sweep: bool) -> None:
    source, target, budget = settings
    with st.spinner("Running the signal…"):
        if isinstance(source, SyntheticSignal):
            wave: Waveform | None = guarded("Signal", source.make)
            disturbance = given_disturbance(source)
            described, signal = f"synthetic {source.shape} signal", source
        else:
            wave, disturbance = st.session_state[_PREFIX + "recorded"][2:4]
            described, signal = f"recorded signal {source[1]}", wave
        if wave is None:
            return
        run = guarded("Signal check", run_design, design, wave, disturbance=disturbance)
        if run is None:
            return
        widths = guarded("Width sweep", sweep_design, design, signal,
                         disturbance=run.check.source) if sweep else None
        given = _given(design)
        table = None if target is None else guarded(
            "Hysteresis and filter", filter_table_for, run.check, target, budget, slope=given.slope,
            crossings_per_second=given.crossings_per_second or 0.0)
    runs.remember("signal", design, (settings, sweep), SignalResult(run, widths, described, table))


def _figures(run: SignalRun, unit: str) -> None:
    s = lambda x: format_si(x, "s", 3)  # noqa: E731
    unknown = "—"
    clean, extra = run.clean_edge_count, run.extra_edges
    columns = st.columns(6)
    columns[0].metric("Output edges", f"{run.edge_count:,}", help="Edges of the output over the record")
    columns[1].metric("Noise-free edges", unknown if clean is None else f"{clean:,}",
                      help="Edges the noise-free signal gives")
    columns[2].metric("Extra edges (chatter)", unknown if extra is None else f"{extra:,}")
    columns[3].metric("Mean delay", unknown if run.delay_mean is None else s(run.delay_mean),
                      help="After the noise-free signal crosses the centre; comparator delay and pull-up "
                           "rise time included")
    columns[4].metric("Largest delay", unknown if run.delay_max is None else s(run.delay_max))
    columns[5].metric("Output high", f"{100 * run.output_high_fraction:.1f} %", help="Share of the record")
    if clean is None:
        st.caption("A recorded signal has no noise-free version to compare with: chatter and delays are "
                   "not known (—).")
    for line in run.findings:
        st.info(literal(line), icon=":material/info:")


def _prediction(check: FalseEdgeCheck, unit: str) -> None:
    """The false edges Rice's formula predicts, with the model's simplifications."""
    v = lambda x: format_value(x, literal(unit), 3)  # noqa: E731
    columns = st.columns(4)
    columns[0].metric("Noise at the stage", f"{v(check.noise.rms_at_stage)} RMS",
                      help="After the input filter, where there is one")
    columns[1].metric("Parked: a false switching", "never" if check.parked_per_second == 0 else
                      f"every {format_interval(check.mean_time_between)}",
                      help="Input held at the upper point; noise and hum reaching the lower (Rice's formula)")
    for column, name, extra in ((columns[2], "upper", check.extra_upper),
                                (columns[3], "lower", check.extra_lower)):
        column.metric(f"Extra edges per crossing, {name}", "—" if extra is None else f"{extra:.3g}",
                      help="Expected from noise and hum as the signal passes that point at its slope")
    st.caption("Model: " + literal(" ".join(check.simplifications)))


def _table(table: FilterTable, unit: str) -> None:
    st.markdown(f"**Hysteresis and filter for at most {table.target_per_year:g} false edge(s) a year** "
                f"(slope {format_value(table.slope, literal(unit) + '/s', 3)})")
    best = table.best_index
    rows = [{"Time constant": format_si(tau, "s", 3),
             "Pole": "none" if tau == 0 else format_si(pole, "Hz", 3),
             "Noise at the stage": format_value(rms, unit, 3), "Hysteresis": format_value(h, unit, 4),
             "Delay at the points": format_si(d, "s", 3),
             "Note": "least delay" if i == best else ("" if ok else "over the budget")}
            for i, (tau, pole, rms, h, d, ok) in enumerate(zip(
                table.time_constants, table.poles, table.noise_rms, table.hysteresis, table.delays,
                table.within_budget, strict=True))]
    st.dataframe(rows, hide_index=True, key="signal.table")
    st.caption("Delay: half the hysteresis over the slope, plus the filter's lag (a ramp through it lags by "
               "its time constant); the comparator's own delay comes on top.")


def _tradeoff(sweep: Sweep, run: SignalRun, unit: str) -> None:
    st.markdown("**Hysteresis against edges and delay** (same centre, same signal)")
    figure = as_figure(tradeoff_spec(sweep, unit, run.hysteresis), validate=False)
    st.plotly_chart(figure, key="signal.tradeoff", config={"displaylogo": False})
    if sweep.best_width is None:
        why = " (a recorded signal has none to judge by)" if sweep.clean_edge_counts is None else ""
        st.caption(f"No width in the sweep gives exactly one edge per crossing of the noise-free "
                   f"signal{why}.")
    else:
        v = lambda x: format_value(x, literal(unit), 3)  # noqa: E731
        s = lambda x: "not known" if x is None else format_si(x, "s", 3)  # noqa: E731  (no edge: no delay)
        drawn = [w for w in sweep.run_best_widths if w is not None]
        spread = f" Each draw alone: {v(min(drawn))} to {v(max(drawn))}." if drawn and sweep.runs > 1 else ""
        predicted = sweep.predicted_best_width
        st.caption(f"Narrowest width with one clean edge per crossing in all {sweep.runs} noise draw(s): "
                   f"{v(sweep.best_width)}, mean delay {s(sweep.best_mean_delay)}, largest "
                   f"{s(sweep.best_max_delay)}.{spread}"
                   + ("" if predicted is None else f" Predicted (Rice's formula): {v(predicted)}.")
                   + f" This design: {v(run.hysteresis)}.")


def render(sheet) -> None:
    """Signal settings, the run, its figures and prediction, time plot, trade-off curve and table."""
    design, unit = sheet.design, sheet.design.unit
    st.caption(f"Runs a signal in {front_end_of(design).quantity} ({literal(symbol(unit))}) through the "
               "design's switching points and reports every output edge, and the false edges its noise and "
               "hum bring.")
    st.session_state.setdefault(_PREFIX + "source", "synthetic")
    source = st.radio("Signal", tuple(_SOURCES), key=_PREFIX + "source", format_func=_SOURCES.get,
                      horizontal=True, label_visibility="collapsed")
    signal = _synthetic_settings(design, unit) if source == "synthetic" else _recorded_settings(unit)
    if source == "recorded" and signal is not None:
        _to_design(design, unit)
    settings = None if signal is None else (signal, *_target_settings(unit))
    st.session_state.setdefault(_PREFIX + "sweep", True)
    left, right = st.columns([3, 1], vertical_alignment="center")
    sweep = left.checkbox("Also sweep the hysteresis width (the trade-off curve)", key=_PREFIX + "sweep")
    if right.button("Run the signal check", type="primary", icon=":material/play_arrow:", width="stretch",
                    disabled=settings is None):
        _run(design, settings, sweep)
    result = runs.recall("signal", design, (settings, sweep)) if settings is not None else None
    if result is None:
        st.info("Press “Run the signal check” to run this signal through the design.")
        return
    run = result.run
    _figures(run, unit)
    if run.check is not None:
        _prediction(run.check, unit)
    spec = signal_spec(run, (sheet.analysis.output_low, sheet.analysis.output_high), unit)
    st.plotly_chart(as_figure(spec, validate=False), key="signal.time", config={"displaylogo": False})
    if len(run.wave) > DISPLAY_POINTS:
        st.caption(f"{len(run.wave):,} samples: the plot draws the least and greatest of each short run of "
                   f"samples; the edge markers are at the exact edge times.")
    if result.sweep is not None:
        _tradeoff(result.sweep, run, unit)
    if result.table is not None:
        _table(result.table, unit)
