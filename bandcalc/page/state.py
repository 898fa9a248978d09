"""The page's state: the current design in the session, messages for the user, the page address.

The design is the single source of truth.  Controls never hold values of their own between
design changes: whenever the design is replaced, every control's state (session keys starting
with :data:`INPUT_PREFIX`) is forgotten, and each control starts again from the design.  So a
loaded file, a demo, a value from the address or a panel's suggestion all show up everywhere.

Change the design only in widget callbacks (``on_change``/``on_click``) with
:func:`replace_design` or :func:`edit`, or from a panel's body with :func:`apply_design`,
which reruns the whole page.

A panel reruns on its own (a fragment) when its widgets change.  A panel control that edits the
design passes ``controls=`` its own key prefix (``"in.tolerances."``), so that only the panel's
controls start again: the widgets outside the panel are not redrawn in that rerun, and forgetting
their state then would make Streamlit take them for changed on the next interaction.
"""

from __future__ import annotations

import logging
from collections.abc import Callable
from typing import Any, TypeVar

import streamlit as st

from bandcalc.demos import DEFAULT_DEMO, demo_designs
from bandcalc.errors import DesignError
from bandcalc.model.design import Design
from bandcalc.page.address import PARAM, address_to_design, design_to_address

__all__ = [
    "INPUT_PREFIX",
    "apply_design",
    "current_design",
    "edit",
    "explain",
    "read_upload",
    "replace_design",
    "say",
    "show_messages",
    "take_messages",
    "write_address",
]

log = logging.getLogger("bandcalc.page")
T = TypeVar("T")

INPUT_PREFIX = "in."
_DESIGN = "page.design"
_MESSAGES = "page.messages"
_KINDS = ("error", "warning", "info", "success")


def say(kind: str, text: str) -> None:
    """Queue a message ("error", "warning", "info" or "success") for the top of the page."""
    if kind not in _KINDS:
        raise ValueError(f"message kind: {kind!r}; allowed: {', '.join(_KINDS)}")
    st.session_state.setdefault(_MESSAGES, []).append((kind, text))


def take_messages() -> list[tuple[str, str]]:
    """The queued messages, emptying the queue."""
    return st.session_state.pop(_MESSAGES, [])


def show_messages() -> None:
    """Show the queued messages here, emptying the queue (the page's top; a panel's own rerun)."""
    for kind, text in take_messages():
        getattr(st, kind)(text)


def _starting_design() -> Design:
    text = st.query_params.get(PARAM)
    if text:
        try:
            return address_to_design(text)
        except DesignError as exc:
            say("error", f"{exc}. The demo design is shown instead.")
    demos = demo_designs()
    if not demos:
        raise DesignError(f"demo_data: no readable demo design (looked for {DEFAULT_DEMO}.json)")
    return next(iter(demos.values()))


def current_design() -> Design:
    """The design on the page (read from the address, or the demo, on a session's first run)."""
    if _DESIGN not in st.session_state:
        st.session_state[_DESIGN] = _starting_design()
    return st.session_state[_DESIGN]


def replace_design(design: Design, note: str | None = None, controls: str = INPUT_PREFIX) -> None:
    """Make ``design`` the page's design; every control (keyed ``controls``...) starts again from it.

    Call from a widget callback (or before any control is drawn in this run).
    """
    if not controls.startswith(INPUT_PREFIX):
        raise ValueError(f"controls: {controls!r}; control keys start with {INPUT_PREFIX!r}")
    st.session_state[_DESIGN] = design
    for key in [k for k in st.session_state if str(k).startswith(controls)]:
        del st.session_state[key]
    if note:
        say("success", note)


def apply_design(design: Design, note: str | None = None) -> None:
    """From a panel's body (not a callback): replace the design and rerun the whole page."""
    replace_design(design, note)
    st.rerun(scope="app")


def edit(change: Callable[[Design], Design], field: str, path: str | None = None,
         kept: str | None = None, controls: str = INPUT_PREFIX) -> bool:
    """Apply ``change`` to the current design; on bad input say so and keep the design.

    The message names ``field`` (the label the user sees) and, where given, the design-file
    ``path`` and the value ``kept``.  ``controls``: see :func:`replace_design`.  Returns whether the
    design changed.
    """
    try:
        replace_design(change(current_design()), controls=controls)
        return True
    except ValueError as exc:
        say("error", explain(exc, field, path) + (f". The design keeps {kept}." if kept else ""))
    except Exception:  # the page never shows a traceback
        log.exception("editing %s failed", field)
        say("error", f"{field}: this change could not be made; the design is unchanged.")
    return False


def explain(exc: Exception, field: str, path: str | None = None) -> str:
    """A message naming the field; a leading "path: " in the error is folded into it."""
    text = str(exc)
    where = field
    if path:
        where = f"{field} ({path})"
        text = text.removeprefix(f"{path}: ").removeprefix(f"{field} ({path}): ")
    return f"{where}: {text}"


def write_address(design: Design) -> None:
    """Keep the design in the page address, so a reload keeps it and the link can be shared."""
    text = design_to_address(design)
    if st.query_params.get(PARAM) != text:
        st.query_params[PARAM] = text


def read_upload(upload: Any, read: Callable[[Any], T], kept: str) -> T | None:
    """``read(upload)`` of an uploaded file, or ``None`` after a message naming the file and the
    problem and saying what is ``kept`` (never a traceback)."""
    try:
        return read(upload)
    except ValueError as exc:
        text = str(exc)
        say("error", f"{text if text.startswith(upload.name) else f'{upload.name}: {text}'}. {kept}")
    except Exception:  # the page never shows a traceback
        log.exception("reading %s failed", upload.name)
        say("error", f"{upload.name}: could not be read. {kept}")
    return None
