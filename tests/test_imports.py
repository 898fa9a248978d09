"""Import hygiene: the calculation package never pulls in the page's libraries."""

import subprocess
import sys


def test_import_bandcalc_does_not_import_streamlit_or_plotly():
    code = ("import sys, bandcalc, bandcalc.cli, bandcalc.analysis, bandcalc.network, bandcalc.design\n"
            "import pkgutil, importlib\n"
            "for m in pkgutil.iter_modules(bandcalc.__path__):\n"
            "    if m.name not in ('plots', 'schematic', '__main__'):\n"
            "        importlib.import_module('bandcalc.' + m.name)\n"
            "bad = sorted(n for n in sys.modules if n.split('.')[0] in ('streamlit', 'plotly'))\n"
            "print(','.join(bad))")
    run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert run.stdout.strip() == ""
