"""Shared pytest configuration."""

from hypothesis import settings

# "ci" profile: enough examples to find edge cases, no per-example deadline (CI machines
# vary in speed). Select with HYPOTHESIS_PROFILE=ci or --hypothesis-profile=ci.
settings.register_profile("ci", max_examples=100, deadline=None)
settings.load_profile("ci")
