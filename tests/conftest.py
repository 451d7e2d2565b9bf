"""Shared pytest setup: hypothesis profiles, and the shared simulated hop (``hops``, ``simulated_hop``).

``HYPOTHESIS_PROFILE=ci`` (the default) keeps property tests bounded so the whole suite runs in minutes on two cores;
``HYPOTHESIS_PROFILE=deep`` runs many more examples locally.  A test that passes its own ``settings(max_examples=...)``
keeps that number; the profile sets it for the tests that do not (tests/analysis/test_fuzz_analysis.py).
"""
from __future__ import annotations

import os

import pytest
from hypothesis import HealthCheck, settings

settings.register_profile("ci", max_examples=30, deadline=None,
                          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
settings.register_profile("deep", max_examples=2000, deadline=None,
                          suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "ci"))


# ---------------------------------------------------------------------------------------------------------------
# A simulated hop, shared.  Simulating and analysing a hop costs ~0.1-1 s; many modules need one, often the same
# one.  ``hops`` is a session-wide factory with a cache keyed by (spec, seed); ``simulated_hop`` is one hop for a
# module, chosen by indirect parametrisation (a built-in scenario name or a LinkSpec, and a seed).  The simulator
# is the demo's data source, never proof of correctness by itself: tests compare what the stages make of it with
# its ground truth or with an outside source.
# ---------------------------------------------------------------------------------------------------------------
class HopFactory:
    """Cached simulated hops.  ``sim`` and ``analysed`` results are shared between tests: do not mutate them;
    ``truth`` builds a fresh LinkResult (from the simulator's ground truth) on every call, so it may be changed."""

    def __init__(self):
        self._sims: dict = {}
        self._results: dict = {}

    @staticmethod
    def spec(spec_or_scenario, link: int = 0):
        """A LinkSpec, or the ``link``-th link of a built-in scenario (by name) or scenario file."""
        from diag.sim.scenarios import load_scenario
        from diag.sim.simulate import LinkSpec

        if isinstance(spec_or_scenario, LinkSpec):
            return spec_or_scenario
        return load_scenario(spec_or_scenario).links[link]

    def sim(self, spec_or_scenario, seed: int = 0, link: int = 0):
        """diag.sim.simulate.simulate_link(spec, seed=seed), cached."""
        from diag.sim.simulate import simulate_link

        spec = self.spec(spec_or_scenario, link)
        key = (repr(spec), seed)
        if key not in self._sims:
            self._sims[key] = simulate_link(spec, seed=seed)
        return self._sims[key]

    def analysed(self, spec_or_scenario, seed: int = 0, link: int = 0, config=None):
        """(sim, diag.pipeline.analyze_link(sim.table, sim.link, config=config)), both cached."""
        from diag.pipeline import analyze_link

        sim = self.sim(spec_or_scenario, seed, link)
        key = (repr(sim.spec), seed, repr(config))
        if key not in self._results:
            self._results[key] = analyze_link(sim.table, sim.link, config=config)
        return sim, self._results[key]

    def truth(self, spec_or_scenario, seed: int = 0, link: int = 0):
        """A fresh LinkResult built from the simulator's truth (tests/_stats_support.truth_result)."""
        from tests._stats_support import truth_result

        return truth_result(self.sim(spec_or_scenario, seed, link))


@pytest.fixture(scope="session")
def hops() -> HopFactory:
    """Session-wide factory of simulated hops: ``hops.sim(spec, seed)``, ``hops.analysed(spec, seed)``,
    ``hops.truth(spec, seed)``; ``spec`` is a LinkSpec or a built-in scenario name."""
    return HopFactory()


@pytest.fixture(scope="module")
def simulated_hop(request, hops):
    """(sim, analysed result) of one hop: ``(spec_or_name, seed)`` from indirect parametrisation
    (``@pytest.mark.parametrize("simulated_hop", [(spec, seed)], indirect=True)``), else from the module's
    ``SIMULATED_HOP``, else the built-in "quick" scenario's first link with seed 1."""
    spec, seed = getattr(request, "param", None) or getattr(request.module, "SIMULATED_HOP", ("quick", 1))
    return hops.analysed(spec, seed)
