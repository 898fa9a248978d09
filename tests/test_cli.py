"""The command line: python -m bandcalc analyze."""

import json
import os
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
                                     ["signal", "--sweep"], ["report"]])
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


# --- files that cannot be used: exit 2, the file and the key named, the batch goes on -------------

def _strict(text: str):
    """Parse as strict JSON (RFC 8259 has no NaN or Infinity: Python's reader takes them unless told)."""
    def refuse(name):
        raise AssertionError(f"not strict JSON: {name}")
    return json.loads(text, parse_constant=refuse)


def _demo_file(demo_path, stem: str) -> dict:
    return json.loads(Path(demo_path(stem)).read_text())


def _hostile(demo_path) -> dict[str, tuple[str, str]]:
    """Files a hostile or careless user writes: name -> (file text, what the message must hold)."""
    sump = _demo_file(demo_path, "sump_level_switch")
    greenhouse = _demo_file(demo_path, "greenhouse_fan_thermostat")
    solar = _demo_file(demo_path, "solar_battery_disconnect")
    fe = greenhouse["front_end"]
    sh = {k: v for k, v in fe.items() if k not in ("r25", "beta", "beta_tolerance")}

    def edited(base: dict, path: str, value) -> str:
        data = json.loads(json.dumps(base))
        *parents, last = path.split(".")
        target = data
        for key in parents:
            target = target[key]
        target[last] = value
        return json.dumps(data)

    text = json.dumps(sump)
    return {
        "feedback null": (edited(sump, "resistors.feedback", None), "resistors.feedback: required"),
        "surrogate name": (edited(sump, "name", "\ud800"), "name: "),
        "resistor 1e23": (edited(sump, "resistors.feedback", 1e23), "resistors.feedback: must be from"),
        "resistor 1e308": (edited(sump, "resistors.feedback", 1e308), "resistors.feedback: must be from"),
        "huge integer": (text.replace('"positive": 5.0', '"positive": 1' + "0" * 400), "supply.positive: "),
        "deep nesting": (text[:-1] + ', "x": ' + "[" * 5000 + "]" * 5000 + "}", "nested 5001 levels deep"),
        "steinhart typo": (edited(greenhouse, "front_end", {**sh, "steinhart_hart": [1129.241, 2.341077e-4,
                                                                                      8.775468e-8]}),
                           "front_end.steinhart_hart: "),
        "steinhart A": (edited(greenhouse, "front_end", {**sh, "steinhart_hart": [1.129241e3, 2.341077e-4,
                                                                                   8.775468e-8]}),
                        "front_end.steinhart_hart: "),
        "temperature 1e300": (edited(sump, "tolerances.temperature", [0, 1e300]), "tolerances.temperature: "),
        "supply 1e308": (edited(solar, "supply.positive", 1e308), "supply.positive: must be from"),
        "thermistor near 0 K": (edited(greenhouse, "front_end.low", -268), "front_end.low: "),
        "beta 1.3e7": (edited(greenhouse, "front_end.beta", 1.3e7), "front_end.beta: "),
        "format true": (edited(sump, "format", True), "format: "),
        "protective 1": (edited(sump, "protective", 1), "protective: "),
        "duplicate key": (text[:-1] + ', "name": "again"}', 'the key "name" appears twice'),
        "tempco to zero": (edited(greenhouse, "tolerances", {"resistor_tempco": -10000,
                                                             "temperature": [-40, 125]}),
                           "tolerances.resistor_tempco: "),
    }


COMMANDS = {
    "analyze": [],
    "spread": ["--samples", "100"],
    "report": [],
    "signal": [],
    "fit": ["--upper", "3", "--lower", "2"],
}


@pytest.mark.parametrize("command", list(COMMANDS))
def test_every_unusable_file_exits_2_naming_the_file_and_the_key(command, tmp_path, capsys, demo_path):
    for label, (text, message) in _hostile(demo_path).items():
        path = tmp_path / f"{label.replace(' ', '_')}.json"
        path.write_text(text, encoding="utf-8", errors="surrogatepass")
        assert main([command, str(path), *COMMANDS[command]]) == 2, label
        err = capsys.readouterr().err
        assert f"bandcalc: {path}: " in err and message in err, (label, err)
        assert "Traceback" not in err


def test_a_batch_goes_on_past_every_unusable_file(tmp_path, capsys, demo_path):
    paths = []
    for label, (text, _) in _hostile(demo_path).items():
        paths.append(tmp_path / f"{label.replace(' ', '_')}.json")
        paths[-1].write_text(text, encoding="utf-8", errors="surrogatepass")
    sump = demo_path("sump_level_switch")
    for command, extra in (("analyze", []), ("spread", ["--samples", "100"])):
        assert main([command, *map(str, paths), sump, *extra, "--json"]) == 2
        captured = capsys.readouterr()
        assert _strict(captured.out)["name"] == "Sump level switch"
        assert all(f"bandcalc: {p}: " in captured.err for p in paths)


def test_a_byte_order_mark_is_read(tmp_path, capsys, demo_path):
    path = tmp_path / "bom.json"
    path.write_text(Path(demo_path("sump_level_switch")).read_text(), encoding="utf-8-sig")
    assert main(["analyze", str(path)]) == 0


def test_devices_and_pipes_are_refused_at_once(tmp_path):
    import os
    import resource

    pipe = tmp_path / "pipe.json"
    os.mkfifo(pipe)

    def limited():  # were it read, /dev/zero would fill the memory: keep that from the machine
        resource.setrlimit(resource.RLIMIT_AS, (2 << 30, 2 << 30))

    run = subprocess.run([sys.executable, "-m", "bandcalc", "analyze", "/dev/zero", str(pipe)],
                         capture_output=True, text=True, cwd=ROOT, timeout=60, preexec_fn=limited)
    assert run.returncode == 2
    assert "/dev/zero: cannot read the file" in run.stderr and "pipe.json: cannot read the file" in run.stderr


def test_an_unexpected_error_in_one_file_is_named_and_the_batch_goes_on(monkeypatch, capsys, demo_path):
    from bandcalc.cli import commands

    real = commands.analyze

    def breaks_on_the_sump(design):
        if design.name == "Sump level switch":
            raise RuntimeError("a fault inside")
        return real(design)

    monkeypatch.setattr(commands, "analyze", breaks_on_the_sump)
    sump, tacho = demo_path("sump_level_switch"), demo_path("tacho_generator_squarer")
    assert main(["analyze", sump, tacho, "--json"]) == 2
    captured = capsys.readouterr()
    assert f"bandcalc: {sump}: internal error (RuntimeError: a fault inside)" in captured.err
    assert _strict(captured.out)["name"] == "Tacho-generator squarer"


def test_control_characters_in_names_are_shown_escaped(tmp_path, capsys, demo_path):
    # ECMA-48: ESC (0x1B) starts a terminal control sequence, 0x80-0x9F are the C1 controls.
    data = _demo_file(demo_path, "sump_level_switch")
    data["name"] = "evil\x1b[2J\x9b31m\x07\nnext"
    path = tmp_path / "esc.json"
    path.write_text(json.dumps(data))
    for command in (["analyze"], ["spread", "--samples", "100"], ["fit", "--upper", "3", "--lower", "2"]):
        main([*command[:1], str(path), *command[1:]])
        out = capsys.readouterr().out
        assert r"evil\u001b[2J\u009b31m\u0007\u000anext" in out
        assert not any(c in out for c in "\x1b\x9b\x07")


def test_a_file_name_that_is_not_text_prints(tmp_path):
    # POSIX file names are bytes; Python hands undecodable ones over as lone surrogates (PEP 383).
    path = os.fsencode(tmp_path) + b"/\xff.json"
    with open(path, "wb") as fh:
        fh.write(Path(ROOT / "demo_data" / "sump_level_switch.json").read_bytes())
    run = subprocess.run([sys.executable.encode(), b"-m", b"bandcalc", b"analyze", path],
                         capture_output=True, cwd=ROOT, timeout=60)
    assert run.returncode == 0, run.stderr
    assert b"\\udcff.json" in run.stdout and b"Traceback" not in run.stderr


def test_a_doubled_phrase_is_gone_from_the_option_messages(capsys, demo_path):
    assert main(["signal", demo_path("sump_level_switch"), "--offset", "nan"]) == 2
    err = capsys.readouterr().err
    assert "offset must be a finite number, got nan" in err and "a finite number a finite number" not in err


# --- JSON output is strict JSON ---------------------------------------------------------------------

def _targets(stem: str, demo) -> list[str]:
    """The design's own points, for a fit whose targets it can meet."""
    from bandcalc.model.points import design_points
    p = design_points(demo(stem))
    return ["--upper", f"{float(p.upper):.6g}", "--lower", f"{float(p.lower):.6g}"]


def test_every_command_prints_strict_json_for_every_demo(demo_stem, demo, demo_path, capsys):
    path = demo_path(demo_stem)
    for args in (["analyze", path], ["spread", path, "--samples", "1000"], ["signal", path],
                 ["fit", path, *_targets(demo_stem, demo)]):
        status = main([*args, "--json"])
        out = capsys.readouterr().out
        assert status in (0, 2), args
        _strict(out)


def test_a_worst_case_without_a_switching_point_is_null_with_the_reason(tmp_path, capsys, demo_path):
    data = _demo_file(demo_path, "greenhouse_fan_thermostat")
    data["tolerances"] = {"bias_current": 1e-4}
    path = tmp_path / "bias.json"
    path.write_text(json.dumps(data))
    main(["spread", str(path), "--samples", "1000", "--json"])
    out = _strict(capsys.readouterr().out)
    assert out["worst_case"]["upper"]["min"] is None
    assert out["not_finite"]["worst_case.upper.min"] == "NaN"
    assert any("no upper switching point" in n and "comparator.bias_current" in n for n in out["notes"])
