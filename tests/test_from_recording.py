"""From a recording to a design: a synthetic recording whose noise and hum are known, through the
whole flow and the command."""

import json

import numpy as np
import pytest

from bandcalc.cli.commands import main
from bandcalc.model.design_file import load_design
from bandcalc.model.points import design_points
from bandcalc.outputs.summary import design_summary
from bandcalc.signal_check.edges import run_design
from bandcalc.signal_check.from_recording import design_from_recording
from bandcalc.signal_check.waveform import Waveform, synthesize

NOISE, BANDWIDTH, HUM = 0.05, 500.0, 0.03


@pytest.fixture(scope="module")
def recording():
    """A slow triangle (0.05 Hz, 0.5 V to 4.5 V) with 50 mV RMS of noise flat to 500 Hz and 30 mV
    of 50 Hz hum, as a recording (no noise-free twin)."""
    wave = synthesize("triangle", 2.5, 2.0, 0.05, 60.0, 5e3, noise_rms=NOISE, noise_bandwidth=BANDWIDTH,
                      hum_amplitude=HUM, seed=2)
    return Waveform(wave.t, wave.v)


@pytest.fixture(scope="module")
def made(recording):
    from bandcalc.demos import load_demo

    return design_from_recording(load_demo("sump_level_switch"), recording, centre=2.5,
                                 false_edges_per_year=1.0, delay_budget=0.2)


def test_the_recording_s_noise_and_hum_are_read_back(made):
    noise, hum = made.disturbance.noise, made.disturbance.hum
    assert noise.rms == pytest.approx(NOISE, rel=0.05)
    assert noise.bandwidth == pytest.approx(BANDWIDTH, rel=0.1)
    assert (hum.frequency, hum.amplitude) == (50.0, pytest.approx(HUM, rel=0.05))
    # The triangle's slope, 4 A f = 0.4 V/s (plain geometry), and its 6 passages of 2.5 V a minute.
    assert made.slope == pytest.approx(0.4, rel=0.15)
    assert made.crossings_per_second * 60 == pytest.approx(6, abs=1)


def test_the_design_has_the_least_delay_choice_fitted_about_the_centre(made):
    d = made.design
    table = made.table
    assert made.chosen == table.best_index and table.time_constants[made.chosen] > 0
    assert d.filter is not None
    pts = design_points(d)
    h = table.hysteresis[made.chosen]
    assert float(pts.centre) == pytest.approx(2.5, abs=0.01 * h + 2e-3)
    assert float(pts.hysteresis) == pytest.approx(h, rel=0.15)
    assert made.check.parked_per_second * 365.25 * 86400 < 2.0  # about the target, with rounding
    assert d.signal.noise == pytest.approx(NOISE, rel=0.05) and d.signal.false_edges_per_year == 1.0


def test_the_recording_through_the_new_design_switches_once_per_passage(made, recording):
    run = run_design(made.design, recording)
    assert run.edge_count == round(made.crossings_per_second * recording.duration)


def test_the_summary_explains_each_step(made):
    text = design_summary(made.design)
    for words in ("Made from a recording", "Read the recording", "passes 2.5 V", "narrowest hysteresis",
                  "fitted from E24", "Input filter", "Checked with these values"):
        assert words in text


def test_without_a_filter_the_hysteresis_is_wider(recording, made):
    from bandcalc.demos import load_demo

    plain = design_from_recording(load_demo("sump_level_switch"), recording, centre=2.5, allow_filter=False)
    assert plain.design.filter is None
    assert plain.table.time_constants.tolist() == [0.0]
    assert float(design_points(plain.design).hysteresis) > 3 * float(design_points(made.design).hysteresis)


def test_one_point_given_the_other_follows(recording):
    from bandcalc.demos import load_demo

    made = design_from_recording(load_demo("sump_level_switch"), recording, upper=3.0, allow_filter=False)
    pts = design_points(made.design)
    assert float(pts.upper) == pytest.approx(3.0, abs=0.01)
    assert float(pts.hysteresis) == pytest.approx(made.table.hysteresis[0], rel=0.15)


@pytest.mark.parametrize(("where", "budget", "message"), [
    ({"centre": 2.5}, 0.01, "within the delay budget of 10 ms: the least delay is"),
    ({"centre": 4.8}, None, "never passes the centre wanted, 4.8 V"),
    ({"centre": 2.5, "upper": 3.0}, None, "give exactly one of the centre, the upper point or the lower"),
    ({}, None, "give exactly one of"),
])
def test_the_flow_says_what_it_cannot_do(recording, where, budget, message):
    from bandcalc.demos import load_demo

    with pytest.raises(ValueError, match=message):
        design_from_recording(load_demo("sump_level_switch"), recording, delay_budget=budget, **where)


def test_the_command_writes_the_design(tmp_path, capsys, demo_path, recording):
    csv = tmp_path / "rec.csv"
    np.savetxt(csv, np.column_stack([recording.t, recording.v]), delimiter=",", fmt="%.9g",
               header="time,volts", comments="")
    out = tmp_path / "made.json"
    assert main(["from-recording", demo_path("sump_level_switch"), "--csv", str(csv), "--centre", "2.5V",
                 "--delay-budget", "200m", "-o", str(out), "--json"]) == 0
    report = json.loads(capsys.readouterr().out)
    assert report["file"] == str(out) and len(report["steps"]) >= 5
    assert load_design(out).filter is not None
    assert main(["from-recording", demo_path("sump_level_switch"), "--csv", str(csv), "--centre", "2.5",
                 "--delay-budget", "1m", "-o", str(tmp_path / "no.json")]) == 2
    assert "the least delay is" in capsys.readouterr().err
    assert not (tmp_path / "no.json").exists()
