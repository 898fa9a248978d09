"""Spread of the switching points over tolerances and temperature: worst case, Monte Carlo, sensitivity."""
