"""Test support: a hand-written 15-min min/max export of one channel, analysed by the whole pipeline.

The rows are written as the generic CSV the reader accepts (``time_utc, link_id, channel`` and the interval minimum
and maximum, no average); the values are invented by each test.
"""
from __future__ import annotations

import pandas as pd

from diag.links import Link
from diag.pipeline import analyze_files


def analysed_minmax(tmp_path, link: Link, rows, *, start: pd.Timestamp, channel: str = "V") -> pd.DataFrame:
    """Write ``rows`` ((minimum, maximum) per 15-min interval from ``start``; a minimum may be a status word such as
    ``LOS``) as a min/max export of ``link``, analyse it, and return the channel's analysed frame."""
    lines = ["time_utc,link_id,channel,RSL min 15min (dBm),RSL max 15min (dBm)"]
    for k, (lo, hi) in enumerate(rows):
        t = start + pd.Timedelta(minutes=15 * k)
        lines.append(f"{t:%Y-%m-%dT%H:%M:%SZ},{link.link_id},{channel},{lo},{hi}")
    path = tmp_path / f"{link.link_id}.csv"
    path.write_text("\n".join(lines) + "\n")
    result = analyze_files([path], links=[link])[0]
    assert result.error is None
    return next(iter(result.series.values())).frame
