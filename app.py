"""bandcalc's browser design sheet: ``streamlit run app.py``.

The page lives in ``bandcalc/page/``; this file only starts it.
"""

from bandcalc.page.sheet import main

main()
