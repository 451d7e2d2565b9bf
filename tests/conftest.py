"""Shared pytest setup: hypothesis profiles only (owner: HARDENING, see the README section "limits").

``HYPOTHESIS_PROFILE=ci`` (the default) keeps property tests bounded so the whole suite runs in minutes on two cores;
``HYPOTHESIS_PROFILE=deep`` runs many more examples locally.  A test that passes its own ``settings(max_examples=...)``
keeps that number; the profile sets it for the tests that do not (tests/test_fuzz_analysis.py).
"""
from __future__ import annotations

import os

from hypothesis import HealthCheck, settings

settings.register_profile("ci", max_examples=30, deadline=None,
                          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
settings.register_profile("deep", max_examples=2000, deadline=None,
                          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci"))
