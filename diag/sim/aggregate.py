"""Interval statistics logs (min / avg / max per interval, with the radio's interval counters) made from a table
of samples, as a radio's 15-min performance log would report them.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from diag import schema


def _utc(ns: np.ndarray):
    return pd.DatetimeIndex(np.asarray(ns, dtype="datetime64[ns]")).tz_localize("UTC")


def aggregate_statistics(
    table: pd.DataFrame,
    *,
    interval_s: float = 900.0,
    floor_dbm: float = -99.0,
    threshold_dbm: float | None = None,
) -> pd.DataFrame:
    """Interval min / avg / max rows (normalised table, ``stat`` min/avg/max) from a table of samples.

    With ``threshold_dbm`` the radio's interval counters are added per channel, as level-based stand-ins
    for its error counts: ``ses_count`` = available seconds with the level below the threshold or lost, and
    ``uas_count`` = unavailable seconds by the ITU-T G.826 rule (10 consecutive SES; via
    :func:`diag.models.g826.unavailable_mask`); rows with ``stat`` "sample" and ``interval_s`` = the interval.

    The radio sees its floor value while the signal is lost, so lost samples enter the statistics at
    ``floor_dbm``: ``min`` is "signal_lost" when any sample of the interval was lost, ``avg``/``max``
    only when all were.  Rows with status "missing" are left out; an interval with no usable row gives
    status "missing".  Intervals start at multiples of ``interval_s`` since 1970-01-01 UTC; an interval
    with no rows at all gives no row (a gap).
    """
    if table.empty:
        return schema.empty_table()
    width_ns = int(round(interval_s * 1e9))
    t_ns = table[schema.TIME].to_numpy(dtype="datetime64[ns]").view(np.int64)
    status = table[schema.STATUS].to_numpy(dtype=object)
    value = table[schema.VALUE].to_numpy(dtype=float)
    is_lost = status == schema.SIGNAL_LOST
    usable = status != schema.MISSING
    codes, labels = {}, {}
    for name in (schema.LINK, schema.CHANNEL, schema.QUANTITY):
        codes[name], labels[name] = pd.factorize(table[name], sort=True)  # integer keys: fast grouping
    frame = pd.DataFrame(
        {
            "link": codes[schema.LINK],
            "channel": codes[schema.CHANNEL],
            "quantity": codes[schema.QUANTITY],
            "bin": t_ns // width_ns,
            "v": np.where(usable, np.where(is_lost, floor_dbm, value), np.nan),
            "lost": is_lost.astype(np.int32),
            "usable": usable.astype(np.int32),
        }
    )
    grouped = frame.groupby(["link", "channel", "quantity", "bin"], sort=True)
    agg = grouped.agg(
        vmin=("v", "min"),
        vavg=("v", "mean"),
        vmax=("v", "max"),
        lost=("lost", "sum"),
        usable=("usable", "sum"),
    ).reset_index()
    for name, key in ((schema.LINK, "link"), (schema.CHANNEL, "channel"), (schema.QUANTITY, "quantity")):
        agg[key] = np.asarray(labels[name], dtype=object)[agg[key].to_numpy()]
    rows = []
    for stat_name, column in ((schema.AVG, "vavg"), (schema.MAX, "vmax"), (schema.MIN, "vmin")):
        if stat_name == schema.MIN:
            lost_row = agg["lost"] > 0
        else:
            lost_row = (agg["lost"] == agg["usable"]) & (agg["usable"] > 0)
        missing_row = agg["usable"] == 0
        status_out = np.where(missing_row, schema.MISSING, np.where(lost_row, schema.SIGNAL_LOST, schema.OK))
        values = np.where(status_out == schema.OK, agg[column].to_numpy(dtype=float), np.nan)
        rows.append(
            pd.DataFrame(
                {
                    schema.TIME: _utc(agg["bin"].to_numpy(dtype=np.int64) * width_ns),
                    schema.LINK: agg["link"].to_numpy(dtype=object),
                    schema.CHANNEL: agg["channel"].to_numpy(dtype=object),
                    schema.QUANTITY: agg["quantity"].to_numpy(dtype=object),
                    schema.STAT: stat_name,
                    schema.INTERVAL: float(interval_s),
                    schema.VALUE: np.round(values, 2),
                    schema.STATUS: status_out,
                }
            )
        )
    if threshold_dbm is not None:
        rows.extend(_counter_rows(table, interval_s=interval_s, threshold_dbm=threshold_dbm))
    out = pd.concat(rows, ignore_index=True)
    for name in (schema.LINK, schema.CHANNEL, schema.QUANTITY, schema.STAT, schema.STATUS):
        out[name] = out[name].astype("str")
    out = out.sort_values(
        [schema.LINK, schema.CHANNEL, schema.QUANTITY, schema.STAT, schema.TIME],
        kind="stable",
        ignore_index=True,
    )
    return schema.conform(out[schema.COLUMNS])   # categorical key columns (diag.schema)


def _counter_rows(table: pd.DataFrame, *, interval_s: float, threshold_dbm: float) -> list[pd.DataFrame]:
    """SES and UAS counts per interval and channel from RSL samples (see :func:`aggregate_statistics`)."""
    from diag.models import g826

    width_ns = int(round(interval_s * 1e9))
    rsl = table[(table[schema.QUANTITY] == schema.RSL) & (table[schema.STAT] == schema.SAMPLE)]
    out = []
    for (link_id, channel), part in rsl.groupby([schema.LINK, schema.CHANNEL], sort=True):
        t_ns = part[schema.TIME].to_numpy(dtype="datetime64[ns]").view(np.int64)
        if len(t_ns) < 2:
            continue
        step = int(np.median(np.diff(np.unique(t_ns))))
        slot = (t_ns - t_ns.min()) // step
        n = int(slot.max()) + 1
        status = part[schema.STATUS].to_numpy(dtype=object)
        value = part[schema.VALUE].to_numpy(dtype=float)
        ses = np.zeros(n, dtype=bool)
        valid = np.zeros(n, dtype=bool)
        with np.errstate(invalid="ignore"):
            ses[slot] = (status == schema.SIGNAL_LOST) | ((status == schema.OK) & (value < threshold_dbm))
        valid[slot] = status != schema.MISSING
        unavailable = g826.unavailable_mask(ses, valid)
        grid_bin = (t_ns.min() + np.arange(n) * step) // width_ns
        first = grid_bin[0]
        bins = np.unique(t_ns // width_ns)
        counts = {
            schema.SES: np.bincount(grid_bin - first, weights=ses & valid & ~unavailable),
            schema.UAS: np.bincount(grid_bin - first, weights=unavailable),
        }
        for quantity, per_bin in counts.items():
            out.append(
                pd.DataFrame(
                    {
                        schema.TIME: _utc(bins * width_ns),
                        schema.LINK: link_id,
                        schema.CHANNEL: channel,
                        schema.QUANTITY: quantity,
                        schema.STAT: schema.SAMPLE,
                        schema.INTERVAL: float(interval_s),
                        schema.VALUE: per_bin[bins - first].astype(float),
                        schema.STATUS: schema.OK,
                    }
                )
            )
    return out
