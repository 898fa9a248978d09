"""The demo designs: scenarios of our own, for trying the page and the commands.

They are the JSON files of the top-level ``demo_data/`` folder, installed as the package
``bandcalc.demo_data`` and read through :mod:`importlib.resources`, so they are found in a wheel
install, an editable install and a plain checkout alike (the last reads the folder itself).
"""

from __future__ import annotations

from functools import cache
from importlib import resources
from importlib.resources.abc import Traversable
from pathlib import Path

from bandcalc.errors import DesignError
from bandcalc.model.design import Design
from bandcalc.model.design_file import load_design

__all__ = ["DEFAULT_DEMO", "DEMO_DIR", "DEMO_PACKAGE", "demo_designs", "demo_paths", "load_demo"]

DEMO_PACKAGE = "bandcalc.demo_data"
DEFAULT_DEMO = "sump_level_switch"
# A checkout run without installing (or from an install made before the demos became package data).
_CHECKOUT_FOLDER = Path(__file__).resolve().parents[1] / "demo_data"


def _demo_folder() -> Traversable:
    """Where the demo design files are: the installed package, else the checkout's folder."""
    try:
        return resources.files(DEMO_PACKAGE)
    except ModuleNotFoundError:
        return _CHECKOUT_FOLDER


DEMO_DIR: Traversable = _demo_folder()


def demo_paths() -> dict[str, Traversable]:
    """Every demo design file by stem, the default first."""
    found = DEMO_DIR.iterdir() if DEMO_DIR.is_dir() else ()
    files = [f for f in found if f.name.endswith(".json") and f.is_file()]
    files.sort(key=lambda f: (f.name != f"{DEFAULT_DEMO}.json", f.name))
    return {f.name.removesuffix(".json"): f for f in files}


def _load(file: Traversable) -> Design:
    with resources.as_file(file) as path:  # a real file even where the package is zipped
        return load_design(path)


def load_demo(stem: str) -> Design:
    """One demo design by file stem (``"sump_level_switch"``)."""
    paths = demo_paths()
    if stem not in paths:
        raise DesignError(f"no demo design named {stem!r}; the demos are: {', '.join(paths) or 'none found'}")
    return _load(paths[stem])


@cache
def demo_designs() -> dict[str, Design]:
    """Every demo design by file stem, the default first; a file that fails to load is left out."""
    found: dict[str, Design] = {}
    for stem, file in demo_paths().items():
        try:
            found[stem] = _load(file)
        except ValueError:
            continue
    return found
