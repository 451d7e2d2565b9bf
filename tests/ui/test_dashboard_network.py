"""The dashboard's analysis of several hops (``diag.ui.app.analyse``) corroborates them across the network as
``diag.pipeline.analyze_files`` does (posterior attribution): the same causes, confidences, network columns and
outage by cause, hop for hop, on the invented demo network.  A check that the two roads meet, not of the term."""
from __future__ import annotations

import warnings

import pandas as pd
import pytest

from diag.config import AnalysisConfig
from diag.errors import DataWarning
from diag.links import read_links_table
from diag.pipeline import analyze_files

POSTERIOR = AnalysisConfig(attribution="posterior")


@pytest.mark.slow
def test_several_hops_are_corroborated_as_analyze_files_does():
    from diag.ui import app

    sources, links_text = app.demo_sources()
    if not sources:
        pytest.skip("the demo network (demo_logs/) is not installed")
    links = read_links_table("links.csv", text=links_text)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DataWarning)
        _, got = app.analyse(sources, links, "", None, config=POSTERIOR)
        want = analyze_files(list(sources), links=links, config=POSTERIOR)
        _, rules = app.analyse(sources, links, "", None)   # the page's own call: the library default
    assert [r.link.link_id for r in got] == [r.link.link_id for r in want]
    corroborated = 0
    for g, w in zip(got, want):
        assert "network_share" in g.events, g.link.link_id
        columns = ["cause", "confidence", "evidence", "network_share", "network_hops"]
        pd.testing.assert_frame_equal(g.events[columns], w.events[columns])
        pd.testing.assert_frame_equal(g.outage.by_cause, w.outage.by_cause)
        corroborated += int((g.events["network_hops"] > 0).sum())
    assert corroborated > 0
    default = AnalysisConfig().attribution
    assert all(("network_share" in r.events) == (default == "posterior") for r in rules)
