"""The design summary: content, valid CommonMark, escaping and the embedded design."""

import datetime as dt

import pytest
from markdown_it import MarkdownIt

from bandcalc.cli.commands import main
from bandcalc.model.design import (
    Design,
    DividerReference,
    FixedReference,
    Load,
    OpenDrain,
    Resistors,
    Source,
    Supply,
)
from bandcalc.model.network import switching_points
from bandcalc.model.operating import analyze
from bandcalc.model.units import format_code, format_probability, format_si, format_value
from bandcalc.outputs.summary import design_from_summary, design_summary, escape_text
from bandcalc.signal_check.edges import run_design
from bandcalc.signal_check.waveform import synthesize
from bandcalc.spread.propagation import failure_places

# markdown-it-py (PyPI) in its "commonmark" preset is a CommonMark-conformant parser; the
# summary also uses GitHub-style tables, so GFM enables that one extension on top.
COMMONMARK = MarkdownIt("commonmark")
GFM = MarkdownIt("commonmark").enable("table")


def _tokens(text):
    return GFM.parse(text)


def _headings(tokens):
    return [tokens[i + 1].content for i, t in enumerate(tokens) if t.type == "heading_open"]


def test_summary_content_for_each_demo(each_demo):
    d = each_demo
    a = analyze(d)
    text = design_summary(d, today=dt.date(2026, 12, 1))
    headings = _headings(_tokens(text))
    assert headings[0] == d.name
    for section in ("Purpose and notes", "The stage", "Components", "Switching points", "Findings",
                    "Assumptions", "Design file"):
        assert section in headings
    shown = format_value(float(a.points.upper), a.points.unit, 4)
    assert f"| Upper switching point (rising input) | {shown} |" in text
    assert "Made with bandcalc" in text and "2026-12-01" in text
    # One component row per resistor, each with a designator R1, R2, ...
    rows = [t for t in _tokens(text) if t.type == "tr_open"]
    n_parts = len(d.resistors.present()) + (2 if d.reference.__class__.__name__ == "DividerReference"
                                            else 0) + (1 if d.output.kind == "open-drain" else 0)
    n_parts += len(d.front_end.resistors()) if d.front_end is not None else 0
    assert sum(1 for line in text.splitlines() if line.startswith("| R")) == n_parts
    assert len(rows) >= n_parts + 1
    if d.front_end is not None and d.front_end.kind == "thermistor":
        assert "| TH1 | NTC thermistor, bottom of its divider |" in text


def test_embedded_design_rebuilds_the_same_switching_points(each_demo):
    d = each_demo
    again = design_from_summary(design_summary(d))
    assert again == d
    p, q = switching_points(d), switching_points(again)
    assert (float(p.upper), float(p.lower)) == (float(q.upper), float(q.lower))


HOSTILE = [
    "<script>alert('x')</script>",
    "<img src=x onerror=alert(1)>",
    "a | b | c",
    "# not a heading",
    "```\nbreak the fence\n```",
    "[link](javascript:alert(1))",
    "**bold** and _under_",
    "- not a list\n1. not a list\n> not a quote\n---",
]


@pytest.mark.parametrize("hostile", HOSTILE)
def test_user_text_is_escaped(hostile):
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.5),
               resistors=Resistors(input=1e3, feedback=2e3), name=hostile, notes=hostile)
    text = design_summary(d)
    tokens = _tokens(text)
    # The name is the h1's plain text and the notes one plain paragraph: no HTML, link, image,
    # emphasis, list, quote, rule, code or extra heading can come out of what the user typed.
    name_inline = tokens[1]
    notes = tokens[tokens.index(next(t for t in tokens if t.content == "Purpose and notes")) + 2:]
    notes = notes[:next(i for i, t in enumerate(notes) if t.type == "heading_open")]
    assert [t.type for t in notes] == ["paragraph_open", "inline", "paragraph_close"]
    for inline in (name_inline, notes[1]):
        assert {c.type for c in inline.children} <= {"text", "softbreak", "hardbreak"}
    # What the reader sees is exactly what the user typed.
    assert "".join(c.content for c in name_inline.children) == " ".join(hostile.split())
    html = GFM.render(text)
    assert "<script" not in html and "<img" not in html and "<a " not in html
    # Exactly one top heading: the user's name cannot open another block.
    assert sum(1 for t in tokens if t.type == "heading_open" and t.tag == "h1") == 1
    # Whatever the user typed, the design block still rebuilds the design.
    assert design_from_summary(text) == d


def test_escape_text_keeps_plain_words():
    assert escape_text("Sump level switch, 5 V") == "Sump level switch, 5 V"
    assert escape_text("<b>") == "&lt;b&gt;"
    # Figures stay as they are; only what would open a block is escaped (CommonMark 5.2, 4.1).
    assert escape_text("3.136 V, -270 mV, +5 V") == "3.136 V, -270 mV, +5 V"
    assert [escape_text(t) for t in ("1. one", "2) two", "- item", "+ item", "---", "==")] == [
        "1\\. one", "2\\) two", "\\- item", "\\+ item", "\\---", "\\=="]


def test_escape_text_shows_controls_as_escapes():
    # An escape sequence (ESC [2J clears a terminal) and a right-to-left override read as text.
    (paragraph,) = [t for t in _tokens(escape_text("a\x1b[2Jb\u202ec")) if t.type == "inline"]
    assert "".join(c.content for c in paragraph.children) == "a\\u001b[2Jb\\u202ec"


def test_summary_is_commonmark_without_extensions(demo):
    # Also parses under the strict CommonMark preset (tables then read as paragraphs).
    text = design_summary(demo("greenhouse_fan_thermostat"))
    assert any(t.type == "fence" and t.info == "json" for t in COMMONMARK.parse(text))


def test_caution_section_for_hazardous_voltage():
    d = Design(stage="non-inverting", supply=Supply(5.0), reference=FixedReference(2.5),
               resistors=Resistors(input=1e6, to_ground=10e3, feedback=1e6), source=Source(high=400.0))
    text = design_summary(d)
    assert "## Cautions" in text and "local codes and licensed practice" in text


def test_signal_section(demo):
    d = demo("greenhouse_fan_thermostat")
    w = analyze(d).points  # the signal is in the design's unit, degrees C here
    wave = synthesize("sine", float(w.centre), float(w.hysteresis), 50, 0.1, 50e3, noise_rms=0.05, seed=1)
    run = run_design(d, wave)
    text = design_summary(d, type("Inputs", (), {"signal": run, "spread": None, "fit": None})())
    assert "## Noise and delay" in text and f"| Output edges | {run.edge_count} |" in text
    # The noise is in the signal's unit too, not in volts.
    c = lambda x: format_value(x, "C", 4)  # noqa: E731
    assert f"| Noise | {c(run.noise.rms)} RMS, about {c(run.noise.peak_to_peak)} peak-to-peak |" in text


def test_report_command_writes_file(tmp_path, demo, demo_path):
    out = tmp_path / "summary.md"
    assert main(["report", demo_path("greenhouse_fan_thermostat"), "-o", str(out)]) == 0
    assert design_from_summary(out.read_text()) == demo("greenhouse_fan_thermostat")


def test_spread_section_and_columns(demo):
    from bandcalc.spread.propagation import spread

    d = demo("sump_level_switch")
    s = spread(d, samples=5_000)
    text = design_summary(d, type("Inputs", (), {"spread": s, "signal": None, "fit": None})())
    assert "## Spread over tolerances and temperature" in text
    lo, hi = format_si(s.worst_case.upper.min, "V", 4), format_si(s.worst_case.upper.max, "V", 4)
    nominal = format_si(analyze(d).upper, "V", 4)
    assert f"| Upper switching point (rising input) | {nominal} | {lo} | {hi} |" in text
    # Over the range the 99.73 % columns are of each build's least and greatest values.
    mc = s.monte_carlo
    least, greatest = (format_si(mc.lowest["upper"].percentiles[0.135], "V", 4),
                       format_si(mc.highest["upper"].percentiles[99.865], "V", 4))
    assert f"| {lo} | {hi} | {least} | {greatest} |" in text
    y = mc.build_yield
    assert (f"Yield against the limits, per build over the range: {100 * y.fraction:.3f} % of builds"
            in text)
    assert "each build is checked over the whole range, 0 to 50 °C" in text
    f = y.failure
    assert (f"Failure probability: {format_probability(f.probability)} (95 % interval "
            f"{format_probability(f.low)} to {format_probability(f.high)}); {f.method}.") in text
    for place in failure_places(s):
        assert f"- {place}" in text
    for line in s.simplifications:
        assert f"- {line}" in text


def test_a_network_name_is_escaped_in_the_spread_section(demo):
    # A network's name is the user's text: it reaches the summary escaped like any other.
    import dataclasses

    from bandcalc.model.tolerances import ResistorNetwork
    from bandcalc.spread.propagation import spread

    d = demo("sump_level_switch")
    network = ResistorNetwork("<b>RN|1</b>", ("input", "feedback"), 25.0)
    d = dataclasses.replace(d, tolerances=dataclasses.replace(d.tolerances, resistor_networks=(network,)))
    text = design_summary(d, type("Inputs", (), {"spread": spread(d, samples=1000), "signal": None,
                                                 "fit": None})())
    body = text[:text.index("## Design file")]  # the design file itself closes the text in a code block
    assert "<b>" not in body and r"&lt;b&gt;RN\|1&lt;/b&gt;" in body


def test_report_command_with_spread(capsys, demo_path):
    assert main(["report", demo_path("greenhouse_fan_thermostat"), "--spread", "--samples", "2000"]) == 0
    assert "## Spread over tolerances and temperature" in capsys.readouterr().out


def test_fit_section(demo):
    from bandcalc.fit.selection import fit

    d = demo("greenhouse_fan_thermostat")
    r = fit(d, 32.0, 28.0, count=3)
    text = design_summary(d, type("Inputs", (), {"spread": None, "signal": None, "fit": r})())
    assert "## Standard values fitted to the targets" in text
    assert "Targets: upper 32 °C, lower 28 °C" in text
    best = r.candidates[0]
    assert f"| 1 | {format_code(best.resistors['feedback'])} |" in text
    assert sum(1 for line in text.splitlines() if line.startswith("| 3 |")) == 1


def test_the_filter_and_the_signal_settings_are_in_the_summary(demo):
    from dataclasses import replace

    from bandcalc.model.design import InputFilter
    from bandcalc.model.signal_settings import SignalSettings

    d = replace(demo("sump_level_switch"), filter=InputFilter(4.7e3, 1e-6),
                signal=SignalSettings(noise=0.5, noise_bandwidth=2e3, hum=0.02, slope=1.0,
                                      false_edges_per_year=1.0))
    text = design_summary(d)
    assert "| Cflt | input filter, from the stage's input node to ground | 1 µF |" in text
    assert "| Rflt | in series with the signal, ahead of the filter capacitor | 4.7 kΩ (4k7) |" in text
    assert "An input filter (4.7 kΩ (4k7) in series and 1 µF from the stage's input to ground) has its " \
           "pole at" in text
    assert "## Noise and false edges expected" in text
    assert "Parked at a point: false switching | about once every" in text
    assert "Noise is taken as Gaussian and stationary" in text  # the model's simplifications
    assert "Target: at most 1 false edge(s) a year." in text
    assert design_from_summary(text) == d


def test_power_rating_in_the_table_and_the_findings_derate_the_same_way():
    # By hand: a 600 / 600 Ohm divider on 12 V dissipates 60 mW in each half; derated twice (common
    # practice) that needs 120 mW, more than the 100 mW of the default 0603 size.  The component
    # table and the findings say the same; before, the table asked for a 1/8 W rating while the
    # findings, comparing 60 mW with 0.1 W, said nothing.
    d = Design(stage="non-inverting", supply=Supply(12.0), reference=DividerReference(600.0, 600.0),
               resistors=Resistors(input=10e3, feedback=100e3))
    text = design_summary(d)
    (row,) = [line for line in text.splitlines() if line.startswith("| Rtop |")]
    assert f"{format_si(0.06, 'W')}, needs {format_si(0.12, 'W')}" in row and "too small" in row
    findings = text.split("## Findings")[1].split("##")[0]
    said = f"Power: the divider, upper resistor (reference.top, Rtop) dissipates up to {format_si(0.06, 'W')}"
    assert said in findings


def test_the_load_and_the_receiving_logic_are_described():
    d = Design(stage="inverting", supply=Supply(5.0), output=OpenDrain(pullup=10e3),
               resistors=Resistors(to_positive=100e3, to_ground=100e3, feedback=1e6),
               load=Load(resistance=10e3, volts=0.0, logic_low_max=0.8, logic_high_min=3.5))
    text = design_summary(d)
    stage = text.split("## The stage")[1].split("##")[0]
    assert "drives a load of 10 kΩ (10k) to 0 V" in stage and "reads below 800 mV as low" in stage
    assert "Logic levels: the output's high level falls to" in text
    assert "- Note: Power-up: the input can rest between" in text


def test_the_summary_says_where_the_netlist_comes_from(demo):
    # The netlist is offered beside the summary on the page and by `netlist` on the command line;
    # the summary says so, with what its comparator model leaves out.
    text = design_summary(demo("sump_level_switch"))
    assert "Checking in a circuit simulator" in _headings(_tokens(text))
    assert "python -m bandcalc netlist FILE -o stage.cir" in text and "ngspice -b stage.cir" in text
    assert "no propagation delay" in text
