"""Signal runs from a design: its points, its delay and its output rise time; the command."""

import json

import pytest

from bandcalc.cli.commands import main
from bandcalc.model.operating import analyze
from bandcalc.signal_check.edges import run_design
from bandcalc.signal_check.output_timing import output_timing
from bandcalc.signal_check.waveform import synthesize
from bandcalc.signal_check.width_trade import sweep_design


def test_push_pull_design_without_load_capacitance_has_no_rise_time(demo):
    timing = output_timing(demo("sump_level_switch"))
    assert timing.rise == timing.fall == 0.0 and timing.findings == ()


def test_sweep_about_the_design_centre_finds_a_clean_width(demo):
    d = demo("sump_level_switch")
    a = analyze(d)
    wave = synthesize("sine", a.centre, 1.5, 20.0, 0.25, 50e3, noise_rms=0.02, seed=4)
    sweep = sweep_design(d, wave)
    assert sweep.centre == pytest.approx(a.centre)
    # 6.6 x 20 mV = 132 mV peak-to-peak (common practice): a wider band is clean.
    assert sweep.best_width is not None and sweep.best_width <= 6.6 * 0.02 + sweep.widths[1]


def test_signal_command_json(capsys, demo_path):
    path = demo_path("magnetic_speed_pickup")
    assert main(["signal", path, "--noise", "0.01", "--sweep", "--json", "--seed", "3"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["edges"] == len(out["edge_times"]) and out["edges"] > 0
    assert out["edge_times"] == sorted(out["edge_times"])
    assert "best_width" in out["sweep"]


def test_signal_command_bad_csv_names_file_and_line(tmp_path, capsys, demo_path):
    bad = tmp_path / "wave.csv"
    bad.write_text("t,v\n0,1\n0.1,abc\n")
    assert main(["signal", demo_path("sump_level_switch"), "--csv", str(bad)]) == 2
    err = capsys.readouterr().err
    assert "wave.csv" in err and "line 3" in err


def test_signal_command_reads_a_recorded_csv(tmp_path, capsys, demo_path):
    wave = tmp_path / "w.csv"
    rows = [f"{i * 1e-3};{'4,5' if (i // 100) % 2 else '0,5'}" for i in range(1000)]
    wave.write_text("time;volts\n" + "\n".join(rows) + "\n")
    assert main(["signal", demo_path("sump_level_switch"), "--csv", str(wave), "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["edges"] == 9


def test_front_end_design_runs_in_the_watched_quantity(capsys, demo, demo_path):
    # A thermistor on the bottom of its divider: the source voltage falls as temperature rises,
    # so the inverting stage reads as non-inverting in degrees C (warmer -> output high).
    d = demo("greenhouse_fan_thermostat")
    a = analyze(d)
    wave = synthesize("sine", a.points.centre, 6.0, 0.01, 200.0, 50.0, noise_rms=0.05, noise_bandwidth=2.0)
    run = run_design(d, wave)
    assert (run.upper, run.lower) == pytest.approx((float(a.points.upper), float(a.points.lower)))
    assert not run.inverting
    assert " C " in run.findings[0] and " V " not in run.findings[0]
    assert main(["signal", demo_path("greenhouse_fan_thermostat"), "--json", "--frequency", "0.01",
                 "--duration", "200", "--rate", "50"]) == 0
    assert json.loads(capsys.readouterr().out)["unit"] == "C"
