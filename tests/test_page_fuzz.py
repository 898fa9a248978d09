"""Random sessions on the page: hypothesis draws a few hundred steps over the controls the page
shows at each moment (sliders, typed values good and bad, radios, toggles, selections, several
changes in one run, tabs, sections, the panels' run buttons, demos, uploads of good and bad files)
and checks after each:

- the page is whole: no traceback, no internal error, title, demo chooser, controls and figures;
- nothing is lost: an edit taken is in the design (a typed value at its path, a choice on its
  control, an opened file or demo as the design); an edit refused has a message and leaves the
  design as it was;
- the controls show the design, and the page address holds it (a reload would bring it back).

Derandomized in CI through the "ci" hypothesis profile (tests/conftest.py); the "thorough" profile
runs ten times as many sessions.
"""

from __future__ import annotations

import json
import math
import re
from dataclasses import dataclass

import streamlit as st
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as hyp
from page_helpers import SUMP, design_on, errors, page, prose, stranded

from bandcalc.demos import demo_designs
from bandcalc.errors import DesignError
from bandcalc.model.design import RESISTOR_KEYS, STAGES
from bandcalc.model.design_file import design_to_dict, design_to_json
from bandcalc.model.front_end import POSITIONS
from bandcalc.model.parts import value_at
from bandcalc.model.ratings import PACKAGES
from bandcalc.model.standard_values import SERIES
from bandcalc.model.tolerances import DISTRIBUTIONS
from bandcalc.page.edit import (
    EXCITATION_KINDS,
    FRONT_END_KINDS,
    OUTPUT_KINDS,
    REFERENCE_KINDS,
    THERMISTOR_MODELS,
    slider_options,
)
from bandcalc.page.inputs import read_value, shown
from bandcalc.page.panels import PANELS
from bandcalc.spread.propagation import MIN_SAMPLES

STEPS = 30
# 100 examples by default, 1000 in the thorough profile: a twelfth of that, of STEPS steps each.
SESSIONS = max(6, settings.default.max_examples // 12)

DEMOS = demo_designs()
# Every value a selection on the page can take; a widget's own are those its labels show.
CHOICES = tuple(dict.fromkeys((
    *STAGES, *REFERENCE_KINDS, *OUTPUT_KINDS, *FRONT_END_KINDS, *THERMISTOR_MODELS, *POSITIONS,
    *EXCITATION_KINDS, *DISTRIBUTIONS, *SERIES, *RESISTOR_KEYS, *DEMOS, *PACKAGES, "watched", "stage")))
TYPED = hyp.sampled_from([
    "", "0", "1", "2.5", "5", "12", "-5", "-12", "4k7", "4.7k", "10k", "1M", "47", "3 mV", "100n", "1e-9",
    "abc", "4k7x", "1e400", "-1e400", "nan", "inf", "1e23", "-0", "  7 ", "25 C", "3950 K", "1 %", "1,5",
    "![n](http://example.invalid/n.png)", "0x10", "1e-30", "½",
]) | hyp.floats(-1e3, 1e7, allow_nan=False).map(lambda x: f"{x:.4g}")
SECTIONS = ("output", "comparator", "source", "front_end", "reference", "stage")


def _sump_with(**changes) -> bytes:
    data = design_to_dict(SUMP) | changes
    return json.dumps(data).encode()


# (file name, contents, whether the page takes it)
FILES = [(f"{stem}.json", design_to_json(d).encode(), True) for stem, d in DEMOS.items()] + [
    ("broken.json", b'{"format": 1, "stage": ', False),
    ("empty.json", b"", False),
    ("latin1.json", "{\"name\": \"caf\xe9\"}".encode("latin-1"), False),
    ("sideways.json", _sump_with(stage="sideways"), False),
    ("null.json", _sump_with(resistors={"feedback": None, "input": 1e4}), False),
    ("surrogate.json", _sump_with(name="\ud800"), False),
    ("long.json", _sump_with(notes=prose(71_000)), False),
    ("format.json", _sump_with(format=2), False),
]


def _path(key: str, design) -> str | None:
    """The design-file path a control keyed ``in.<path>`` (``.text``, ``.slider``) edits, where it is one
    of ``design`` (the spread panel's tolerance boxes have keys of their own)."""
    path = key.removeprefix("in.").removesuffix(".text").removesuffix(".slider")
    if path.startswith("tolerances."):
        return None
    try:
        value_at(design, path)
    except DesignError:
        return None
    return path


def _unit(widget) -> str:
    """The unit a typed box reads, from its label ("Positive rail (V)") or its key (resistors)."""
    if widget.key.endswith(".text"):
        return "Ohm"
    found = re.search(r"\(([^()]*)\)$", widget.label)
    if found is None:
        return ""
    return {"Ω": "Ohm", "°C": "C"}.get(found.group(1), found.group(1))  # the ASCII names inside


def _read(text: str, unit: str) -> float | None | str:
    """What a typed text means: a value, None for a blank, or "refused" where it cannot be read."""
    if not str(text).strip():
        return None
    try:
        return read_value(text, unit, "value")
    except ValueError:
        return "refused"


def _same(a, b) -> bool:
    if a is None or b is None or isinstance(a, str) or isinstance(b, str):
        return a == b
    return math.isclose(a, b, rel_tol=1e-12, abs_tol=0.0)


def _typed_boxes(at) -> list:
    return [w for w in at.text_input if str(w.key).startswith("in.") and w.key not in ("in.name",
                                                                                        "in.front_end.unit")]


def _choices(widget) -> list:
    found = []
    for value in CHOICES:
        try:
            label = widget.format_func(value)
        except Exception:  # a format function of another widget's values
            continue
        if label is not None and str(label) in widget.options:
            found.append(value)
    return found


def _design(at):
    return at.session_state["page.design"]


def _check_whole(at) -> None:
    assert not stranded(at), stranded(at)
    design = _design(at)
    assert design_on(at) == design  # the address holds the design: a reload brings it back
    for box in _typed_boxes(at):  # every typed box with a path shows the design's value
        path = _path(box.key, design)
        if path is not None:
            assert box.value == shown(value_at(design, path), _unit(box)), (box.key, box.value)
    for slider in at.select_slider:
        path = _path(slider.key, design) if str(slider.key).startswith("in.") else None
        if path is not None:
            assert slider.value == value_at(design, path), slider.key
    if at.session_state["page.section.stage"] if "page.section.stage" in at.session_state else True:
        assert at.radio(key="in.stage").value == design.stage


@dataclass(frozen=True)
class Step:
    """One step of a session, drawn whatever the page shows (so a failing session replays and shrinks
    the same way); ``pick``, ``other`` and ``choice`` pick among what the page shows at that moment."""

    action: str
    pick: int
    other: int
    both: bool
    texts: tuple[str, str]
    choice: int
    name: str
    notes: int
    file: int
    tab: int


ACTION_WEIGHTS = {"typed": 5, "chose": 4, "named": 1, "opened": 1, "demo": 1, "tab": 1, "section": 1,
                  "pressed": 1}
# Buttons of the panels pressed; "Find values" is left to tests/test_page_fit.py, as a fit's time
# depends on the design (bounding it belongs to the fit).
BUTTONS = ("Run the spread", "Run the signal check", "Clear the tolerances section",
           "Targets from the present points")
STEP = hyp.builds(
    Step,
    action=hyp.sampled_from([a for a, weight in ACTION_WEIGHTS.items() for _ in range(weight)]),
    pick=hyp.integers(0, 999), other=hyp.integers(0, 999), both=hyp.integers(0, 3).map(lambda n: n == 0),
    texts=hyp.tuples(TYPED, TYPED), choice=hyp.integers(0, 999),
    name=hyp.text(max_size=40) | hyp.just("![n](http://example.invalid/n.png) **bold** $x$"),
    notes=hyp.sampled_from([-1, -1, 0, 200, 5_000, 12_000, 71_000]), file=hyp.integers(0, len(FILES) - 1),
    tab=hyp.integers(0, 999))


def _typed(at, step: Step) -> None:
    boxes = _typed_boxes(at)
    if not boxes:
        return
    picked = [boxes[step.pick % len(boxes)]]
    if step.both and len(boxes) > 1:  # two boxes changed in one run
        picked.append([b for b in boxes if b.key != picked[0].key][step.other % (len(boxes) - 1)])
    before, edits = _design(at), []
    for box, text in zip(picked, step.texts, strict=False):
        # The label without its unit is how a message names the box: "Positive rail (supply.positive): ..."
        name = re.sub(r" \([^()]*\)$", "", box.label).removesuffix(", exact value")
        edits.append((box.key, _path(box.key, before), _read(text, _unit(box)), name))
        at.text_input(key=box.key).input(text)
    at.run()
    after, messages = _design(at), errors(at)
    for key, path, meant, name in edits:
        refused = any(m.startswith(name) for m in messages)
        if meant == "refused":
            assert refused, f"{key}: unreadable text taken without a word: {messages}"
        if refused:  # the design keeps what it had there
            if path is not None:
                assert _same(value_at(after, path), value_at(before, path)), key
        elif path is not None:  # taken: the design holds what was typed
            assert _same(value_at(after, path), meant), (key, meant, value_at(after, path))
    if len(edits) == 1 and messages:
        assert after == before  # a refused edit leaves the design as it was


def _chose(at, step: Step) -> None:
    widgets = [w for kind in ("radio", "selectbox", "multiselect", "toggle", "checkbox", "select_slider")
               for w in at.get(kind) if str(w.key).startswith("in.") or w.key == "page.series"]
    if not widgets:
        return
    widget = widgets[step.pick % len(widgets)]
    before = _design(at)
    if widget.type in ("toggle", "checkbox"):
        value = not widget.value
    elif widget.type == "select_slider":  # the standard values around the resistor's own
        options = slider_options(at.session_state["page.series"], value_at(before, _path(widget.key, before)))
        value = options[step.choice % len(options)]
    elif widget.type == "multiselect":  # a subset of the legs, by the bits of the choice
        value = [v for i, v in enumerate(_choices(widget)) if step.choice >> i & 1]
    else:
        choices = _choices(widget)
        assert choices, f"the fuzz test knows no option of {widget.key!r}: add them to CHOICES"
        value = choices[step.choice % len(choices)]
    widget.set_value(value).run()
    after, messages = _design(at), errors(at)
    now = next((w for w in at.get(widget.type) if w.key == widget.key), None)
    if messages:
        assert after == before
    if widget.type == "select_slider":
        if not messages:
            assert value_at(after, _path(widget.key, before)) == value, widget.key
    elif now is not None and not messages:  # drawn from the design: it shows the choice taken
        current = now.value
        assert (sorted(current) == sorted(value)) if widget.type == "multiselect" else current == value, \
            (widget.key, value, current)


def _named(at, step: Step) -> None:
    key, text = ("in.name", step.name) if step.notes < 0 else ("in.notes", prose(step.notes))
    before = _design(at)
    widget = at.text_input(key=key) if key == "in.name" else at.text_area(key=key)
    widget.input(text).run()
    after, messages = _design(at), errors(at)
    # The same text refused once already is no change to its box: the note under the box says it is
    # not in the design (as long as the box differs from the design).
    held = [w.value for w in at.warning if w.value.startswith("Not in the design: ")]
    if messages or held:
        assert after == before and "too long for the page address" in (messages or held)[0]
    else:
        assert getattr(after, key.removeprefix("in.")) == text


def _opened(at, step: Step) -> None:
    name, body, taken = FILES[step.file]
    before = _design(at)
    at.file_uploader(key="page.upload").set_value((name, body, "application/json")).run()
    if taken:
        assert not errors(at) and design_to_json(_design(at)).encode() == body
    else:
        (message,) = errors(at)
        assert message.startswith(f"{name}: ") and _design(at) == before


def _demo(at, step: Step) -> None:
    stem = sorted(DEMOS)[step.choice % len(DEMOS)]
    at.selectbox(key="page.demo").set_value(stem).run()
    assert _design(at) == DEMOS[stem] and not errors(at)


def _viewed(at, step: Step) -> None:
    if step.action == "tab":
        at.session_state["page.panel"] = PANELS[step.tab % len(PANELS)].TITLE
    else:
        key = f"page.section.{SECTIONS[step.tab % len(SECTIONS)]}"
        at.session_state[key] = not at.session_state[key] if key in at.session_state else True
    before = _design(at)
    at.run()
    assert _design(at) == before and not errors(at)


def _pressed(at, step: Step) -> None:
    buttons = [b for b in at.button if b.label in BUTTONS]
    if not buttons:
        return
    pressed = buttons[step.pick % len(buttons)]
    if pressed.label == "Run the spread":  # the fewest builds: the run's speed is not the question here
        at.number_input(key="page.spread.samples").set_value(MIN_SAMPLES)
    before = _design(at)
    pressed.click().run()
    if pressed.label == "Clear the tolerances section":
        assert errors(at) or _design(at).tolerances is None
    else:
        assert _design(at) == before


ACTIONS = {"typed": _typed, "chose": _chose, "named": _named, "opened": _opened, "demo": _demo,
           "tab": _viewed, "section": _viewed, "pressed": _pressed}


@settings(max_examples=SESSIONS, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                       HealthCheck.data_too_large])
@given(steps=hyp.lists(STEP, min_size=STEPS, max_size=STEPS))
def test_random_sessions_never_strand_the_page_or_lose_an_edit(steps):
    st.cache_data.clear()  # each session from the same start, so a failing one replays the same way
    at = page()
    _check_whole(at)
    for step in steps:
        ACTIONS[step.action](at, step)
        _check_whole(at)
