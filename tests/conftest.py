"""Test-suite settings: the hypothesis profiles.

In CI (the environment variable CI is set) every property test runs
derandomised, so a run cannot pass or fail by chance; locally the default
profile draws new cases each run, where it finds new bugs.
"""

import os

from hypothesis import settings

settings.register_profile("ci", derandomize=True, print_blob=True)
settings.register_profile("dev", print_blob=True)
settings.load_profile("ci" if os.environ.get("CI") else "dev")
