"""Signal runs from a design: its points, its delay and its output rise time; the command."""

import json
import math
import re
from dataclasses import replace

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
    assert " °C " in run.findings[0] and " V " not in run.findings[0]
    assert main(["signal", demo_path("greenhouse_fan_thermostat"), "--json", "--frequency", "0.01",
                 "--duration", "200", "--rate", "50"]) == 0
    assert json.loads(capsys.readouterr().out)["unit"] == "C"


def test_signal_json_reports_the_noise_at_the_stage_and_the_parked_rate(capsys, demo_path):
    # The contract: noise_rms_at_stage (after the filter), noise_bandwidth (as given) and
    # parked_crossings_per_second (Rice) beside today's keys; strict JSON throughout.
    path = demo_path("sump_level_switch")
    assert main(["signal", path, "--noise", "0.18", "--noise-bandwidth", "5k", "--frequency", "1",
                 "--duration", "1", "--sweep", "--seeds", "3", "--false-edges-per-year", "1",
                 "--json"]) == 0
    text = capsys.readouterr().out
    out = json.loads(text, parse_constant=lambda c: pytest.fail(f"not strict JSON: {c}"))
    assert {"edges", "edge_times", "clean_edges", "extra_edges", "missed", "delay_mean", "delay_max",
            "output_high_fraction", "noise_rms", "noise_peak_to_peak", "findings"} <= set(out)
    assert out["noise_bandwidth"] == 5e3
    assert out["noise_rms_at_stage"] == pytest.approx(0.18)
    # Rice: sqrt(m2/m0)/(2 pi) = B / sqrt(3) for flat noise to B, at the hysteresis h.
    h = out["upper"] - out["lower"]
    expected = 5e3 / math.sqrt(3) * math.exp(-h**2 / (2 * 0.18**2))
    assert out["parked_crossings_per_second"] == pytest.approx(expected, rel=1e-9)
    assert out["parked_mean_time_between"] == pytest.approx(1 / expected)
    assert out["sweep"]["seeds"] == 3 and len(out["sweep"]["run_best_widths"]) == 3
    rows = out["filter_table"]["rows"]
    assert rows[0]["time_constant"] == 0 and rows[0]["pole"] is None


def test_signal_with_a_filter_reports_the_filtered_noise(capsys, demo, tmp_path):
    from bandcalc.model.design import InputFilter
    from bandcalc.model.design_file import save_design
    from bandcalc.model.input_filter import filter_pole

    d = replace(demo("sump_level_switch"), filter=InputFilter(0.0, 1e-6))
    path = tmp_path / "filtered.json"
    save_design(d, path)
    assert main(["signal", str(path), "--noise", "0.1", "--noise-bandwidth", "10k", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    pole = filter_pole(d).pole
    x = 10e3 / pole
    assert out["filter_pole"] == pytest.approx(pole)
    # Flat noise to B behind one pole fc: m0 = rms^2 fc atan(B / fc) / B (first principles).
    assert out["noise_rms_at_stage"] == pytest.approx(0.1 * math.sqrt(math.atan(x) / x), rel=1e-9)


def test_signal_reads_noise_and_hum_from_the_design(capsys, demo, tmp_path):
    from bandcalc.model.design_file import design_from_dict, design_to_dict, save_design

    data = design_to_dict(demo("sump_level_switch"))
    data["signal"] = {"noise": "20m", "noise_bandwidth": "2k", "hum": 0.05, "hum_frequency": 60,
                      "hum_harmonics": {"3": 0.01}}
    path = tmp_path / "noisy.json"
    save_design(design_from_dict(data), path)
    assert main(["signal", str(path), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["noise_bandwidth"] == 2e3 and out["noise_rms"] == pytest.approx(0.02)
    assert out["hum"]["frequency"] == 60 and out["hum"]["harmonics"] == {"3": 0.01}


@pytest.mark.parametrize(("option", "message"), [
    (["--noise-bandwidth", "-3"], "--noise-bandwidth: must be a number above 0 in Hz, got '-3'"),
    (["--hum-harmonic", "1=0.1"], "--hum-harmonic: write ORDER=AMPLITUDE"),
    (["--seeds", "0"], "--seeds: must be a whole number from 1 to 50"),
    (["--false-edges-per-year", "0"], "--false-edges-per-year: must be a number above 0"),
])
def test_signal_options_are_checked(option, message, capsys, demo_path):
    with pytest.raises(SystemExit) as stop:
        main(["signal", demo_path("sump_level_switch"), *option])
    assert stop.value.code == 2
    assert message in capsys.readouterr().err


def _strict_json(text):
    """json.loads that refuses NaN and Infinity, which are not JSON (RFC 8259, section 6)."""
    def refuse(name):
        raise AssertionError(f"{name} in JSON output")
    return json.loads(text, parse_constant=refuse)


def test_recorded_signal_table_says_what_is_not_known(tmp_path, capsys, demo_path):
    wave = tmp_path / "w.csv"
    wave.write_text("time,volts\n" + "\n".join(f"{i * 1e-3},{4.5 if (i // 100) % 2 else 0.5}"
                                               for i in range(1000)) + "\n")
    assert main(["signal", demo_path("sump_level_switch"), "--csv", str(wave), "--sweep"]) == 0
    out = capsys.readouterr().out
    assert "None" not in out
    assert "(noise-free signal: not known, a recorded signal has none)" in out


def test_a_time_that_does_not_exist_is_not_printed_with_a_unit(capsys, demo_path):
    # A signal that never reaches the points: no edges, so no delay at any width of the sweep.
    args = ["signal", demo_path("sump_level_switch"), "--offset", "0", "--amplitude", "0.01", "--sweep"]
    assert main(args) == 0
    out = capsys.readouterr().out
    assert "n/a s" not in out and "nan" not in out.lower()
    assert main([*args, "--json"]) == 0
    sweep = _strict_json(capsys.readouterr().out)["sweep"]
    assert sweep["best_mean_delay"] is None and sweep["best_max_delay"] is None


@pytest.mark.parametrize(("options", "message"), [
    (["--frequency", "0"], "--frequency must be greater than 0 Hz, got 0"),
    (["--rate", "10"], r"--frequency must be below --rate / 2 = 5 Hz \(Nyquist\), got 50 Hz"),
    (["--noise", "-1"], "--noise must be at least 0 V, got -1"),
    (["--hum", "0.1", "--rate", "90", "--frequency", "1"], "--hum-frequency 50 Hz needs --rate above 100 Hz"),
    (["--seed", "-1"], "--seed must be a whole number of at least 0, got -1"),
    (["--duration", "100", "--rate", "1e6"], "--duration x --rate gives more than 10,000,000 samples"),
    (["--offset", "nan"], "--offset must be a finite number, got nan"),
])
def test_signal_options_are_named_as_typed(options, message, capsys, demo_path):
    # The messages name the options the user typed (--rate), not the function's arguments
    # (sample_rate) the user never wrote.
    assert main(["signal", demo_path("sump_level_switch"), *options]) == 2
    err = capsys.readouterr().err
    assert re.search(message, err), err
    assert not re.search(r"(?<!-)\b(sample_rate|noise_rms|hum_amplitude|hum_frequency)\b", err)


def test_signal_options_of_a_front_end_design_are_in_its_unit(capsys, demo_path):
    # The greenhouse signal runs in degrees C, so its noise does too.
    assert main(["signal", demo_path("greenhouse_fan_thermostat"), "--noise", "-1"]) == 2
    assert "--noise must be at least 0 °C, got -1" in capsys.readouterr().err
