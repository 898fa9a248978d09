"""The design as a whole: its name and notes, whether it guards people or property, a demo to start
from, opening and saving the file."""

from __future__ import annotations

import re

import streamlit as st

from bandcalc.demos import demo_designs
from bandcalc.errors import DesignError
from bandcalc.model.design import Design
from bandcalc.model.design_file import design_from_json, design_to_json
from bandcalc.model.operating import is_protective
from bandcalc.model.parts import with_value
from bandcalc.page import follow, state
from bandcalc.page.address import ADDRESS_MAX
from bandcalc.page.edit import with_protective
from bandcalc.page.inputs import choice_control
from bandcalc.page.literal import literal

__all__ = ["MAX_UPLOAD_MB", "file_name", "render_design_file"]

# A design file is well under a kilobyte; 1 MB is plenty (server.maxUploadSize caps all uploads).
MAX_UPLOAD_MB = 1
_DEMO_KEY = "page.demo"
_UPLOAD_KEY = "page.upload"


def file_name(design: Design, suffix: str = ".json") -> str:
    """A file name from the design's name: "Sump level switch" -> "sump-level-switch.json"."""
    slug = re.sub(r"[^a-z0-9]+", "-", design.name.lower()).strip("-")
    return f"{slug or 'design'}{suffix}"


def _demo_chosen() -> None:
    stem = st.session_state[_DEMO_KEY]
    if stem is not None:
        design = demo_designs()[stem]
        state.replace_design(design, f"Opened the demo design “{design.name}”.")
        st.session_state[_DEMO_KEY] = None  # so the same demo can be chosen again to start over


def _design_of(upload) -> Design:
    try:
        text = upload.getvalue().decode("utf-8")
    except UnicodeDecodeError:
        raise DesignError("not a UTF-8 text file") from None
    return design_from_json(text, upload.name)


def _opened() -> None:
    upload = st.session_state[_UPLOAD_KEY]
    if upload is None:
        return
    design = state.read_upload(upload, lambda u: state.admit(_design_of(u)), "The current design is kept.")
    if design is not None:
        state.replace_design(design, f"Opened {upload.name}.")


def _named(key: str, path: str, label: str) -> None:
    # A text refused stays in its box, to be shortened or copied; the design keeps the one it had.
    text = st.session_state[key]
    state.edit(lambda d: with_value(d, path, text), label, path,
               kept=f"the {path} it had; your text stays in the box")


def _held_back(key: str, path: str, label: str) -> None:
    """Under a name or notes box whose text the design refused (kept in the box to be shortened or
    copied), say so on every run while it differs: the refusal's own message is shown once, and
    entering the same text again is no change to the box, so nothing else would.  A part that
    follows the design (:mod:`bandcalc.page.follow`): the message gives the design's size."""
    design = state.begin_run()
    text = st.session_state[key]
    if text == getattr(design, path):
        return
    try:
        state.admit(with_value(design, path, text))
    except ValueError as exc:
        st.warning(literal(f"Not in the design: {state.explain(exc, label, path)} The design keeps the "
                           f"{path} it had."))


@follow.part("save")
def _save() -> None:
    """The Save button, holding the design file of the design as it is now."""
    design = state.begin_run()
    st.download_button("Save the design file", data=design_to_json(design), file_name=file_name(design),
                       mime="application/json", on_click="ignore", icon=":material/download:",
                       width="stretch")


def render_design_file(design: Design) -> None:
    """Name and notes, demo chooser, open and save; draw inside the sidebar."""
    demos = demo_designs()
    st.selectbox("Start from a demo design", tuple(demos), index=None, key=_DEMO_KEY,
                 format_func=lambda stem: demos[stem].name or stem, on_change=_demo_chosen,
                 placeholder="Choose a demo…")
    name_key, notes_key = state.INPUT_PREFIX + "name", state.INPUT_PREFIX + "notes"
    st.session_state.setdefault(name_key, design.name)
    st.session_state.setdefault(notes_key, design.notes)
    st.text_input("Design name", key=name_key, on_change=_named, args=(name_key, "name", "Design name"))
    follow.part("held-back.name")(_held_back)(name_key, "name", "Design name")
    st.text_area("Notes", key=notes_key, height=90, on_change=_named, args=(notes_key, "notes", "Notes"),
                 help=f"Kept with the design in the page address, which holds {ADDRESS_MAX:,} characters: "
                      "several pages of notes. Longer notes are refused; keep long text in a file")
    follow.part("held-back.notes")(_held_back)(notes_key, "notes", "Notes")
    choice_control(st.checkbox, "Guards people or property", "protective", is_protective(design),
                   with_protective, help="A disconnect, cut-off, alarm or interlock: brings the usual "
                   "cautions. Ticked from the name and notes until you choose; your choice is saved in the "
                   "design file.")
    _save()
    st.file_uploader("Open a design file", type=["json"], key=_UPLOAD_KEY, on_change=_opened,
                     max_upload_size=MAX_UPLOAD_MB, help="A design file saved from this page (JSON)")
