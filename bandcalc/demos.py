"""The demo designs shipped in ``demo_data/``: scenarios of our own, for trying the page and the commands."""

from __future__ import annotations

from functools import cache
from pathlib import Path

from bandcalc.model.design import Design
from bandcalc.model.design_file import load_design

__all__ = ["DEFAULT_DEMO", "DEMO_DIR", "demo_designs", "demo_paths", "load_demo"]

DEMO_DIR = Path(__file__).resolve().parents[1] / "demo_data"
DEFAULT_DEMO = "sump_level_switch"


def demo_paths() -> dict[str, Path]:
    """Every demo design file by stem, the default first."""
    paths = sorted(DEMO_DIR.glob("*.json"), key=lambda p: (p.stem != DEFAULT_DEMO, p.stem))
    return {p.stem: p for p in paths}


def load_demo(stem: str) -> Design:
    """One demo design by file stem (``"sump_level_switch"``)."""
    return load_design(demo_paths()[stem])


@cache
def demo_designs() -> dict[str, Design]:
    """Every demo design by file stem, the default first; a file that fails to load is left out."""
    found: dict[str, Design] = {}
    for stem, path in demo_paths().items():
        try:
            found[stem] = load_design(path)
        except ValueError:
            continue
    return found
