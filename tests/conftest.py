"""Test configuration: reproducible property and fuzz tests.

Hypothesis draws the same examples on every run (``derandomize``), so a CI
result can be reproduced exactly; run with ``--hypothesis-seed`` or set
``HYPOTHESIS_PROFILE=explore`` to search afresh.
"""

import os

from hypothesis import settings

settings.register_profile("ci", derandomize=True, print_blob=True)
settings.register_profile("explore", derandomize=False, print_blob=True)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci"))
