"""The spread, signal-check and summary panels, driven with AppTest: settings in, numbers and figure
data out, messages for bad input.  Expected numbers come from the package (``spread``,
``run_design``, ``sweep_design``, ``design_summary``), whose own tests check them against brute
force, normal-distribution tables and worked examples; here the question is whether the page runs
them with the settings shown and shows their results faithfully."""

import numpy as np
import pytest
from page_helpers import (
    SUMP,
    button,
    captions,
    chart,
    charts,
    design_on,
    errors,
    figures,
    numbers,
    page,
    trace,
)

from bandcalc.demos import load_demo
from bandcalc.model.units import format_probability, format_si, format_value
from bandcalc.outputs.netlist import netlist
from bandcalc.outputs.summary import design_summary
from bandcalc.page.names import factor_name
from bandcalc.page.panels import spread as spread_panel
from bandcalc.signal_check.edges import run_design, run_points
from bandcalc.signal_check.noise import given_disturbance
from bandcalc.signal_check.recording import read_waveform_csv
from bandcalc.signal_check.waveform import SyntheticSignal, synthesize
from bandcalc.signal_check.width_trade import sweep_design
from bandcalc.spread.propagation import failure_places, spread

SOLAR = load_demo("solar_battery_disconnect")
GREENHOUSE = load_demo("greenhouse_fan_thermostat")
QUANTITIES = ("upper", "lower", "hysteresis")


def table_with(at, column: str) -> dict[str, list]:
    """The one table with a column headed ``column``, as lists by heading."""
    (frame,) = [t.value for t in at.table if column in t.value.columns]
    return {c: list(frame[c]) for c in frame.columns}


# --- spread -------------------------------------------------------------------------------------

def run_spread(design, samples: int = 1000, seed: int = 1):
    at = page(design=design, panel="Spread")
    at.number_input(key="page.spread.samples").set_value(samples)
    at.number_input(key="page.spread.seed").set_value(seed)
    return button(at, "Run the spread").click().run()


@pytest.mark.parametrize("design", [SUMP, SOLAR], ids=["sump", "solar, in battery volts"])
def test_spread_shows_worst_case_statistics_yield_and_sensitivity(design):
    at = run_spread(design)
    assert not at.exception and not errors(at)
    s = spread(design, samples=1000, seed=1)
    v = lambda x: format_value(x, s.unit, 4)  # noqa: E731
    worst = table_with(at, "Nominal")
    wc = s.worst_case
    assert worst["Nominal"] == [v(wc.nominal[q]) for q in QUANTITIES]
    assert worst["Least"] == [v(getattr(wc, q).min) for q in QUANTITIES]
    assert worst["Greatest"] == [v(getattr(wc, q).max) for q in QUANTITIES]
    stats = table_with(at, "Mean")
    mc = s.monte_carlo
    assert stats["Mean"] == [v(getattr(mc, q).mean) for q in QUANTITIES]
    # Over a temperature range the percentiles are of each build's least (below the median) and greatest.
    assert stats["0.135 %"] == [v(mc.lowest[q].percentiles[0.135]) for q in QUANTITIES]
    assert stats["99.865 %"] == [v(mc.highest[q].percentiles[99.865]) for q in QUANTITIES]
    y = mc.build_yield
    assert figures(at)["Yield"] == f"{100 * y.fraction:.3f} %"
    assert figures(at)["Failure probability"] == format_probability(y.failure.probability)
    interval = f"95 % interval {100 * y.low:.3f} % to {100 * y.high:.3f} %"
    assert any(c.startswith(interval) for c in captions(at))
    assert any(c.startswith(f"Failure probability, 95 % interval {format_probability(y.failure.low)}")
               for c in captions(at))
    shown = " ".join(m.value for m in at.markdown)
    for place in failure_places(s):
        assert place in shown
    for line in s.simplifications:
        assert line in shown
    # Histograms: each build's least and greatest over the range, the counts and bins of the package's
    # summaries, the window and the worst case drawn.
    specs = [c for c in charts(at) if any(t.get("name") == "Least over the range" for t in c["data"])]
    assert [h["layout"]["title"]["text"] for h in specs] == ["Upper switching point", "Lower switching point",
                                                            "Hysteresis"]
    for spec, q in zip(specs, QUANTITIES, strict=True):
        for name, summary in (("Least over the range", mc.lowest[q]),
                              ("Greatest over the range", mc.highest[q])):
            bars = trace(spec, name)
            assert np.array_equal(numbers(bars["y"]), summary.counts)
            assert numbers(bars["x"]) == pytest.approx(0.5 * (summary.edges[1:] + summary.edges[:-1]))
        shapes = {shape["name"]: shape for shape in spec["layout"]["shapes"]}
        low, high = y.windows[q]
        assert shapes["Window"]["x0"] == pytest.approx(max(low, spec["layout"]["xaxis"]["range"][0]))
        assert shapes["Window"]["x1"] == pytest.approx(min(high, spec["layout"]["xaxis"]["range"][1]))
        assert shapes["Worst case, least"]["x0"] == pytest.approx(getattr(wc, q).min)
        assert shapes["Nominal"]["x0"] == pytest.approx(wc.nominal[q])
    # Sensitivity: each factor's share, largest at the top (Plotly lists categories bottom up).
    ranked = chart(at, "Upper point")
    for q, name in (("upper", "Upper point"), ("hysteresis", "Hysteresis")):
        bars = trace(ranked, name)
        share = {factor_name(sh.factor): 100 * sh.share for sh in getattr(s.sensitivity, q)}
        assert numbers(bars["x"]) == pytest.approx([share[f] for f in bars["y"]])
    top = max(s.sensitivity.upper + s.sensitivity.lower + s.sensitivity.hysteresis, key=lambda sh: sh.share)
    assert trace(ranked, "Upper point")["y"][-1] == factor_name(top.factor)


def test_long_runs_report_progress(monkeypatch):
    calls = []

    def recorded(design, **kwargs):
        def progress(done, total):
            calls.append((done, total))
            kwargs_progress(done, total)

        kwargs_progress = kwargs.pop("progress")
        return spread(design, progress=progress, **kwargs)

    monkeypatch.setattr(spread_panel, "spread", recorded)
    at = run_spread(SUMP, samples=100_000)
    assert not at.exception
    assert calls[-1] == (100_000, 100_000) and len(calls) == 7  # blocks of 16,384 (propagation.CHUNK)
    assert any(m.value.startswith("**Monte Carlo**: 100,000 builds, each over 0 to 50 °C, seed 1")
               for m in at.markdown)


def test_results_are_kept_per_design_and_settings():
    at = run_spread(SUMP)
    assert figures(at)["Yield"]
    at.number_input(key="page.spread.seed").set_value(2).run()  # other settings: not run yet
    assert "Yield" not in figures(at)
    assert any(i.value.startswith("Press “Run the spread”") for i in at.info)
    at.number_input(key="page.spread.seed").set_value(1).run()  # back: kept, shown without a run
    assert "Yield" in figures(at)


def test_tolerance_edits_live_in_the_design():
    at = page(panel="Spread")
    at.text_input(key="in.tolerances.supply").input("2.5").run()
    assert design_on(at).tolerances.supply == 2.5
    at.text_input(key="in.tolerances.supply").input("lots").run()
    (message,) = errors(at)
    assert message.startswith("Each supply rail (tolerances.supply): cannot read 'lots'")
    assert message.endswith("The design keeps 2.5 %.")
    at.text_input(key="in.tolerances.supply").input("60").run()
    (message,) = errors(at)
    assert message.startswith("Each supply rail (tolerances.supply): must be from 0 to 50 percent")
    assert design_on(at).tolerances.supply == 2.5
    assert at.text_input(key="in.tolerances.supply").value == "2.5 %"
    at.text_input(key="in.tolerances.temperature.low").input("-40").run()
    assert design_on(at).tolerances.temperature == (-40.0, SUMP.tolerances.temperature[1])
    at.text_input(key="in.tolerances.limits.upper.high").input("3.3 V").run()
    assert design_on(at).tolerances.limits.upper == (SUMP.tolerances.limits.upper[0], 3.3)
    at.radio(key="in.tolerances.distribution").set_value("uniform").run()
    assert design_on(at).tolerances.distribution == "uniform"
    at.session_state["page.spread.section.resistors"] = True  # the section draws its controls while open
    at.run()
    at.selectbox(key="page.spread.part").set_value("feedback").run()
    at.text_input(key="in.tolerances.resistors.feedback").input("0.1").run()
    assert design_on(at).tolerances.resistors.get("feedback") == 0.1
    per = table_with(at, "Resistor")
    feedback = per["Resistor"].index("Feedback resistor (Rfb)")
    assert per["Tolerance"][feedback] == "0.1 % (given for this resistor)"
    button(at, "Clear the tolerances section").click().run()
    assert design_on(at).tolerances is None and not at.exception


def test_data_sheet_limits_networks_and_the_screened_distribution_edit_the_design():
    at = page(panel="Spread")
    assert "in.tolerances.output.high_drop.high" not in at.session_state  # shut sections draw nothing
    for name in ("limits", "networks"):
        at.session_state[f"page.spread.section.{name}"] = True
    at.run()
    at.radio(key="in.tolerances.distribution").set_value("screened").run()
    assert design_on(at).tolerances.distribution == "screened"
    at.text_input(key="in.tolerances.offset_current").input("20n").run()
    assert design_on(at).tolerances.offset_current == pytest.approx(20e-9)
    # The sump's push-pull output: a blank least end takes the design's own 50 mV.
    at.text_input(key="in.tolerances.output.high_drop.high").input("300 mV").run()
    assert design_on(at).tolerances.output.high_drop == pytest.approx((0.05, 0.3))
    at.text_input(key="in.tolerances.output.high_drop.low").input("0.4").run()
    (message,) = errors(at)
    assert "tolerances.output.high_drop" in message and "must not be above the greatest" in message
    assert design_on(at).tolerances.output.high_drop == pytest.approx((0.05, 0.3))
    at.text_input(key="in.tolerances.comparator_hysteresis.high").input("6m").run()
    assert design_on(at).tolerances.comparator_hysteresis == pytest.approx((0.0, 0.006))
    # A network of the two resistors: their own coefficients give way to its bounds.
    at.multiselect(key="page.spread.network.members").set_value(["input", "feedback"])
    at.text_input(key="page.spread.network.tempco").input("50")
    at.text_input(key="page.spread.network.tracking").input("5")
    button(at, "Add or replace the network").click().run()
    assert not at.exception and not errors(at)
    (net,) = design_on(at).tolerances.resistor_networks
    assert (net.name, net.resistors, net.tempco, net.tracking) == ("RN1", ("input", "feedback"), 50.0, 5.0)
    button(at, "Remove").click().run()
    assert design_on(at).tolerances.resistor_networks == ()


# --- signal check -------------------------------------------------------------------------------

def run_signal(design, settings: dict | None = None, sweep: bool = True):
    at = page(design=design, panel="Signal check")
    for name, text in (settings or {}).items():
        at.text_input(key=f"page.signal.{name}").input(text)
    at.checkbox(key="page.signal.sweep").set_value(sweep)
    return button(at, "Run the signal check").click().run()


@pytest.mark.parametrize(("design", "noise"), [(SUMP, 0.05), (GREENHOUSE, 0.3)],
                         ids=["sump", "greenhouse, in C"])
def test_synthetic_signal_check_matches_the_package(design, noise):
    at = run_signal(design, {"noise": str(noise)})
    assert not at.exception and not errors(at)
    upper, lower, _ = run_points(design)
    spec = SyntheticSignal("sine", 0.5 * (upper + lower), upper - lower, 50.0, 0.1, 100e3, noise_rms=noise,
                           seed=1)
    wave = spec.make()
    given = given_disturbance(spec)
    run = run_design(design, wave, disturbance=given)
    sweep = sweep_design(design, spec, disturbance=given)
    shown = figures(at)
    assert shown["Output edges"] == f"{run.edge_count:,}"
    assert shown["Noise-free edges"] == f"{run.clean_edge_count:,}"
    assert shown["Extra edges (chatter)"] == f"{run.extra_edges:,}"
    delays = run.edge_delays[np.isfinite(run.edge_delays)]
    assert shown["Mean delay"] == format_si(delays.mean(), "s", 3)
    assert shown["Output high"] == f"{100 * run.output_high_fraction:.1f} %"
    assert [i.value for i in at.info] == list(run.findings)
    time = chart(at, "Input")
    assert numbers(trace(time, "Input")["x"]).size == len(wave)  # 10,001 samples: all drawn
    rising = trace(time, "Rising edges")
    assert np.array_equal(numbers(rising["x"]), run.edge_times[run.output_rising])  # exact edge times
    assert trace(time, "Upper point")["y"] == pytest.approx([upper, upper])
    assert time["layout"]["yaxis"]["title"]["text"] == f"Input ({'V' if design.front_end is None else '°C'})"
    trade = chart(at, "Output edges")
    assert np.array_equal(numbers(trace(trade, "Output edges")["y"]), sweep.edge_counts)
    marks = {s["name"]: s for s in trade["layout"]["shapes"]}
    assert marks["Narrowest clean width"]["x0"] == pytest.approx(sweep.best_width)
    assert marks["This design"]["x0"] == pytest.approx(upper - lower)


def test_a_sweep_without_edges_says_the_delay_is_not_known():
    # A signal far below the points: no edges at any width, so no delay to print (not "n/a s").
    at = run_signal(SUMP, {"offset": "0", "amplitude": "10m"})
    assert not at.exception and not errors(at)
    (said,) = [c for c in captions(at) if c.startswith("Narrowest width with one clean edge per crossing")]
    assert "mean delay not known, largest not known" in said and "n/a" not in said


def test_bad_signal_settings_are_named_and_the_old_value_kept():
    at = page(panel="Signal check")
    at.text_input(key="page.signal.frequency").input("fast").run()
    (message,) = errors(at)
    assert message.startswith("Frequency: cannot read 'fast'") and message.endswith("keeps 50 Hz.")
    assert at.text_input(key="page.signal.frequency").value == "50 Hz"
    at.text_input(key="page.signal.frequency").input("60k").run()  # readable, but above Nyquist
    button(at, "Run the signal check").click().run()
    assert any(e.startswith("Signal: frequency must be below sample_rate / 2 = 50000 Hz") for e in errors(at))
    assert not at.exception and "Output edges" not in figures(at)


def test_signal_settings_are_labelled_with_their_units_and_a_count_without_one():
    at = page(panel="Signal check")
    labels = {key: at.text_input(key=f"page.signal.{key}").label for key in ("frequency", "offset", "target")}
    assert labels == {"frequency": "Frequency (Hz)", "offset": "Centre of the signal (V)",
                      "target": "False edges a year, at most"}  # not "at most ()"


def recording(n: int = 30_000) -> bytes:
    """A noisy sine about the sump demo's centre, as a recorder writes it (header, comma-separated)."""
    t = np.arange(n) / 100e3
    v = 2.5 + 1.4 * np.sin(2 * np.pi * 50 * t) + np.random.default_rng(3).normal(0, 0.05, n)
    return ("time_s,volts\n" + "".join(f"{a:.6e},{b:.6f}\n" for a, b in zip(t, v, strict=True))).encode()


def test_a_recorded_signal_is_thinned_for_display_with_exact_edges():
    data = recording()
    at = page(panel="Signal check")
    at.radio(key="page.signal.source").set_value("recorded").run()
    at.file_uploader(key="page.signal.upload").set_value(("level.csv", data, "text/csv")).run()
    assert [s.value for s in at.success] == ["Read level.csv: 30,000 samples over 300 ms."]
    button(at, "Run the signal check").click().run()
    assert not at.exception and not errors(at)
    run = run_design(SUMP, read_waveform_csv(data))
    assert figures(at)["Output edges"] == f"{run.edge_count:,}"
    assert figures(at)["Noise-free edges"] == "—" and figures(at)["Mean delay"] == "—"
    assert not [t for t in chart(at, "Output edges")["data"] if t["name"] == "Mean delay"]  # none to draw
    time = chart(at, "Input")
    drawn = numbers(trace(time, "Input")["y"])
    assert drawn.size <= 20_002 and drawn.max() == run.wave.v.max() and drawn.min() == run.wave.v.min()
    edges = np.concatenate([numbers(trace(time, name)["x"]) for name in ("Rising edges", "Falling edges")])
    assert np.array_equal(np.sort(edges), np.sort(run.edge_times))
    assert any("the edge markers are at the exact edge times" in c for c in captions(at))


def test_a_bad_recording_names_its_line():
    at = page(panel="Signal check")
    at.radio(key="page.signal.source").set_value("recorded").run()
    bad = b"time,volts\n0,1.0\n0.001,one\n"
    at.file_uploader(key="page.signal.upload").set_value(("bad.csv", bad, "text/csv")).run()
    (message,) = errors(at)
    assert message.startswith("bad.csv: line 3") and message.endswith("No recorded signal is loaded.")
    assert button(at, "Run the signal check").disabled


# --- summary ------------------------------------------------------------------------------------

def test_summary_preview_and_download():
    at = page(panel="Summary")
    (preview,) = [m.value for m in at.markdown if m.value.startswith("# ")]
    assert preview == design_summary(SUMP).rstrip("\n")  # the page drops the closing newline
    (download,) = [b for b in at.get("download_button") if b.proto.label == "Download the summary"]
    assert download.proto.url.endswith(".md")
    assert any(c.startswith("Run the spread or the signal check of this design to include them") for c in
               captions(at))


def test_netlist_download_beside_the_summary():
    from bandcalc.page.compute import netlist_of

    at = page(panel="Summary")
    (download,) = [b for b in at.get("download_button") if b.proto.label == "Download the netlist"]
    assert "ngspice -b prints upper and lower" in download.proto.help
    assert netlist_of(SUMP) == netlist(SUMP)  # what the button offers: the sweep bench


def test_summary_includes_the_runs_of_this_design(monkeypatch):
    from bandcalc.page.panels import summary

    seen = []
    monkeypatch.setattr(summary, "design_summary", lambda design, inputs: seen.append(inputs) or "# Seen")
    at = run_spread(SUMP)
    at.session_state["page.panel"] = "Signal check"
    button(at.run(), "Run the signal check").click().run()
    at.session_state["page.panel"] = "Summary"
    at.run()
    inputs = seen[-1]
    assert inputs.spread.monte_carlo.samples == 1000 and inputs.spread.design == SUMP
    assert inputs.signal.edge_count > 0 and inputs.fit is None
    assert any(c.startswith("Includes the spread (1,000 builds) and the signal check (synthetic sine signal)")
               for c in captions(at))
    at.select_slider(key="in.resistors.feedback.slider").set_value(47e3).run()  # another design
    assert seen[-1].spread is None and seen[-1].signal is None


def test_the_signal_check_shows_the_prediction_and_the_filter_table():
    at = run_signal(SUMP, {"noise": "0.2", "noise_bandwidth": "2k", "target": "1", "budget": "10u"})
    assert not at.exception and not errors(at)
    shown = figures(at)
    assert shown["Noise at the stage"] == "200 mV RMS"
    assert shown["Parked: a false switching"].startswith("every ")
    assert any(c.startswith("Model: Noise is taken as Gaussian and stationary") for c in captions(at))
    (table,) = at.dataframe
    notes = list(table.value["Note"])
    assert notes.count("least delay") == 1 and "over the budget" in notes


def test_a_recording_makes_a_design(tmp_path):
    wave = synthesize("triangle", 2.5, 2.0, 0.5, 8.0, 5e3, noise_rms=0.05, noise_bandwidth=500.0,
                      hum_amplitude=0.03, seed=2)
    rows = "".join(f"{a:.6e},{b:.6f}\n" for a, b in zip(wave.t, wave.v, strict=True))
    data = ("time_s,volts\n" + rows).encode()
    at = page(panel="Signal check")
    at.radio(key="page.signal.source").set_value("recorded").run()
    at.file_uploader(key="page.signal.upload").set_value(("tank.csv", data, "text/csv")).run()
    assert any("From its spectrum: noise" in c for c in captions(at))
    at.session_state["page.signal.make"] = True
    at.run()
    at.text_input(key="page.signal.make.level").input("2.5")
    at.text_input(key="page.signal.make.budget").input("bad")
    next(b for b in at.button if b.label == "Make the design").click().run()
    assert any(e.startswith("Delay budget: cannot read 'bad'") and e.endswith("Nothing was changed.")
               for e in errors(at))
    assert design_on(at) == SUMP
    at.text_input(key="page.signal.make.budget").input("")
    next(b for b in at.button if b.label == "Make the design").click().run()
    assert not at.exception and not errors(at)
    made = design_on(at)
    assert made.filter is not None and "Made from a recording" in made.notes
    assert made.signal.false_edges_per_year == 1.0
