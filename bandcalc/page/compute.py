"""Calls from the page into the package: cached with ``st.cache_data``, and guarded.

A guarded call turns a ``ValueError`` into a message that names what failed, and any other
error into a plain apology (logged on the server), so the page never shows a traceback.
"""

from __future__ import annotations

import logging
from collections.abc import Callable
from typing import Any, TypeVar

import plotly.graph_objects as go
import streamlit as st

from bandcalc.model.design import Design
from bandcalc.model.design_file import design_to_json
from bandcalc.model.operating import Analysis, analyze
from bandcalc.model.transfer import transfer_curve
from bandcalc.outputs.netlist import netlist
from bandcalc.outputs.plots import as_figure, transfer_spec
from bandcalc.outputs.schematic import stage_svg
from bandcalc.page.literal import literal

__all__ = ["analysis_of", "guarded", "netlist_of", "schematic_of", "transfer_figure_of", "transfer_spec_of"]

log = logging.getLogger("bandcalc.page")
T = TypeVar("T")
# Cache keys: a design's JSON text is exact and far quicker for st.cache_data to hash than the
# dataclass tree.
_BY_JSON = {Design: design_to_json}


def guarded(what: str, fn: Callable[..., T], *args: Any, **kwargs: Any) -> T | None:
    """``fn(*args, **kwargs)``, or ``None`` after showing an error message naming ``what``."""
    try:
        return fn(*args, **kwargs)
    except ValueError as exc:
        st.error(literal(f"{what}: {exc}"))
    except Exception:  # the page never shows a traceback
        log.exception("%s failed", what)
        st.error(f"{what}: could not be worked out for this design (an internal error, logged on the "
                 f"server). The design itself is kept; try another value.")
    return None


@st.cache_data(max_entries=512, show_spinner=False, hash_funcs=_BY_JSON)
def analysis_of(design: Design) -> Analysis:
    return analyze(design)


@st.cache_data(max_entries=256, show_spinner=False, hash_funcs=_BY_JSON)
def transfer_spec_of(design: Design, watched: bool = False, x_title: str | None = None) -> dict:
    """The transfer curve's Plotly specification (against the watched quantity where ``watched``)."""
    return transfer_spec(transfer_curve(design, watched=watched), x_title=x_title)


def transfer_figure_of(design: Design, watched: bool = False, x_title: str | None = None) -> go.Figure:
    """The transfer-curve figure (against the watched quantity where ``watched``); its specification
    is checked against Plotly's schema in the tests, so the page skips that check (it would cost
    most of a slider move's time)."""
    return as_figure(transfer_spec_of(design, watched, x_title), validate=False)


@st.cache_data(max_entries=256, show_spinner=False, hash_funcs=_BY_JSON)
def schematic_of(design: Design) -> str:
    return stage_svg(design)


@st.cache_data(max_entries=64, show_spinner=False, hash_funcs=_BY_JSON)
def netlist_of(design: Design) -> str:
    return netlist(design)
