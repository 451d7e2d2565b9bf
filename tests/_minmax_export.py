"""Test support: hand-written 15-min min/max exports of one channel, analysed by the whole pipeline.

The rows are written as the generic CSV the reader accepts (``time_utc, link_id, channel`` and the interval minimum
and maximum, no average); the values are invented by each test.
"""
from __future__ import annotations

from pathlib import Path

import pandas as pd

from diag.links import Link
from diag.pipeline import analyze_files


def write_minmax(tmp_path, link: Link, rows, *, start: pd.Timestamp, channel: str = "V") -> Path:
    """Write ``rows`` ((minimum, maximum) per 15-min interval from ``start``; a minimum may be a status word such as
    ``LOS``) as a min/max export of ``link`` named after it; returns its path."""
    lines = ["time_utc,link_id,channel,RSL min 15min (dBm),RSL max 15min (dBm)"]
    for k, (lo, hi) in enumerate(rows):
        t = start + pd.Timedelta(minutes=15 * k)
        lines.append(f"{t:%Y-%m-%dT%H:%M:%SZ},{link.link_id},{channel},{lo},{hi}")
    path = tmp_path / f"{link.link_id}.csv"
    path.write_text("\n".join(lines) + "\n")
    return path


def assert_mostly(causes: list[str], cause: str) -> None:
    """All of ``causes`` but at most one (an edge interval) are ``cause``."""
    assert causes.count(cause) >= len(causes) - 1, causes


def analysed_minmax(tmp_path, link: Link, rows, *, start: pd.Timestamp, channel: str = "V") -> pd.DataFrame:
    """:func:`write_minmax`, analysed alone; returns the channel's analysed frame."""
    path = write_minmax(tmp_path, link, rows, start=start, channel=channel)
    result = analyze_files([path], links=[link])[0]
    assert result.error is None
    return next(iter(result.series.values())).frame
