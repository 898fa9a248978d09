"""The command line: python -m bandcalc analyze."""

import json
import subprocess
import sys
from pathlib import Path

import pytest

from bandcalc.cli.commands import main

ROOT = Path(__file__).parent.parent


def test_table(capsys, demo_path):
    assert main(["analyze", demo_path("sump_level_switch")]) == 0
    out = capsys.readouterr().out
    assert "Sump level switch" in out and "upper point" in out and "hysteresis" in out


def test_table_writes_micro_as_mu(capsys, demo_path):
    # People read the tables: micro is µ (SI Brochure, 9th edition, Table 7), never a plain u.
    assert main(["analyze", demo_path("greenhouse_fan_thermostat")]) == 0
    out = capsys.readouterr().out
    assert "19.1 µA" in out and "622 µW" in out
    assert " uA" not in out and " uW" not in out


def test_json_single_and_several(capsys, demo_path):
    sump, pickup = demo_path("sump_level_switch"), demo_path("magnetic_speed_pickup")
    assert main(["analyze", sump, "--json"]) == 0
    one = json.loads(capsys.readouterr().out)
    assert {"upper", "lower", "hysteresis", "warnings"} <= set(one)
    assert one["hysteresis"] == pytest.approx(one["upper"] - one["lower"])
    assert main(["analyze", sump, pickup, "--json"]) == 0
    both = json.loads(capsys.readouterr().out)
    assert [b["name"] for b in both] == ["Sump level switch", "Magnetic speed pickup squarer"]


def test_bad_file_is_named_and_the_others_still_run(tmp_path, capsys, demo_path):
    bad = tmp_path / "bad.json"
    bad.write_text('{"format": 1, "stage": "inverting", "supply": {"positive": 5}, '
                   '"resistors": {"feedback": "4k7x"}}')
    assert main(["analyze", str(bad), demo_path("sump_level_switch"), "--json"]) == 2
    captured = capsys.readouterr()
    assert f"{bad}: resistors.feedback: cannot read '4k7x'" in captured.err
    assert json.loads(captured.out)["name"] == "Sump level switch"


def test_module_entry_point(demo_path):
    sump = demo_path("sump_level_switch")
    run = subprocess.run([sys.executable, "-m", "bandcalc", "analyze", sump, "--json"],
                         capture_output=True, text=True, cwd=ROOT, check=True)
    assert json.loads(run.stdout)["upper"] > json.loads(run.stdout)["lower"]


@pytest.mark.parametrize(("command", "option"), [("spread", "--seed"), ("report", "--seed"),
                                                 ("spread", "--samples")])
@pytest.mark.parametrize("text", ["²", "٣x", "-1", "1e3"])
def test_option_messages_name_the_option_and_never_a_private_name(command, option, text, capsys, demo_path):
    # "²" counts as a digit to str.isdigit() but int() refuses it; argparse then named the
    # function that read the option ("invalid _seed value").
    with pytest.raises(SystemExit) as exit_:
        main([command, demo_path("sump_level_switch"), option, text])
    assert exit_.value.code == 2
    err = capsys.readouterr().err
    assert f"argument {option}: must be a whole number" in err and repr(text) in err
    assert "invalid" not in err and " _" not in err


# Terminal controls a hostile name, unit or file name may carry: ESC [2J clears the screen,
# ESC ] 0 ; ... BEL sets the window title, CSI (0x9b) is the one-byte C1 form of ESC [ (ECMA-48),
# U+202E turns the rest of the line right to left (Unicode bidirectional algorithm).
HIDDEN = "\x1b[2J\x1b]0;title\x07\x9b31m\u202e"


def _hostile_file(tmp_path, demo_path):
    data = json.loads(Path(demo_path("solar_battery_disconnect")).read_text())
    data["name"] = f"Pump {HIDDEN}"
    data["front_end"] = {"kind": "linear", "volts_per_unit": 0.02, "offset": 0.5, "resistance": 100,
                         "unit": f"kPa{HIDDEN}", "low": 0, "high": 200}
    data.pop("tolerances")
    path = tmp_path / f"design{HIDDEN}.json"
    path.write_text(json.dumps(data))
    return str(path)


@pytest.mark.parametrize("command", [["analyze"], ["spread", "--samples", "1000"],
                                     ["fit", "--upper", "100.5", "--lower", "99", "--count", "2"],
                                     ["signal", "--sweep"], ["report"], ["netlist"]])
def test_tables_show_terminal_controls_as_escapes(command, tmp_path, capsys, demo_path):
    path = _hostile_file(tmp_path, demo_path)
    assert main([command[0], path, *command[1:]]) == 0
    out = capsys.readouterr().out
    assert not set(out) & {"\x1b", "\x07", "\x9b", "\u202e"}, "a control character reached the terminal"
    assert "\\u001b" in out and "\\u202e" in out  # shown, so the reader sees what is there


def _strict(text: str):
    """json.loads that refuses NaN and Infinity (strict JSON)."""
    def refuse(name):
        raise ValueError(f"not strict JSON: {name}")
    return json.loads(text, parse_constant=refuse)


def test_json_findings_beside_the_warnings(tmp_path, capsys):
    # The - pin of a 5 V comparator fed through 10 kOhm from a signal reaching 12 V: by hand,
    # (12 - 5) V / 10 kOhm = 0.7 mA through its clamp.
    path = tmp_path / "over.json"
    path.write_text(json.dumps({
        "format": 1, "stage": "inverting", "supply": {"positive": 5},
        "resistors": {"input": "10k", "to_positive": "100k", "to_ground": "100k", "feedback": "1M"},
        "source": {"high": 12}, "load": {"resistance": "1k", "logic_high_min": 4.9},
        "output": {"kind": "push-pull", "resistance": 100},
        "comparator": {"input_current_limit": "5m"}}))
    assert main(["analyze", str(path), "--json"]) == 0
    out = _strict(capsys.readouterr().out)
    kinds = [f["kind"] for f in out["findings"]]
    assert "input_beyond_rail" in kinds and "logic_levels" in kinds
    assert all(isinstance(f["message"], str) for f in out["findings"])
    assert out["warnings"] == [f["message"] for f in out["findings"]]
    (clamp,) = [f for f in out["findings"] if f["kind"] == "input_beyond_rail"]
    assert clamp["clamp_current"] == pytest.approx(0.7e-3) and clamp["current_limit"] == 5e-3
    assert out["protective"] is False


def test_json_is_strict_where_a_number_does_not_exist(tmp_path, capsys):
    # A reference beyond the rail: nothing limits the clamp current, which is null, not Infinity.
    path = tmp_path / "ref.json"
    path.write_text(json.dumps({
        "format": 1, "stage": "non-inverting", "supply": {"positive": 5}, "reference": {"volts": 6},
        "resistors": {"input": "1k", "feedback": "10k"}, "source": {"high": 20}}))
    assert main(["analyze", str(path), "--json"]) == 0
    out = _strict(capsys.readouterr().out)
    (clamp,) = [f for f in out["findings"] if f["kind"] == "input_beyond_rail" and f["pin"] == "-"]
    assert clamp["clamp_current"] is None


# --- netlist -------------------------------------------------------------------------------------

def test_netlist_prints_without_o_and_writes_with_it(tmp_path, capsys, demo_path):
    from bandcalc.demos import load_demo
    from bandcalc.outputs.netlist import netlist

    sump = demo_path("sump_level_switch")
    assert main(["netlist", sump]) == 0
    printed = capsys.readouterr().out
    assert printed == netlist(load_demo("sump_level_switch"))
    out = tmp_path / "sump.cir"
    assert main(["netlist", sump, "-o", str(out)]) == 0
    assert capsys.readouterr().out == "" and out.read_text(encoding="utf-8") == printed


def test_netlist_signal_bench_takes_the_signal_options_and_a_recording(tmp_path, capsys, demo_path):
    sump = demo_path("sump_level_switch")
    assert main(["netlist", sump, "--bench", "signal", "--duration", "0.04", "--amplitude", "1.5"]) == 0
    # Two periods of 50 Hz from the centre, where the run starts input-high: down, up, down.
    assert capsys.readouterr().out.count(".meas tran edge_") == 3
    wave = tmp_path / "w.csv"
    rows = [f"{i * 1e-3};{'4,5' if (i // 100) % 2 else '0,5'}" for i in range(1000)]
    wave.write_text("time;volts\n" + "\n".join(rows) + "\n")
    assert main(["netlist", sump, "--bench", "signal", "--csv", str(wave)]) == 0
    text = capsys.readouterr().out
    assert text.count(".meas tran edge_") == 9 and "1,000 samples" in text


@pytest.mark.parametrize("option", [["--csv", "w.csv"], ["--frequency", "10"], ["--hum-frequency", "60"]])
def test_netlist_signal_options_need_the_signal_bench(option, capsys, demo_path):
    assert main(["netlist", demo_path("sump_level_switch"), *option]) == 2
    said = f"bandcalc: {option[0]}: describes the signal of --bench signal"
    assert capsys.readouterr().err.startswith(said)


def test_netlist_refusals_name_what_is_wrong(tmp_path, capsys, demo_path):
    sump = demo_path("sump_level_switch")
    assert main(["netlist", sump, "--bench", "signal", "--duration", "1"]) == 2
    assert "the signal has 100,001 samples, the netlist takes at most 20,000" in capsys.readouterr().err
    assert main(["netlist", sump, "-o", str(tmp_path / "none" / "x.cir")]) == 2
    assert "x.cir: cannot write the netlist (No such file or directory)" in capsys.readouterr().err
    with pytest.raises(SystemExit):
        main(["netlist", sump, "--bench", "wobble"])
    assert "invalid choice: 'wobble' (choose from 'sweep', 'signal')" in capsys.readouterr().err
