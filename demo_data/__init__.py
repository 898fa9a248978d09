"""The demo designs (JSON files in this folder).

This folder stays at the top of the checkout; installed, it becomes the package
``bandcalc.demo_data`` (``package-dir`` in ``pyproject.toml``), so ``bandcalc.demos`` reads the
files through ``importlib.resources`` wherever bandcalc is installed.
"""
