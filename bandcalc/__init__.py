"""bandcalc: design comparator stages with hysteresis."""

__version__ = "0.1.0"
