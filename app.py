"""bandcalc's browser design sheet: ``streamlit run app.py``.

For now the page shows the analysis of the built-in demo designs; the full sheet is its own issue.
"""

from pathlib import Path

import streamlit as st

from bandcalc.analysis import analyze
from bandcalc.design import DesignError, load_design
from bandcalc.units import format_si

DEMOS = {p.stem.replace("_", " "): p for p in sorted((Path(__file__).parent / "demo_data").glob("*.json"))}

st.set_page_config(page_title="bandcalc", layout="wide")
st.title("bandcalc")
choice = st.selectbox("Demo design", list(DEMOS), index=list(DEMOS).index("sump level switch"))
try:
    result = analyze(load_design(DEMOS[choice]))
except DesignError as exc:
    st.error(str(exc))
    st.stop()
cols = st.columns(4)
for col, (label, volts) in zip(cols, [("Upper point", result.upper), ("Lower point", result.lower),
                                       ("Hysteresis", result.hysteresis), ("Centre", result.centre)],
                               strict=True):
    col.metric(label, format_si(volts, "V", 4))
for line in result.findings:
    st.warning(line)
for line in result.cautions:
    st.error(line)
