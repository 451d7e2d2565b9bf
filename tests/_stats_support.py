"""Test support for the STATS tests: a LinkResult built from a simulated hop's ground truth.

The attenuation, cause and event of every sample come from diag.sim.simulate's truth (not from the diagnosis stages),
so the statistics modules are tested on their own.
"""
import numpy as np
import pandas as pd

from diag import schema as S
from diag.results import ChannelSeries, LinkResult


def truth_result(sim, *, link=None) -> LinkResult:
    table, truth = sim.table, sim.truth_samples
    series = {}
    events = []
    for ch in sorted(table[S.CHANNEL].unique()):
        rows = table[table[S.CHANNEL] == ch]
        wide = {}
        status = None
        for q, part in rows.groupby(S.QUANTITY):
            part = part.set_index(S.TIME)
            wide[q] = part[S.VALUE]
            if q == S.RSL:
                status = part[S.STATUS]
        frame = pd.DataFrame(wide)
        frame["status"] = status
        tr = truth[truth["channel"] == ch].set_index("time_utc")
        step = pd.Timedelta(seconds=sim.spec.interval_s)
        grid = pd.date_range(tr.index[0], tr.index[-1], freq=step, tz="UTC", name=S.TIME)
        frame = frame.reindex(grid)
        frame["status"] = frame["status"].astype(object).where(frame["status"].notna(), "no_data").astype("str")
        tr = tr.reindex(grid)
        frame["attenuation_db"] = tr["total_fade_db"].where(frame["status"].isin([S.OK, S.SIGNAL_LOST]))
        frame["reference_dbm"] = frame[S.RSL] + frame["attenuation_db"]
        frame["reference_dbm"] = frame["reference_dbm"].median()
        cause = tr["cause"].fillna("").astype(object).to_numpy()
        # contiguous runs of one cause are events
        eid = np.full(len(cause), -1)
        start = None
        for i in range(len(cause) + 1):
            c = cause[i] if i < len(cause) else ""
            if start is not None and (i == len(cause) or c != cause[start]):
                events.append({"link_id": sim.link.link_id, "channel": ch, "start_utc": grid[start],
                               "end_utc": grid[i - 1] + step, "duration_s": (i - start) * sim.spec.interval_s,
                               "peak_fade_db": float(np.nanmax(frame["attenuation_db"].to_numpy()[start:i])),
                               "cause": cause[start], "confidence": 1.0, "evidence": "truth"})
                eid[start:i] = len(events) - 1
                start = None
            if i < len(cause) and c != "" and start is None:
                start = i
        frame["event_id"] = eid
        frame["cause"] = pd.array(cause, dtype="str")
        series[ch] = ChannelSeries(link_id=sim.link.link_id, channel=ch, interval_s=sim.spec.interval_s,
                                   kind="sample", frame=frame)
    ev = pd.DataFrame(events, columns=S.EVENT_COLUMNS)
    return LinkResult(link=link or sim.link, series=series, events=ev)
