"""Panel: a synthetic or recorded signal run through the design's switching points.

Shows the input, both points and the output with its edges over time, the edge count against the
noise-free signal's (chatter), the delays, the time high, the noise finding, and the trade-off
between hysteresis width and edges and delay.  With a front end the signal is the watched
quantity itself (battery volts, degrees C, ...).  The run happens on a button press and is kept
for the design (:mod:`bandcalc.page.runs`); only the latest run is kept, as it holds its waveform.
"""

from __future__ import annotations

from dataclasses import dataclass

import streamlit as st

from bandcalc.errors import BandcalcError
from bandcalc.model.design import Design
from bandcalc.model.front_end import front_end_of
from bandcalc.model.units import format_si, format_value
from bandcalc.outputs.plots import DISPLAY_POINTS, as_figure, signal_spec, tradeoff_spec
from bandcalc.page import runs, state
from bandcalc.page.compute import guarded
from bandcalc.page.inputs import read_value
from bandcalc.page.literal import literal
from bandcalc.signal_check.edges import SignalRun, run_design, run_points
from bandcalc.signal_check.recording import read_waveform_csv
from bandcalc.signal_check.waveform import HUM_FREQUENCIES, SHAPES, Waveform, synthesize
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
    "noise": ("Noise, RMS", "watched", "", "none"),
    "hum": ("Mains hum, peak", "watched", "", "none"),
}


@dataclass(frozen=True, eq=False)
class SignalResult:
    """One signal check: the run, the width sweep (None if not asked for) and what the signal was."""

    run: SignalRun
    sweep: Sweep | None
    described: str


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
    st.text_input(f"{label} ({literal(unit)})", key=key, placeholder=f"blank: {blank}" if blank else None,
                  on_change=_setting_changed, args=(name, label, unit, blank is not None))


def _value(name: str, unit: str) -> float | None:
    label, kind, _, _ = SETTINGS[name]
    text = str(st.session_state.get(_PREFIX + name, "")).strip()
    return read_value(text, unit if kind == "watched" else kind, label) if text else None


def _synthetic_settings(design: Design, unit: str) -> tuple:
    upper, lower, _ = run_points(design)
    columns = st.columns(4)
    st.session_state.setdefault(_PREFIX + "shape", "sine")
    columns[0].selectbox("Shape", SHAPES, key=_PREFIX + "shape", format_func=_SHAPES.get)
    for i, name in enumerate(("offset", "amplitude", "frequency", "duration", "rate", "noise", "hum")):
        with columns[(i + 1) % 4]:
            _setting(name, unit)
    st.session_state.setdefault(_PREFIX + "hum_frequency", 50)
    columns[0].selectbox("Mains frequency (Hz)", HUM_FREQUENCIES, key=_PREFIX + "hum_frequency")
    st.session_state.setdefault(_PREFIX + "seed", 1)
    columns[1].number_input("Noise seed", 0, 2**31 - 1, key=_PREFIX + "seed",
                            help="The same seed gives the same noise")
    offset, amplitude = _value("offset", unit), _value("amplitude", unit)
    v = lambda x: format_value(x, literal(unit))  # noqa: E731
    st.caption(f"Blank centre and amplitude follow the design: centre {v(0.5 * (upper + lower))}, "
               f"amplitude {v(upper - lower)} (so the signal crosses both points).")
    return (st.session_state[_PREFIX + "shape"], 0.5 * (upper + lower) if offset is None else offset,
            upper - lower if amplitude is None else amplitude, _value("frequency", unit),
            _value("duration", unit), _value("rate", unit), _value("noise", unit) or 0.0,
            _value("hum", unit) or 0.0, float(st.session_state[_PREFIX + "hum_frequency"]),
            int(st.session_state[_PREFIX + "seed"]))


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
        st.session_state[_PREFIX + "recorded"] = (upload.name, upload.file_id, wave)
        state.say("success", f"Read {upload.name}: {_described(wave)}.")


def _recorded_settings(unit: str) -> tuple | None:
    st.file_uploader("Recorded signal: time (s) and value columns", type=["csv", "txt", "tsv"],
                     key=_PREFIX + "upload", on_change=_uploaded, max_upload_size=MAX_CSV_MB,
                     help=f"Header optional; comma, semicolon or tab; decimal point or comma; values in "
                          f"{literal(unit)}; up to {MAX_CSV_MB} MB")
    recorded = st.session_state.get(_PREFIX + "recorded")
    if recorded is None:
        st.caption("No recorded signal loaded yet.")
        return None
    name, file_id, wave = recorded
    st.caption(f"Using {literal(name)}: {_described(wave)}.")
    return ("recorded", name, file_id)


def _run(design: Design, settings: tuple, sweep: bool) -> None:
    with st.spinner("Running the signal…"):
        if settings[0] == "recorded":
            wave: Waveform | None = st.session_state[_PREFIX + "recorded"][2]
            described = f"recorded signal {settings[1]}"
        else:
            wave = guarded("Signal", synthesize, *settings)
            described = f"synthetic {settings[0]} signal"
        if wave is None:
            return
        run = guarded("Signal check", run_design, design, wave)
        widths = guarded("Width sweep", sweep_design, design, wave) if sweep and run is not None else None
    if run is not None:
        runs.remember("signal", design, (settings, sweep), SignalResult(run, widths, described))


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
    shown_unit = literal(unit)
    st.caption(f"Noise {format_value(run.noise.rms, shown_unit, 3)} RMS, about "
               f"{format_value(run.noise.peak_to_peak, shown_unit, 3)} peak-to-peak "
               f"({literal(run.noise.source)}).")
    for line in run.findings:
        st.info(literal(line), icon=":material/info:")


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
        st.caption(f"Narrowest width with one clean edge per crossing: {v(sweep.best_width)}, mean delay "
                   f"{s(sweep.best_mean_delay)}, largest {s(sweep.best_max_delay)}. "
                   f"This design: {v(run.hysteresis)}.")


def render(sheet) -> None:
    """Signal settings, the run, and its figures, time plot and trade-off curve."""
    design, unit = sheet.design, sheet.design.unit
    st.caption(f"Runs a signal in {front_end_of(design).quantity} ({literal(unit)}) through the design's "
               "switching points and reports every output edge.")
    st.session_state.setdefault(_PREFIX + "source", "synthetic")
    source = st.radio("Signal", tuple(_SOURCES), key=_PREFIX + "source", format_func=_SOURCES.get,
                      horizontal=True, label_visibility="collapsed")
    settings = _synthetic_settings(design, unit) if source == "synthetic" else _recorded_settings(unit)
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
    spec = signal_spec(run, (sheet.analysis.output_low, sheet.analysis.output_high), unit)
    st.plotly_chart(as_figure(spec, validate=False), key="signal.time", config={"displaylogo": False})
    if len(run.wave) > DISPLAY_POINTS:
        st.caption(f"{len(run.wave):,} samples: the plot draws the least and greatest of each short run of "
                   f"samples; the edge markers are at the exact edge times.")
    if result.sweep is not None:
        _tradeoff(result.sweep, run, unit)

