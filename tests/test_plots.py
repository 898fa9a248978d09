"""The transfer-curve figure: valid Plotly, both branches, both points labelled, the band shaded."""

import plotly.graph_objects as go

from bandcalc.model.transfer import transfer_curve
from bandcalc.model.units import format_si
from bandcalc.outputs.plots import PALETTE, transfer_figure, transfer_spec


def test_spec_passes_plotlys_schema(each_demo):
    # Plotly's own validators (the page skips them for speed, so they run here).
    spec = transfer_spec(transfer_curve(each_demo), title="t")
    fig = go.Figure(spec)
    assert [t.name for t in fig.data][:3] == ["Rising input", "Falling input", "Switching points"]


def test_points_band_and_labels(demo):
    c = transfer_curve(demo("sump_level_switch"))
    fig = transfer_figure(c)
    rising, falling, points, *arrows = fig.data
    assert list(rising.x) == list(c.signal) and list(rising.y) == list(c.rising)
    assert list(falling.y) == list(c.falling)
    assert tuple(points.x) == (c.upper, c.lower)
    assert points.text == (f"Upper {format_si(c.upper, 'V', 4)}", f"Lower {format_si(c.lower, 'V', 4)}")
    band = fig.layout.shapes[0]
    assert (band.x0, band.x1, band.fillcolor) == (c.lower, c.upper, PALETTE["band"])
    (label,) = fig.layout.annotations  # the band's label; arrows are traces (cheaper to redraw)
    assert label.text == f"Hysteresis {format_si(c.hysteresis, 'V', 4)}"
    # Four direction arrows, two per branch: along the branch in the band (rising to the right,
    # falling to the left) and along its jump (up at the upper point for this non-inverting stage,
    # down at the lower), each a segment with its arrowhead at the head.
    up, down = arrows
    assert [up.name, down.name] == ["Direction, rising input", "Direction, falling input"]
    assert up.x[1] > up.x[0] and down.x[1] < down.x[0]
    assert up.x[3] == up.x[4] == c.upper and down.x[3] == down.x[4] == c.lower
    assert up.marker.size[1] > 0 == up.marker.size[0] and up.marker.angleref == "previous"
    assert (up.line.color, down.line.color) == (PALETTE["rising"], PALETTE["falling"])
    assert rising.line.color == PALETTE["rising"] and falling.line.color == PALETTE["falling"]


def test_view_centres_on_a_narrow_band(demo):
    # Motor-current flag: a 33 mV band on a +/-5 V signal; the first view shows the band.
    c = transfer_curve(demo("motor_current_direction"))
    lo, hi = transfer_figure(c).layout.xaxis.range
    assert lo <= c.lower and hi >= c.upper
    assert hi - lo < 10 * c.hysteresis


def test_fast_figure_matches_validated_one(demo):
    c = transfer_curve(demo("greenhouse_fan_thermostat"))
    assert transfer_figure(c, validate=False).to_dict() == transfer_figure(c).to_dict()


# --- spread and signal figures ------------------------------------------------------------------

def test_spread_and_signal_specs_pass_plotlys_schema(demo):
    import numpy as np

    from bandcalc.outputs.plots import histogram_spec, sensitivity_spec, signal_spec, tradeoff_spec
    from bandcalc.signal_check.edges import run_design, run_points
    from bandcalc.signal_check.waveform import SyntheticSignal, synthesize
    from bandcalc.signal_check.width_trade import sweep_design
    from bandcalc.spread.propagation import spread

    d = demo("solar_battery_disconnect")
    s = spread(d, samples=1000)
    y = s.monte_carlo.build_yield
    wc = s.worst_case
    hist = go.Figure(histogram_spec(s.monte_carlo.hysteresis, "Hysteresis", "V",
                                    window=y.windows["hysteresis"], nominal=wc.nominal["hysteresis"],
                                    extremes=(wc.hysteresis.min, wc.hysteresis.max)))
    # An open side of a window (hysteresis: at least 0.9 V) is drawn to the edge of the view.
    assert hist.layout.shapes[0].x1 == hist.layout.xaxis.range[1] and hist.layout.shapes[0].x0 == 0.9
    bars = go.Figure(sensitivity_spec(s.sensitivity, {}))
    assert [t.name for t in bars.data] == ["Hysteresis", "Lower point", "Upper point"]
    upper, lower, _ = run_points(d)
    wave = synthesize("sine", 0.5 * (upper + lower), upper - lower, 50, 0.1, 1e5, noise_rms=0.1, seed=1)
    run = run_design(d, wave)
    time = go.Figure(signal_spec(run, (0.0, 5.0), "V"))
    assert [t.name for t in time.data] == ["Input", "Noise-free input", "Upper point", "Lower point",
                                           "Output", "Rising edges", "Falling edges"]
    # The output steps between the two levels exactly at the edge times, starting where the run starts.
    step = time.data[4]
    assert list(step.x[1:-1:2]) == list(run.edge_times) == list(step.x[2:-1:2])
    assert step.y[0] == (5.0 if run.output_high[0] else 0.0) and set(step.y) == {0.0, 5.0}
    assert np.all(np.diff(step.x) >= 0)
    trade = go.Figure(tradeoff_spec(sweep_design(d, wave), "V", upper - lower))
    assert [s.name for s in trade.layout.shapes] == ["Narrowest clean width", "Predicted", "This design"]
    assert "Predicted edges (Rice)" in [t.name for t in trade.data]
    spec = SyntheticSignal("sine", 0.5 * (upper + lower), upper - lower, 50, 0.1, 1e5, noise_rms=0.1, seed=1)
    draws = go.Figure(tradeoff_spec(sweep_design(d, spec), "V", upper - lower))
    assert [t.name for t in draws.data][:3] == ["Fewest (any draw)", "Most (any draw)", "Output edges"]


def test_display_index_keeps_each_runs_extremes():
    import numpy as np

    from bandcalc.outputs.plots import display_index

    v = np.random.default_rng(5).normal(size=100_003)
    v[12_345] = 9.0  # a spike must survive the thinning
    index = display_index(v, 2000)
    assert index.size <= 2002 and index[0] == 0 and index[-1] == v.size - 1
    assert np.all(np.diff(index) > 0) and 12_345 in index
    # Brute force: the least and greatest sample of each of the 1000 runs of ceil(n / 1000) samples.
    size = -(-v.size // 1000)
    for start in range(0, v.size, size):
        block = v[start:start + size]
        assert start + int(np.argmin(block)) in index and start + int(np.argmax(block)) in index
    assert np.array_equal(display_index(v[:500], 2000), np.arange(500))
