"""Shared test settings. Hypothesis keeps its example database out of the work tree."""

import os

from hypothesis import settings

settings.register_profile("earshot", database=None, print_blob=True)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "earshot"))
