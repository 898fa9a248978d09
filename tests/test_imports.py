"""Import hygiene: every module imports first in a fresh interpreter (no import cycles), and the
calculation package never pulls in the page's libraries."""

import pkgutil
import subprocess
import sys

import pytest

import bandcalc

MODULES = sorted(m.name for m in pkgutil.walk_packages(bandcalc.__path__, "bandcalc.")
                 if m.name != "bandcalc.__main__")
# Only the page and the two figure makers may import Streamlit or Plotly.
DRAWING = ("bandcalc.page", "bandcalc.outputs.plots")


def test_every_module_is_listed():
    assert {"bandcalc.model.network", "bandcalc.cli.commands", "bandcalc.page.sheet"} <= set(MODULES)


@pytest.mark.parametrize("module", MODULES)
def test_module_imports_first_in_a_fresh_interpreter(module):
    code = (f"import {module}, sys\n"
            "print(','.join(sorted(n for n in sys.modules if n.split('.')[0] in ('streamlit', 'plotly'))))")
    run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert run.returncode == 0, run.stderr
    if not module.startswith(DRAWING):
        assert run.stdout.strip() == "", f"{module} pulls in {run.stdout.strip()}"
