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
