"""The bare page that ``bench_browser.py`` measures bandcalc's page against: one slider and one
Plotly chart that follows it, and nothing else.  Started the same way as the design sheet.

With ``BARE_PAGE_ELEMENTS=N`` in the environment it also draws N plain elements in the sidebar
(text boxes and captions, in turn) that never change: what Streamlit's rerun of N more elements
costs, measured the same way.  With ``BARE_PAGE_FRAGMENT=1`` as well, the slider and the chart
are a fragment of their own, so a slider move reruns just them, as bandcalc's slider moves rerun
only the parts that follow the design: what N more elements cost when they are not rerun.
"""

import os

import numpy as np
import plotly.graph_objects as go
import streamlit as st

st.set_page_config(page_title="bare page", layout="wide")


def slider_and_chart() -> None:
    with st.sidebar:
        gain = st.select_slider("Gain", options=[round(0.1 * i, 1) for i in range(1, 101)], value=3.9)
    x = np.linspace(-5.0, 5.0, 401)
    figure = go.Figure(go.Scatter(x=x, y=np.tanh(gain * x), mode="lines", name="output"))
    figure.update_layout(height=420, margin={"l": 40, "r": 20, "t": 30, "b": 40})
    st.plotly_chart(figure, config={"displaylogo": False})


(st.fragment(slider_and_chart) if os.environ.get("BARE_PAGE_FRAGMENT") == "1" else slider_and_chart)()
with st.sidebar:
    for i in range(int(os.environ.get("BARE_PAGE_ELEMENTS", "0"))):
        if i % 2 == 0:
            st.text_input(f"Box {i // 2 + 1}", value=str(i // 2 + 1))
        else:
            st.caption(f"About box {i // 2 + 1}")
