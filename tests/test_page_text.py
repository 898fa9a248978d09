"""Text from users is shown on the page as text: a design's name and watched unit, file names, keys
and values typed, wherever the page draws them.

Streamlit reads nearly every string it draws as Markdown (GitHub-flavoured: titles, captions,
messages, metric values, widget labels and help, radio options, table cells; the Streamlit
documentation of st.markdown and of each element's ``label``).  A shared address whose design is
named ``![n](http://...) [Update](http://...)`` must not draw a remote image or a link disguised as
the page's own.  Each string the page sends is parsed here with markdown-it-py, a CommonMark parser
(CommonMark 0.31 with the GFM table and strikethrough extensions), and may hold no image and no link
to the address planted; Plotly's pseudo-HTML (``<a href=...>`` in chart text, Plotly's documentation
of text formatting) no ``<a`` tag either.
"""

from __future__ import annotations

import json
from dataclasses import replace

import pytest
from markdown_it import MarkdownIt
from page_helpers import SUMP, address_of, button, charts, design_on, errors, page, stranded

from bandcalc.model.design_file import design_to_dict
from bandcalc.model.parts import with_value
from bandcalc.page.address import PARAM
from bandcalc.page.edit import with_front_end
from bandcalc.page.panels import PANELS

PLANTED = "example.invalid"  # a name reserved never to resolve (RFC 2606)
MARKDOWN = f"![n](http://{PLANTED}/n.png) [Update](http://{PLANTED}/u) <http://{PLANTED}/a> $x$ **b** `c`"
HTML = f'<a href="http://{PLANTED}/h">kPa</a><img src="http://{PLANTED}/i.png">'
GFM = MarkdownIt("commonmark").enable(["table", "strikethrough"])
# Fields of Streamlit's element messages drawn as Markdown; values, ids and specifications are not.
MARKUP_FIELDS = {"body", "label", "help", "options", "caption"}


def _nodes(node):
    yield node
    for child in (getattr(node, "children", None) or {}).values():
        yield from _nodes(child)


def _strings(message, field: str = ""):
    for descriptor, value in message.ListFields():
        values = value if descriptor.is_repeated else [value]
        if descriptor.type == descriptor.TYPE_MESSAGE:
            for item in values:
                if hasattr(item, "ListFields"):
                    yield from _strings(item, descriptor.name)
        elif descriptor.type == descriptor.TYPE_STRING:
            for item in values:
                yield descriptor.name, item


def drawn_markdown(at) -> list[str]:
    """Every string of the page that Streamlit draws as Markdown, table cells and headings included."""
    texts = [text for node in _nodes(at._tree) if hasattr(getattr(node, "proto", None), "ListFields")
             for field, text in _strings(node.proto) if field in MARKUP_FIELDS]
    for table in at.table:
        frame = table.value
        texts += [str(c) for c in frame.columns] + [str(v) for v in frame.to_numpy().ravel()]
    return texts


def planted_links(text: str) -> list[str]:
    """Links and images to the planted address that ``text`` draws as Markdown."""
    found = []
    for block in GFM.parse(text):
        for token in block.children or ():
            target = token.attrs.get("href") or token.attrs.get("src") or ""
            if token.type in ("link_open", "image") and PLANTED in str(target):
                found.append(f"{token.type} {target}")
    return found


def check_text_shown_as_text(at) -> None:
    assert not stranded(at)
    bad = {text: planted_links(text) for text in drawn_markdown(at) if planted_links(text)}
    assert not bad, bad
    assert any(PLANTED in text for text in drawn_markdown(at))  # the text is there, as text
    for spec in charts(at):
        assert "<a " not in json.dumps(spec).lower(), spec["layout"].get("xaxis")


def planted_design(unit: str):
    linear = with_value(with_front_end(SUMP, "linear"), "front_end.unit", unit)
    return replace(linear, name=MARKDOWN, notes=MARKDOWN)


def run_panel(at, panel: str):
    at.session_state["page.panel"] = panel
    at.run()
    pressed = {"Fit to target points": "Find values", "Spread": "Run the spread",
               "Signal check": "Run the signal check"}.get(panel)
    if pressed:
        if panel == "Spread":
            at.number_input(key="page.spread.samples").set_value(1000)
        button(at, pressed).click().run()
    return at


@pytest.mark.parametrize("panel", [p.TITLE for p in PANELS if p.TITLE != "Summary"])
@pytest.mark.parametrize("unit", [MARKDOWN, HTML], ids=["markdown", "html"])
def test_a_shared_design_shows_its_name_and_unit_as_text(panel, unit):
    at = page(design=planted_design(unit))
    for section in ("front_end", "source"):
        at.session_state[f"page.section.{section}"] = True
    at = run_panel(at, panel)
    assert design_on(at).front_end.unit == unit  # the design as it came: nothing was lost to escaping
    check_text_shown_as_text(at)


def test_the_summary_preview_shows_the_name_and_notes_as_text():
    # The summary's own escaping of the unit belongs to outputs/summary.py (tests/test_report.py);
    # here the name and notes, with a unit of plain letters.
    at = run_panel(page(design=planted_design("kPa")), "Summary")
    check_text_shown_as_text(at)


def test_messages_show_file_names_keys_and_typed_values_as_text():
    at = page()
    at.file_uploader[0].set_value((f"{MARKDOWN}.json", b"{", "application/json")).run()
    at.text_input(key="in.resistors.input.text").input(MARKDOWN).run()
    assert len(errors(at)) == 1  # each run shows its own messages
    check_text_shown_as_text(at)
    unknown = design_to_dict(SUMP) | {MARKDOWN: 1}
    at = page({PARAM: address_of(unknown)})
    assert "demo design is shown instead" in errors(at)[0]
    check_text_shown_as_text(at)


def test_escaped_text_reads_as_typed():
    # What a reader sees is the text itself: the page's Markdown, read back, gives the name typed.
    at = page(design=replace(SUMP, name=MARKDOWN))
    (title,) = [t.value for t in at.title]
    html = GFM.render(title.replace(r"\$", "$"))
    assert "<img" not in html and "<a " not in html
    assert "Update" in html and "**b**" in html and "`c`" in html
