"""What bandcalc hands over: the Markdown design summary, Plotly figures and the SVG schematic."""
