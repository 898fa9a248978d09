"""Shared test settings.

Hypothesis profiles: "ci" (chosen when the CI variable is set) draws the same examples on
every run, so a landing never hangs on a newly drawn case; "thorough" draws ten times more
for a local shake-out: ``HYPOTHESIS_PROFILE=thorough python -m pytest``.
"""

import os
import sys
from pathlib import Path

from hypothesis import settings

sys.path.insert(0, str(Path(__file__).parent))  # test helpers such as circuit_reference

settings.register_profile("ci", derandomize=True, print_blob=True)
settings.register_profile("thorough", max_examples=1000)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci" if os.environ.get("CI") else "default"))
