"""Shared test settings and fixtures.

Demo designs come through the package's ``bandcalc.demos`` (never by path arithmetic in a test):
``demo("sump_level_switch")`` gives the Design, ``demo_path("sump_level_switch")`` its file as a
string for the commands, and a test asking for ``each_demo`` (or ``demo_stem``) runs once per
shipped demo, with the demo's stem as the test id.

Hypothesis profiles: "ci" (chosen when the CI variable is set) draws the same examples on
every run, so a landing never hangs on a newly drawn case; "thorough" draws ten times more
for a local shake-out: ``HYPOTHESIS_PROFILE=thorough python -m pytest``.
"""

import os
import sys
from pathlib import Path

import pytest
from hypothesis import settings

from bandcalc.demos import demo_paths, load_demo

sys.path.insert(0, str(Path(__file__).parent))  # test helpers: circuit_reference, strategies, page_helpers

settings.register_profile("ci", derandomize=True, print_blob=True)
settings.register_profile("thorough", max_examples=1000)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci" if os.environ.get("CI") else "default"))


@pytest.fixture(scope="session")
def demo():
    """``demo(stem)`` -> that demo's Design, e.g. ``demo("sump_level_switch")``."""
    return load_demo


@pytest.fixture(scope="session")
def demo_path():
    """``demo_path(stem)`` -> that demo's design file as a string, for the command line."""
    def path(stem: str) -> str:
        return str(demo_paths()[stem])
    return path


@pytest.fixture(params=list(demo_paths()))
def demo_stem(request) -> str:
    """Every shipped demo's stem in turn, the default first; the stem is the test id."""
    return request.param


@pytest.fixture
def each_demo(demo_stem):
    """Every shipped demo's Design in turn (test id: its stem)."""
    return load_demo(demo_stem)
