"""The browser design sheet (``streamlit run app.py``), split into small modules.

Importing this package imports nothing; its modules import Streamlit where they draw.

- ``address``: the design in the page address (pure functions, no Streamlit)
- ``edit``: pure edits of a design made by the controls, front ends included (no Streamlit)
- ``tolerance_edit``: pure edits of the design's tolerances section (no Streamlit)
- ``state``: the current design in the session, messages, and the page address
- ``compute``: cached, guarded calls into the package
- ``inputs``: the resistor control (slider + typed value), typed values in any unit, selections
- ``controls``: the sidebar that edits the stage and its front end
- ``whole_design``: the demo chooser, name and notes, opening and saving the design file
- ``results``: what is always in view: figures, findings, transfer curve, schematic
- ``names``: names of parts and varied quantities for people
- ``literal``: text from users (names, units, file names) shown as text, never as Markdown
- ``runs``: results of the runs started by a button, kept per design and settings
- ``panels``: one module per panel below the live view; add yours to ``panels.PANELS``
- ``follow``: the parts of the page that follow the design, rerun alone after a slider
- ``quick_curve``: the transfer curve redrawn in the browser the moment a resistor slider moves
- ``opening``: a new tab's page in two runs, the results first
- ``sheet``: puts the page together; ``app.py`` calls :func:`sheet.main`
- ``entry``: the script ``bandcalc page`` gives Streamlit to run (it calls :func:`sheet.main`)
"""
