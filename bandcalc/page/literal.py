"""Text from users shown on the page as the text it is.

Streamlit draws nearly every string as Markdown: titles, captions, messages, metric values, widget
labels, help and radio options, table cells.  A design's name, its watched unit, a file name, a key
or a value echoed in a message all come from whoever wrote the design or the address, and could
otherwise draw a remote image, a link dressed as the page's own, or a formula.  Every such text
goes through :func:`literal` where the page composes what it draws: the page's own sentences
around it keep their Markdown.

Messages queued with :func:`bandcalc.page.state.say` are escaped once, when shown: compose them
from the raw text.  Chart text is Plotly's, not Markdown; ``outputs/plots.py`` escapes its own.
"""

from __future__ import annotations

from bandcalc.outputs.summary import escape_text

__all__ = ["literal"]


def literal(text: object) -> str:
    """``text`` escaped so that Streamlit draws it as it is: CommonMark markup and HTML (as the
    design summary escapes user text), and the dollar signs Streamlit reads as LaTeX."""
    return escape_text(str(text)).replace("$", r"\$")
