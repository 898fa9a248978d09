"""The design sheet as a script for Streamlit, run from the installed package by ``bandcalc page``.

``app.py`` does the same from a checkout (``streamlit run app.py``).
"""

from bandcalc.page.sheet import main

if __name__ == "__main__":  # Streamlit runs the script as __main__; importing it draws nothing
    main()
