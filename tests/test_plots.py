"""The transfer-curve figure: valid Plotly, both branches, both points labelled, the band shaded."""

from pathlib import Path

import plotly.graph_objects as go
import pytest

from bandcalc.design import load_design
from bandcalc.plots import PALETTE, transfer_figure, transfer_spec
from bandcalc.transfer import transfer_curve
from bandcalc.units import format_si

DEMO_DIR = Path(__file__).parent.parent / "demo_data"
DEMOS = sorted(DEMO_DIR.glob("*.json"))


@pytest.mark.parametrize("path", DEMOS, ids=lambda p: p.stem)
def test_spec_passes_plotlys_schema(path):
    # Plotly's own validators (the page skips them for speed, so they run here).
    spec = transfer_spec(transfer_curve(load_design(path)), title="t")
    fig = go.Figure(spec)
    assert [t.name for t in fig.data] == ["Rising input", "Falling input", "Switching points"]


def test_points_band_and_labels():
    c = transfer_curve(load_design(DEMO_DIR / "sump_level_switch.json"))
    fig = transfer_figure(c)
    rising, falling, points = fig.data
    assert list(rising.x) == list(c.signal) and list(rising.y) == list(c.rising)
    assert list(falling.y) == list(c.falling)
    assert tuple(points.x) == (c.upper, c.lower)
    assert points.text == (f"Upper {format_si(c.upper, 'V', 4)}", f"Lower {format_si(c.lower, 'V', 4)}")
    band = fig.layout.shapes[0]
    assert (band.x0, band.x1, band.fillcolor) == (c.lower, c.upper, PALETTE["band"])
    assert fig.layout.annotations[0].text == f"Hysteresis {format_si(c.hysteresis, 'V', 4)}"
    # Four direction arrows: along each branch in the band and along each jump.
    arrows = [a for a in fig.layout.annotations if a.showarrow]
    assert len(arrows) == 4
    right, left = arrows[0], arrows[1]
    assert right.x > right.ax and left.x < left.ax
    assert rising.line.color == PALETTE["rising"] and falling.line.color == PALETTE["falling"]


def test_view_centres_on_a_narrow_band():
    # Motor-current flag: a 33 mV band on a +/-5 V signal; the first view shows the band.
    c = transfer_curve(load_design(DEMO_DIR / "motor_current_direction.json"))
    lo, hi = transfer_figure(c).layout.xaxis.range
    assert lo <= c.lower and hi >= c.upper
    assert hi - lo < 10 * c.hysteresis


def test_fast_figure_matches_validated_one():
    c = transfer_curve(load_design(DEMO_DIR / "greenhouse_fan_thermostat.json"))
    assert transfer_figure(c, validate=False).to_dict() == transfer_figure(c).to_dict()
