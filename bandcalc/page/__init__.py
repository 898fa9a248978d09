"""The browser design sheet (``streamlit run app.py``), split into small modules.

Importing this package imports nothing; its modules import Streamlit where they draw.

- ``address``: the design in the page address (pure functions, no Streamlit)
- ``edit``: pure edits of a design made by the controls (no Streamlit)
- ``state``: the current design in the session, messages, and the page address
- ``compute``: cached, guarded calls into the package
- ``inputs``: the resistor control (slider + typed value) and the quantity field
- ``controls``: the sidebar that edits the stage
- ``design_file``: demo designs, open and save a design file
- ``results``: what is always in view: figures, findings, transfer curve, schematic
- ``panels``: one module per panel below the live view; add yours to ``panels.PANELS``
- ``sheet``: puts the page together; ``app.py`` calls :func:`sheet.main`
"""
