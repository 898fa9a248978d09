"""The script Streamlit runs for ``bandcalc page``, alone in its folder.

Streamlit puts the folder of the script it runs at the front of ``sys.path``; this folder holds
nothing else, so no module of the page becomes importable under a bare top-level name.
"""
