"""The command line, ``python -m bandcalc COMMAND`` or ``bandcalc COMMAND``."""
