"""The demo designs shipped in ``demo_data/``: scenarios of our own, for trying the page."""

from __future__ import annotations

from functools import cache
from pathlib import Path

from bandcalc.model.design import Design
from bandcalc.model.design_file import load_design

__all__ = ["DEFAULT_DEMO", "DEMO_DIR", "demo_designs"]

DEMO_DIR = Path(__file__).resolve().parents[2] / "demo_data"
DEFAULT_DEMO = "sump_level_switch"


@cache
def demo_designs() -> dict[str, Design]:
    """Every demo design by file stem, the default first; a file that fails to load is left out."""
    found: dict[str, Design] = {}
    paths = sorted(DEMO_DIR.glob("*.json"), key=lambda p: (p.stem != DEFAULT_DEMO, p.stem))
    for path in paths:
        try:
            found[path.stem] = load_design(path)
        except ValueError:
            continue
    return found
