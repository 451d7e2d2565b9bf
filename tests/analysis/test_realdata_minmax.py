"""The real OpenRainER excerpt (tests/data/openrainer, CC BY 4.0, see test_realdata.py) seen as a radio's 15-min
min/max export: the bench's conversion (bench/validation/realdata.interval_minmax) checked against pandas' own
resampling of the same 1-min samples, and the analysis of the converted log still naming the storm of 17-21 Aug
2022 (rain days in the data set's notes; gauge within 2.2 km) on a rain link rain (interval statistics lose the
fine-sample terms, so the bar is lower than at 1 min)."""
from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from diag import schema as S
from diag.pipeline import analyze_link

sys.path.insert(0, str(Path(__file__).resolve().parents[2] / "bench" / "validation"))
sys.path.insert(0, str(Path(__file__).resolve().parent))

import realdata  # noqa: E402
from test_realdata import DATA, load_link  # noqa: E402

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def link_347():
    return load_link(DATA, 347)


def test_minmax_matches_pandas_resampling(link_347):
    table = link_347[0]
    mm = realdata.interval_minmax(table, 900)
    for channel in sorted(set(table[S.CHANNEL].astype(str))):
        rows = table[(table[S.CHANNEL].astype(str) == channel) & (table[S.QUANTITY] == S.RSL)]
        ok = rows[S.VALUE].where(rows[S.STATUS].astype(str) == S.OK)
        series = pd.Series(ok.to_numpy(), index=pd.DatetimeIndex(rows[S.TIME]))
        for stat, expected in (("min", series.resample("15min").min()), ("max", series.resample("15min").max())):
            got = mm[(mm[S.CHANNEL].astype(str) == channel) & (mm[S.QUANTITY] == S.RSL)
                     & (mm[S.STAT] == getattr(S, stat.upper()))].set_index(S.TIME)[S.VALUE]
            expected = expected.dropna()
            common = got.dropna().index.intersection(expected.index)
            assert len(common) >= 0.95 * len(expected)
            np.testing.assert_array_equal(got.loc[common].to_numpy(), expected.loc[common].to_numpy())
    # a min/max export holds no average, and the transmit level only as its interval maximum
    assert not (mm[S.STAT] == S.AVG).any()
    assert set(mm.loc[mm[S.QUANTITY] == S.TSL, S.STAT].astype(str)) <= {S.MAX}
    assert (mm[S.INTERVAL] == 900.0).all()


def test_storm_seen_in_minmax_is_rain(link_347):
    table, link, gauge = link_347[:3]
    result = analyze_link(realdata.interval_minmax(table, 900), link)
    assert {s.kind for s in result.series.values()} == {"stats"}
    events = result.events
    storm = events[(events["start_utc"] >= pd.Timestamp("2022-08-17T00:00:00Z"))
                   & (events["peak_fade_db"] >= 10.0)]
    assert len(storm)
    minutes = storm["duration_s"].to_numpy()
    rain_share = minutes[storm["cause"].to_numpy() == "rain"].sum() / minutes.sum()
    print(f"link 347 as 15-min min/max: {len(storm)} fades of 10 dB or more, {rain_share:.0%} of their time rain")
    assert rain_share >= 0.8
