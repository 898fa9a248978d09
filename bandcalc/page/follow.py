"""The parts of the page that follow the design, and the quick rerun of just those after a slider.

A resistor slider edits one value of the design.  Redrawing the whole page for it would send
every control of the sidebar to the browser again, unchanged, and in the browser that costs more
than the transfer curve itself (benchmarks/bench_browser.py).  So each part of the page that
shows something of the design is a keyed fragment made with :func:`part` (the live view, the
Save button's file, the open panel, the filter's pole, the warning under a name or notes box held
back), and a slider's callback, once its edit
has gone in, asks for :func:`rerun` of those parts and of its own control: the page shows the
new design everywhere, and the ~40 controls that cannot have changed stay as they are.

Edits that change what controls there are (a stage kind, a leg, a unit) or whose refusal must be
reported at the top of the page still rerun the whole page, as any widget does by default.

A part reads the design from :mod:`bandcalc.page.state`, never from its arguments: in its own
rerun a fragment gets the arguments of the last full run.  Only parts drawn in the last full run
are rerun (Streamlit refuses a key it has not seen; a section shut since would draw where it no
longer is).
"""

from __future__ import annotations

from collections.abc import Callable
from functools import wraps
from typing import Any, NoReturn, TypeVar

import streamlit as st

from bandcalc.model.design import Design
from bandcalc.page import state

__all__ = ["begin_page", "drawn_design", "part", "rerun"]

F = TypeVar("F", bound=Callable[..., Any])
_DRAWN = "page.follow.drawn"  # keys of the parts drawn in the last full run, in rerun order
_DESIGN = "page.follow.design"  # the design the parts show (set by the full run and by rerun())


def begin_page(design: Design) -> None:
    """At the start of a full run of the page: no part drawn yet; the parts will show ``design``."""
    st.session_state[_DRAWN] = []
    st.session_state[_DESIGN] = design


def part(key: str, first: bool = False) -> Callable[[F], F]:
    """Make a function a part of the page that follows the design: a fragment keyed ``key``,
    rerun by :func:`rerun` as long as it was drawn in the last full run; ``first`` parts rerun
    ahead of the others (the live view: its curve is what the user watches while sliding)."""
    def wrap(fn: F) -> F:
        fragment = st.fragment(fn, key=key)

        @wraps(fn)
        def draw(*args: Any, **kwargs: Any) -> Any:
            drawn = st.session_state.setdefault(_DRAWN, [])
            if key not in drawn:
                drawn.insert(0 if first else len(drawn), key)
            return fragment(*args, **kwargs)

        return draw  # type: ignore[return-value]
    return wrap


def drawn_design() -> Design | None:
    """The design the parts were last drawn for (or asked to be, by :func:`rerun`)."""
    return st.session_state.get(_DESIGN)


def rerun(*own: str) -> NoReturn:
    """From a callback whose edit went in: rerun the parts of the page drawn in the last full run,
    and the fragments keyed ``own`` (the control itself), instead of the whole page."""
    st.session_state[_DESIGN] = state.current_design()
    st.rerun([*st.session_state.get(_DRAWN, []), *own])
