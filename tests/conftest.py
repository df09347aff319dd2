"""Hypothesis profiles for the whole suite (no Django here: tests/hazards runs without it).

Locally, every run explores new examples. CI sets HYPOTHESIS_PROFILE=ci, which derandomises
the search, so that a submission's result does not depend on the draw of the day; failures
found locally are kept in .hypothesis/ and replayed first.
"""
from __future__ import annotations

import os

from hypothesis import settings

settings.register_profile("ci", derandomize=True, print_blob=True)
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "default"))
