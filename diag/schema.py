"""Names shared by every stage: the normalised table, the event table and the cause vocabulary.

The normalised table (what the reader returns, what the analysis consumes) is a long pandas DataFrame, one row per
value, sorted by ``link_id, channel, quantity, stat, time_utc``:

=============  ======================================  ==============================================================
column         dtype                                   meaning
=============  ======================================  ==============================================================
time_utc       datetime64[ns, UTC]                     sample time, or the START of the statistics interval
link_id        str                                     hop identifier ("" never; the reader fills a default)
channel        str                                     polarisation or direction ("H", "V", "A-B", "ch1" ...)
quantity       str (QUANTITIES)                        what was measured
stat           str (STATS)                             instantaneous sample, or interval min / avg / max
interval_s     float64                                 statistics interval length in s (0.0 for samples)
value          float64                                 the number; NaN when status is not "ok"
status         str (STATUSES)                          "ok", "signal_lost" (receiver at its floor / LOS), "missing"
=============  ======================================  ==============================================================

A stretch with no rows at all is "no data" (a gap), which is never an outage.  A row with status "signal_lost"
is a real observation that the receiver had no usable signal (it counts as below threshold).  A row with status
"missing" was present in the file but held no value (blank, N/A): it counts as no data.
"""
from __future__ import annotations

# --- normalised table -------------------------------------------------------------------------------------------
TIME = "time_utc"
LINK = "link_id"
CHANNEL = "channel"
QUANTITY = "quantity"
STAT = "stat"
INTERVAL = "interval_s"
VALUE = "value"
STATUS = "status"
COLUMNS = [TIME, LINK, CHANNEL, QUANTITY, STAT, INTERVAL, VALUE, STATUS]

RSL = "rsl_dbm"        # receive level
TSL = "tsl_dbm"        # transmit level (ATPC)
XPD = "xpd_db"         # cross-polar discrimination
XPL = "xpl_dbm"        # cross-polar receive level (XPD = co-pol RSL - cross-pol level)
ES = "es_count"        # errored seconds counted by the radio in the row's interval
SES = "ses_count"      # severely errored seconds counted by the radio
UAS = "uas_count"      # unavailable seconds counted by the radio
QUANTITIES = (RSL, TSL, XPD, XPL, ES, SES, UAS)

SAMPLE, MIN, AVG, MAX = "sample", "min", "avg", "max"
STATS = (SAMPLE, MIN, AVG, MAX)

OK, SIGNAL_LOST, MISSING = "ok", "signal_lost", "missing"
STATUSES = (OK, SIGNAL_LOST, MISSING)

DEFAULT_LINK_ID = "link"

# --- causes -----------------------------------------------------------------------------------------------------
RAIN, MULTIPATH, REFRACTIVE, LEVEL_SHIFT, SIGNAL_LOSS, UNKNOWN = (
    "rain", "multipath", "refractive", "level_shift", "signal_loss", "unknown")
CAUSES = (RAIN, MULTIPATH, REFRACTIVE, LEVEL_SHIFT, SIGNAL_LOSS, UNKNOWN)
NO_DATA = "no data"   # a gap: reported apart, never an outage

# --- output tables (column order is part of the contract, see DEVELOPERS.md) ------------------------------------
EVENT_COLUMNS = ["link_id", "channel", "start_utc", "end_utc", "duration_s", "peak_fade_db", "cause",
                 "confidence", "evidence"]
OUTAGE_SUMMARY_COLUMNS = ["link_id", "period_start_utc", "period_end_utc", "observed_s", "no_data_s",
                          "below_threshold_s", "unavailable_s", "ses_available_s", "availability_pct",
                          "objective_pct", "meets_objective"]
OUTAGE_BY_CAUSE_COLUMNS = ["link_id", "cause", "events", "below_threshold_s", "unavailable_s"]


def empty_table():
    """An empty normalised table with the right dtypes."""
    import pandas as pd

    return pd.DataFrame({
        TIME: pd.Series([], dtype="datetime64[ns, UTC]"),
        LINK: pd.Series([], dtype="str"),
        CHANNEL: pd.Series([], dtype="str"),
        QUANTITY: pd.Series([], dtype="str"),
        STAT: pd.Series([], dtype="str"),
        INTERVAL: pd.Series([], dtype="float64"),
        VALUE: pd.Series([], dtype="float64"),
        STATUS: pd.Series([], dtype="str"),
    })
