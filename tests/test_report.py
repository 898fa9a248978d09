"""The design summary: content, valid CommonMark, escaping and the embedded design."""

import dataclasses
import datetime as dt

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from markdown_it import MarkdownIt

from bandcalc.cli.commands import main
from bandcalc.cli.visible_text import visible_text
from bandcalc.model.design import Design, FixedReference, Resistors, Source, Supply
from bandcalc.model.network import switching_points
from bandcalc.model.operating import analyze
from bandcalc.model.units import format_code, format_si, format_value
from bandcalc.outputs.summary import design_from_summary, design_summary, escape_text
from bandcalc.signal_check.edges import run_design
from bandcalc.signal_check.waveform import synthesize

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
    assert "Yield against the limits" in text


def test_report_command_with_spread(capsys, demo_path):
    assert main(["report", demo_path("greenhouse_fan_thermostat"), "--spread", "--samples", "2000"]) == 0
    assert "## Spread over tolerances and temperature" in capsys.readouterr().out


def test_fit_section(demo):
    from bandcalc.fit.selection import fit

    d = demo("greenhouse_fan_thermostat")
    r = fit(d, 32.0, 28.0, count=3)
    text = design_summary(d, type("Inputs", (), {"spread": None, "signal": None, "fit": r})())
    assert "## Standard values fitted to the targets" in text
    assert "Targets: upper 32 C, lower 28 C" in text
    best = r.candidates[0]
    assert f"| 1 | {format_code(best.resistors['feedback'])} |" in text
    assert sum(1 for line in text.splitlines() if line.startswith("| 3 |")) == 1


# --- Hostile text anywhere the summary shows it (unit, name, notes) ----------------------------------

def _planted(design) -> str:
    """A second design (feedback 1k instead of the original's) wrapped as a summary's closing block."""
    from bandcalc.model.design_file import design_to_json
    from bandcalc.model.parts import with_value

    other = design_to_json(with_value(design, "resistors.feedback", 1e3))
    return f"x\n\n## Design file\n\n```json\n{other}```\n"


def _linear(unit: str, **changes):
    # A linear sensor (0.5 V + 20 mV per unit) ahead of the solar demo's stage: its unit is user text.
    from bandcalc.demos import load_demo
    from bandcalc.model.front_end import LinearFrontEnd

    d = load_demo("solar_battery_disconnect")
    return dataclasses.replace(d, front_end=LinearFrontEnd(volts_per_unit=0.02, unit=unit, offset=0.5,
                                                           resistance=100.0), **changes)


HOSTILE_UNITS = [
    "<script>alert(1)</script>",
    "kPa | evil | cell",
    "[kPa](http://example.invalid/x)",
    "![u](http://example.invalid/u.png)",
    "kPa\n# planted heading",
    "*kPa*_`x`_",
    "kPa  \n  \n    indented code",
    "kPa\n\n## Design file",
]


def _all_sections(d):
    """The summary of ``d`` with every optional section: spread, fit and signal run."""
    from bandcalc.fit.selection import fit
    from bandcalc.outputs.summary import SummaryInputs
    from bandcalc.spread.propagation import spread

    a = analyze(d)
    up, low = float(a.points.upper), float(a.points.lower)
    wave = synthesize("triangle", 0.5 * (up + low), 2 * (up - low), 50, 0.04, 20e3, noise_rms=0.01, seed=1)
    inputs = SummaryInputs(spread=spread(d, samples=1_000), fit=fit(d, up + 0.5, low - 0.5, count=2),
                           signal=run_design(d, wave))
    return design_summary(d, inputs, today=dt.date(2026, 12, 1))


EVERY_SECTION = ["Purpose and notes", "The stage", "Components", "Switching points",
                 "Spread over tolerances and temperature", "Standard values fitted to the targets",
                 "Noise and delay", "Findings", "Assumptions", "Cautions", "Design file"]


def _no_markup_from_user(tokens):
    """No HTML, link or image anywhere; exactly one fenced block (the design file) and it closes."""
    flat = [t for tok in tokens for t in [tok, *(tok.children or [])]]
    kinds = {t.type for t in flat}
    assert not kinds & {"html_inline", "html_block", "link_open", "image"}, kinds
    fences = [t for t in tokens if t.type in ("fence", "code_block")]
    assert [t.info for t in fences] == ["json"] and tokens[-1] is fences[0]


@pytest.mark.parametrize("unit", HOSTILE_UNITS, ids=range(len(HOSTILE_UNITS)))
def test_hostile_unit_stays_text_in_every_section(unit):
    # markdown-it-py (PyPI), CommonMark preset with GFM tables, parses the summary.
    d = _linear(unit)
    text = _all_sections(d)
    tokens = _tokens(text)
    _no_markup_from_user(tokens)
    assert _headings(tokens) == [d.name, *EVERY_SECTION]
    # The reader sees the unit as typed (on one line) in the switching-points table.
    shown = " ".join(unit.split())
    cells = ["".join(c.content for c in t.children) for t in tokens if t.type == "inline"]
    assert any(cell.endswith(f" {shown}") for cell in cells)
    assert design_from_summary(text) == d


def test_unit_cannot_plant_a_second_design():
    d = _linear("kPa")
    hostile = _linear("kPa\n" + _planted(d))
    text = design_summary(hostile)
    _no_markup_from_user(_tokens(text))
    assert design_from_summary(text) == hostile  # not the planted feedback of 1k
    assert design_from_summary(text).resistors.feedback == d.resistors.feedback


@pytest.mark.parametrize("where", ["name", "notes"])
def test_name_or_notes_cannot_plant_a_second_design(where, demo):
    d = demo("sump_level_switch")
    hostile = dataclasses.replace(d, **{where: "Before\n" + _planted(d) + "\n````\nafter"})
    text = design_summary(hostile)
    tokens = _tokens(text)
    _no_markup_from_user(tokens)
    assert _headings(tokens)[1:] == ["Purpose and notes", "The stage", "Components", "Switching points",
                                     "Findings", "Assumptions", "Design file"]
    assert design_from_summary(text) == hostile


def test_rebuild_takes_only_the_closing_block(demo):
    from bandcalc.errors import DesignError

    d = demo("sump_level_switch")
    text = design_summary(d)
    # A design block earlier in the document (an edited summary) is not the design file.
    head, sep, rest = text.partition("## Purpose and notes")
    assert design_from_summary(head + _planted(d) + "\n" + sep + rest) == d
    # The design file must close the summary: text after it, or no block at all, is refused.
    with pytest.raises(DesignError, match="closing"):
        design_from_summary(text + "\nA line added after the design file.\n")
    with pytest.raises(DesignError, match="closing"):
        design_from_summary(head)
    # Line endings written by another system still read.
    assert design_from_summary(text.replace("\n", "\r\n")) == d


# Characters that open Markdown constructs, drawn often, among any others.
MARKUP = st.sampled_from([*"-+=*_#>`~<&[]()!|\\:. \t\n\r123a", "1. ", "- ", "```", "    ", "\x1b", "\u202e"])


@settings(deadline=None)
@given(st.lists(MARKUP | st.characters(), max_size=60).map("".join))
def test_any_text_escapes_to_plain_paragraphs_that_read_as_typed(text):
    # Whatever is typed, markdown-it-py (CommonMark preset with GFM tables) finds only
    # paragraphs of plain text, and that text is what was typed: each line without its outer
    # whitespace, controls shown as escapes.
    tokens = _tokens(escape_text(text))
    assert {t.type for t in tokens} <= {"paragraph_open", "inline", "paragraph_close"}
    children = [c for t in tokens if t.type == "inline" for c in t.children]
    assert {c.type for c in children} <= {"text", "softbreak", "hardbreak"}
    shown = "".join(c.content for c in children if c.type == "text")
    assert shown == "".join(visible_text(line.strip()) for line in text.splitlines())


def test_a_lone_surrogate_is_shown_and_the_summary_still_writes(tmp_path, demo):
    # "\ud800" is half a UTF-16 pair: no UTF-8 file can hold it raw (Unicode 15, section 3.9).
    d = dataclasses.replace(demo("sump_level_switch"), name="Pump \ud800", notes="a \udfff b")
    text = design_summary(d)
    (tmp_path / "summary.md").write_text(text, encoding="utf-8")
    assert "# Pump \\\\ud800" in text
    assert design_from_summary((tmp_path / "summary.md").read_text(encoding="utf-8")) == d
