"""Results of the runs the user started (spread, signal check; the fit when it comes), kept in the
session and keyed by the design's JSON and the run's settings.

A long run happens on a button press; its result stays here so that the panel can show it again
without running, and the design summary can include whatever has been run for the current
design.  ``st.cache_data`` is not used for these runs: a run updates a progress bar as it goes,
which a cached call cannot replay, and a signal run holds its whole waveform, which is kept only
for the latest run.
"""

from __future__ import annotations

from collections.abc import Hashable
from typing import Any

import streamlit as st

from bandcalc.model.design import Design
from bandcalc.model.design_file import design_to_json

__all__ = ["KEPT", "latest", "recall", "remember"]

_KEY = "page.runs"
#: How many results of each kind a session keeps (the newest).
KEPT = {"spread": 8, "signal": 1, "fit": 4}


def _store(kind: str) -> list[tuple[str, Hashable, Any]]:
    if kind not in KEPT:
        raise ValueError(f"run kind: {kind!r}; allowed: {', '.join(KEPT)}")
    return st.session_state.setdefault(_KEY, {}).setdefault(kind, [])


def remember(kind: str, design: Design, settings: Hashable, result: Any) -> None:
    """Keep ``result`` of a run of ``kind`` on ``design`` with ``settings``."""
    store = _store(kind)
    key = design_to_json(design)
    kept = [entry for entry in store if entry[:2] != (key, settings)]
    kept.append((key, settings, result))
    store[:] = kept[-KEPT[kind]:]


def recall(kind: str, design: Design, settings: Hashable) -> Any | None:
    """The result of a run of ``kind`` on ``design`` with exactly these ``settings``, if kept."""
    key = design_to_json(design)
    return next((r for k, s, r in reversed(_store(kind)) if k == key and s == settings), None)


def latest(kind: str, design: Design) -> Any | None:
    """The newest result of a run of ``kind`` on ``design``, whatever its settings."""
    key = design_to_json(design)
    return next((r for k, _, r in reversed(_store(kind)) if k == key), None)
