"""Shared test configuration."""

import os

from hypothesis import settings

# Property tests: enough examples to find edge cases, bounded for CI's 2 cores.
settings.register_profile("snrkit", max_examples=60, deadline=None)
settings.load_profile(os.environ.get("SNRKIT_HYPOTHESIS_PROFILE", "snrkit"))
