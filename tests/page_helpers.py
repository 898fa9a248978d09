"""Helpers the page tests share: start the page with AppTest, read its figures, charts and messages."""

from __future__ import annotations

import base64
import html
import json
import random
import re
import zlib
from collections import Counter
from pathlib import Path

import numpy as np
from markdown_it import MarkdownIt
from streamlit.testing.v1 import AppTest

from bandcalc.demos import load_demo
from bandcalc.page.address import PARAM, address_to_design, design_to_address
from bandcalc.page.opening import OPENED

ROOT = Path(__file__).parent.parent
APP = str(ROOT / "app.py")
SUMP = load_demo("sump_level_switch")  # the page's default demo


def unopened() -> AppTest:
    """The page as a new browser tab gets it, not yet run: its first run draws only the results, then
    waits for the browser to report the curve drawn (:mod:`bandcalc.page.opening`)."""
    return AppTest.from_file(APP, default_timeout=120)


def opened() -> AppTest:
    """The page, not yet run, whose first run draws it whole: AppTest has no browser to report the
    curve drawn, so the session starts as if it had."""
    at = unopened()
    at.session_state[OPENED] = True
    return at


def page(query: dict | None = None, design=None, panel: str | None = None) -> AppTest:
    """The page after its first run, on ``design`` (through the address) or ``query``, with the
    panel titled ``panel`` open.  Each run that reran only the parts following the design (a
    slider's quick rerun, :mod:`bandcalc.page.follow`) is checked against a full run and then
    completed by it (see :func:`following`)."""
    at = opened()
    at._run = following(at._run)
    at.query_params.update(query or {})
    if design is not None:
        at.query_params[PARAM] = design_to_address(design)
    if panel is not None:
        at.session_state["page.panel"] = panel
    return at.run()


def _leaves(at: AppTest) -> list[bytes]:
    """Every element on the page (not containers), as its message to the browser, in order."""
    out: list[bytes] = []

    def walk(node) -> None:
        children = getattr(node, "children", None)
        if isinstance(children, dict):
            for child in children.values():
                walk(child)
        elif getattr(node, "proto", None) is not None:
            proto = node.proto
            if "set_value" in proto.DESCRIPTOR.fields_by_name:  # a widget: compare the value it shows
                proto = type(proto)()
                proto.CopyFrom(node.proto)
                for name in ("value", "raw_value", "raw_values", "set_value"):
                    if name in proto.DESCRIPTOR.fields_by_name:
                        proto.ClearField(name)
                proto = proto.SerializeToString(deterministic=True) + repr(node.value).encode()
            else:
                proto = proto.SerializeToString(deterministic=True)
            out.append(proto)

    walk(at.main)
    walk(at.sidebar)
    return out


def following(run):
    """AppTest's run, checking each quick rerun (only the parts of the page that follow the design,
    after a slider) against the full run the browser would otherwise have had:

    - each element the quick rerun drew is the same in the full run;
    - each other element of the full run was on the page, the same, before the quick rerun (what
      the browser keeps showing), so nothing on the page is left stale;

    then the full run, whose tree the tests read.  A quick rerun draws no title: that tells it."""
    before: list[bytes] = []

    def checked(*args, **kwargs):
        nonlocal before
        at = run(*args, **kwargs)
        if at.title or at.exception:
            before = _leaves(at)
            return at
        quick = Counter(_leaves(at))
        at = run()
        full = Counter(_leaves(at))
        drawn_wrong = quick - full
        assert not drawn_wrong, f"a quick rerun drew {sum(drawn_wrong.values())} element(s) unlike a full run"
        stale = (full - quick) - Counter(before)
        assert not stale, f"a quick rerun left {sum(stale.values())} element(s) stale: {list(stale)[:3]}"
        before = _leaves(at)
        return at

    return checked


def figures(at: AppTest) -> dict[str, str]:
    return {m.label: m.value for m in at.metric}


def charts(at: AppTest) -> list[dict]:
    return [json.loads(element.proto.spec) for element in at.get("plotly_chart")]


def chart(at: AppTest, trace: str = "Rising input") -> dict:
    """The one chart holding a trace named ``trace`` (default: the transfer curve)."""
    (found,) = [c for c in charts(at) if any(t.get("name") == trace for t in c["data"])]
    return found


def trace(spec: dict, name: str) -> dict:
    (found,) = [t for t in spec["data"] if t.get("name") == name]
    return found


def numbers(array) -> np.ndarray:
    """A Plotly JSON array: a plain list, or typed binary data ({"dtype", "bdata"})."""
    if isinstance(array, dict):
        return np.frombuffer(base64.b64decode(array["bdata"]), dtype=array["dtype"])
    return np.asarray(array, dtype=float)


def design_on(at: AppTest):
    return address_to_design(at.query_params[PARAM])


# bandcalc.model.operating cautions, not input errors
CAUTIONS = ("Hazardous voltage", "Creepage and clearance", "Protective function",
            "Power-up of a protective stage")


_MARKDOWN = MarkdownIt("commonmark")


def as_read(markdown: str) -> str:
    """Text as a reader sees it, from the Markdown Streamlit draws (the page escapes user text in it)."""
    rendered = _MARKDOWN.renderInline(markdown)
    return html.unescape(re.sub(r"<[^>]+>", "", rendered.replace("<br />\n", "\n")))


def errors(at: AppTest) -> list[str]:
    """Error messages on the page as read; the safety cautions (also shown in red) are not counted."""
    return [as_read(e.value) for e in at.error if not e.value.startswith(CAUTIONS)]


def captions(at: AppTest) -> list[str]:
    return [as_read(c.value) for c in at.caption]


def button(at: AppTest, label: str):
    return next(b for b in at.button if b.label == label)


INTERNAL = "The page ran into an internal error"


def stranded(at: AppTest) -> list[str]:
    """What is missing for the user to carry on (empty when the page is whole): no traceback, no
    internal error, the title, the demo chooser and the stage's controls, the figures."""
    missing = []
    if at.exception:
        missing.append(f"a traceback: {at.exception[0].message[:200]}")
    if any(e.value.startswith(INTERNAL) for e in at.error):
        missing.append("only an internal-error message")
    if not at.title:
        missing.append("the title")
    if not any(s.key == "page.demo" for s in at.selectbox):
        missing.append("the demo chooser")
    if not any(s.key == "in.resistors.feedback.slider" for s in at.select_slider):
        missing.append("the feedback resistor's slider")
    if len(at.metric) < 6:
        missing.append("the switching-point figures")
    return missing


def address_of(data) -> str:
    """The page-address text for any JSON text or data, written as the page writes a design."""
    text = data if isinstance(data, str) else json.dumps(data, separators=(",", ":"))
    packed = zlib.compress(text.encode("utf-8"), 9)
    return base64.urlsafe_b64encode(packed).decode("ascii").rstrip("=")


_WORDS = ("pump", "level", "sensor", "switch", "relay", "the", "and", "at", "when", "below", "above",
          "rises", "falls", "hysteresis", "band", "ripple", "supply", "rail", "kΩ", "5 V", "3.1 V", "pit",
          "float", "starts", "stops", "check", "wiring", "fuse", "cable", "drain", "alarm", "µA")


def prose(chars: int, seed: int = 0) -> str:
    """``chars`` characters of notes-like text: words, sentences and line breaks, drawn reproducibly."""
    rng = random.Random(seed)
    out: list[str] = []
    size = 0
    while size < chars:
        sentence = " ".join(rng.choice(_WORDS) for _ in range(rng.randint(4, 14))) + "."
        sentence = sentence[0].upper() + sentence[1:]
        sentence += "\n" if rng.random() < 0.2 else " "
        out.append(sentence)
        size += len(sentence)
    return "".join(out)[:chars]
