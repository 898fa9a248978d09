"""Standard resistor values for wanted switching points: exact solution, grid search, candidate selection."""
