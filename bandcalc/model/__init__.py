"""The model: a design, its parts, and the one network solution that places its switching points.

Start at ``design`` (the frozen record a user edits), ``design_file`` (its JSON), ``parts``
(every part by its design-file path), ``network`` (the summing-node solution) and ``points``
(the switching points in the design's own unit, through any front end); ``operating`` analyses
one design, with ``range_checks`` over the whole range its input reaches.
"""
