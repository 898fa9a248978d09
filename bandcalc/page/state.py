"""The page's state: the current design in the session, messages for the user, the page address.

The design is the single source of truth.  Controls never hold values of their own between
design changes: whenever the design is replaced, every control's state (session keys starting
with :data:`INPUT_PREFIX`) is forgotten, and each control starts again from the design.  So a
loaded file, a demo, a value from the address or a panel's suggestion all show up everywhere.

Change the design only in widget callbacks (``on_change``/``on_click``) with
:func:`replace_design` or :func:`edit`, or from a panel's body with :func:`apply_design`,
which reruns the whole page.  Every run, the page's and a panel's own, starts with
:func:`begin_run`.

The browser sends every widget changed since the last run together (a box typed into and left by
clicking another control arrives with that control's change), so one run may call several
callbacks, in an order of Streamlit's choosing.  Each edit works on the design as the earlier ones
left it; an edit refused is tried again once the others are in (a negative rail above the old
positive rail fits beside the new one), and only then reported.  Controls start again in
:func:`begin_run`, after every callback of the run, so no callback finds another's value gone.

A panel reruns on its own (a fragment) when its widgets change, and where that changed the design,
the whole page runs again (:mod:`bandcalc.page.panels`).  A panel control that edits the design
passes ``controls=`` its own key prefix (``"in.tolerances."``), so that only the panel's controls
start again: the design's other values did not move, and the widgets outside the panel keep theirs.

The page takes only a design it can keep and show (:func:`admit`): one the page address can hold,
so that a reload or a shared link brings it back, and that can be analysed.  Edits, opened files,
a panel's suggestion and the design in the address all pass there; one that does not gets a
message, and the page keeps the design it had (or, from the address, shows the demo).
"""

from __future__ import annotations

import logging
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, TypeVar

import streamlit as st

from bandcalc.demos import DEFAULT_DEMO, demo_designs
from bandcalc.errors import DesignError
from bandcalc.model.design import Design
from bandcalc.page.address import PARAM, address_to_design, design_to_address
from bandcalc.page.compute import analysis_of
from bandcalc.page.literal import literal

__all__ = [
    "INPUT_PREFIX",
    "admit",
    "apply_design",
    "begin_run",
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
_RESTART = "page.restart"  # key prefixes of the controls to start again when the run begins
_REFUSED = "page.refused"  # edits refused in this run's callbacks, tried again when the run begins
_KINDS = ("error", "warning", "info", "success")


def say(kind: str, text: str) -> None:
    """Queue a message ("error", "warning", "info" or "success") for the top of the page; it is shown
    as text (:func:`bandcalc.page.literal.literal`), so compose it from raw text."""
    if kind not in _KINDS:
        raise ValueError(f"message kind: {kind!r}; allowed: {', '.join(_KINDS)}")
    st.session_state.setdefault(_MESSAGES, []).append((kind, text))


def take_messages() -> list[tuple[str, str]]:
    """The queued messages, emptying the queue."""
    return st.session_state.pop(_MESSAGES, [])


def show_messages(keep: bool = False) -> None:
    """Show the queued messages here, emptying the queue (the page's top; a panel's own rerun); with
    ``keep``, leave them queued for the next run to show again (a run that draws only the page's top,
    :mod:`bandcalc.page.opening`)."""
    for kind, text in (st.session_state.get(_MESSAGES, []) if keep else take_messages()):
        getattr(st, kind)(literal(text))


def admit(design: Design) -> Design:
    """``design``, if the page can keep it in the address and analyse it.

    Raises
    ------
    DesignError
        Saying why not: a text too long for the address or not text at all (naming its key), or
        the analysis failing (with its own message, naming the key where it can).
    """
    design_to_address(design)
    try:
        analysis_of(design)
    except ValueError as exc:
        raise DesignError(f"cannot be analysed: {exc}") from None
    except Exception:  # the page never shows a traceback
        log.exception("analysing a design offered to the page failed")
        raise DesignError("cannot be analysed (an internal error, logged on the server); check its values "
                          "against the design file reference, docs/design-file.md") from None
    return design


def _starting_design() -> Design:
    text = st.query_params.get(PARAM)
    if text:
        try:
            return admit(address_to_design(text))
        except DesignError as exc:
            where = f"page address ({PARAM}=...)"
            say("error", f"{exc if str(exc).startswith(where) else f'{where}: {exc}'}. "
                         f"The demo design is shown instead.")
        except Exception:  # the page never shows a traceback, and never strands the user
            log.exception("reading the page address failed")
            say("error", f"page address ({PARAM}=...): cannot be read. The demo design is shown instead.")
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
    """Make ``design`` the page's design; every control (keyed ``controls``...) starts again from it
    when the run begins (:func:`begin_run`).

    Call from a widget callback (or before any control is drawn in this run).  Raises
    :class:`DesignError` for a design the page cannot take (:func:`admit`), keeping the one it has.
    """
    if not controls.startswith(INPUT_PREFIX):
        raise ValueError(f"controls: {controls!r}; control keys start with {INPUT_PREFIX!r}")
    st.session_state[_DESIGN] = admit(design)
    st.session_state.setdefault(_RESTART, set()).add(controls)
    if note:
        say("success", note)


def apply_design(design: Design, note: str | None = None) -> None:
    """From a panel's body (not a callback): replace the design and rerun the whole page."""
    replace_design(design, note)
    st.rerun(scope="app")


@dataclass(frozen=True)
class _Edit:
    """One edit asked for in a callback: what it changes, and what a message about it names."""

    change: Callable[[Design], Design]
    field: str
    path: str | None
    kept: str | None
    controls: str
    restore: tuple[str, Any] | None  # (widget key, what it shows again) should the edit be refused


def _attempt(pending: _Edit) -> str | None:
    """Apply an edit to the current design; ``None`` if it went in, else the message saying why not."""
    try:
        replace_design(pending.change(current_design()), controls=pending.controls)
        return None
    except ValueError as exc:
        kept = f". The design keeps {pending.kept}." if pending.kept else ""
        return explain(exc, pending.field, pending.path) + kept
    except Exception:  # the page never shows a traceback
        log.exception("editing %s failed", pending.field)
        return f"{pending.field}: this change could not be made; the design is unchanged."


def edit(change: Callable[[Design], Design], field: str, path: str | None = None,
         kept: str | None = None, controls: str = INPUT_PREFIX,
         restore: tuple[str, Any] | None = None) -> bool:
    """Apply ``change`` to the current design, from a widget callback.

    An edit refused now is tried again when the run begins, after the other callbacks of the run
    (:func:`begin_run`); if it is still refused, a message names ``field`` (the label the user
    sees) and, where given, the design-file ``path`` and the value ``kept``, and the widget keyed
    ``restore[0]`` shows ``restore[1]`` again.  ``change`` must not read widget state: take the
    value in the callback.  ``controls``: see :func:`replace_design`.  Returns whether the design
    changed now.
    """
    pending = _Edit(change, field, path, kept, controls, restore)
    if _attempt(pending) is None:
        return True
    st.session_state.setdefault(_REFUSED, []).append(pending)
    return False


def begin_run() -> Design:
    """Start a run of the page or of a panel, before any control is drawn; returns the design.

    The edits its callbacks refused are tried again, as long as any of them goes in (one may need
    another of the same run); those still refused are reported.  Then the controls of every design
    change start again from the design.
    """
    refused: list[_Edit] = st.session_state.pop(_REFUSED, [])
    while refused:
        outcomes = [(pending, _attempt(pending)) for pending in refused]
        still = [(pending, message) for pending, message in outcomes if message is not None]
        if len(still) == len(refused):
            for pending, message in still:
                say("error", message)
                if pending.restore is not None:
                    st.session_state[pending.restore[0]] = pending.restore[1]
            break
        refused = [pending for pending, _ in still]
    prefixes = tuple(st.session_state.pop(_RESTART, ()))
    if prefixes:
        for key in [k for k in st.session_state if str(k).startswith(prefixes)]:
            del st.session_state[key]
    return current_design()


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
