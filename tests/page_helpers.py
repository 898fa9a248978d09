"""Helpers the page tests share: start the page with AppTest, read its figures, charts and messages."""

from __future__ import annotations

import base64
import json
from pathlib import Path

import numpy as np
from streamlit.testing.v1 import AppTest

from bandcalc.demos import load_demo
from bandcalc.page.address import PARAM, address_to_design, design_to_address

ROOT = Path(__file__).parent.parent
APP = str(ROOT / "app.py")
SUMP = load_demo("sump_level_switch")  # the page's default demo


def page(query: dict | None = None, design=None, panel: str | None = None) -> AppTest:
    """The page after its first run, on ``design`` (through the address) or ``query``, with the
    panel titled ``panel`` open."""
    at = AppTest.from_file(APP, default_timeout=120)
    at.query_params.update(query or {})
    if design is not None:
        at.query_params[PARAM] = design_to_address(design)
    if panel is not None:
        at.session_state["page.panel"] = panel
    return at.run()


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


def errors(at: AppTest) -> list[str]:
    """Error messages on the page; the safety cautions (also shown in red) are not counted."""
    return [e.value for e in at.error if not e.value.startswith(CAUTIONS)]


def captions(at: AppTest) -> list[str]:
    return [c.value for c in at.caption]


def button(at: AppTest, label: str):
    return next(b for b in at.button if b.label == label)
