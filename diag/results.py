"""Result types passed between stages (dataclasses; units in the field names).

``ChannelSteps``   the steps of one channel's clear-sky level, detected once (filled by ``diag.analysis.steps``).
``ChannelSeries``  one channel of one hop on a regular time grid, after the clear-sky reference is removed.
``LinkResult``     everything the analysis found for one hop; the report writers, the dashboard and ``batch`` read it.
``OutageResult``   the error-performance accounting of one hop (filled by ``diag.analysis.outage``).
"""
from __future__ import annotations

from dataclasses import dataclass, field

import pandas as pd

from diag.links import Link

# status values on the regular grid: the normalised statuses plus "no_data" for grid points with no row
GRID_NO_DATA = "no_data"


@dataclass
class ChannelSteps:
    """Steps of one channel's clear-sky level (:class:`diag.analysis.steps.Step` lists), found by one call,
    :func:`diag.analysis.steps.channel_steps`, in the reference stage and read by the later stages.

    Two sizes are kept because the two uses differ (both thresholds come from ``diag.config.AnalysisConfig``):
    ``reference`` (from ``step_min_db``, on the level of :func:`diag.analysis.steps.path_level`; for 15-min
    statistics the starts/ends of fading episodes left out) cuts the reference and makes the level-shift events;
    ``reported`` (from ``level_change_min_db``, on :func:`diag.analysis.steps.path_level_dbm`) is the list of level
    changes reported.  ``reported_error``: the exception the second detection raised (reported by the
    level-change stage, which then fails as it would have on its own).
    """

    reference: list
    reported: list | None
    reported_min_db: float
    reported_error: BaseException | None = None


@dataclass
class ChannelSeries:
    """One channel on a regular grid of step ``interval_s`` from its first to its last row.

    ``frame`` is indexed by ``time_utc`` (UTC, regular; a grid point with no input row has status "no_data") and has
    columns:
      - ``rsl_dbm``          receive level (for statistics logs: the interval average), NaN unless status is "ok"
      - ``rsl_min_dbm``, ``rsl_max_dbm``   only for statistics logs (kind == "stats")
      - ``status``           "ok", "signal_lost", "missing", "no_data"
      - ``reference_dbm``    clear-sky reference level
      - ``attenuation_db``   reference - level (TSL changes removed when ATPC is logged); positive = fade
      - ``event_id``         index into ``LinkResult.events`` of the fade covering the point, -1 when none
      - ``cause``            cause of that event ("" when none)
    Extra columns (``tsl_dbm``, ``xpd_db`` ...) may be present when logged.
    """

    link_id: str
    channel: str
    interval_s: float
    kind: str  # "sample" (instantaneous samples) or "stats" (interval min/avg/max)
    frame: pd.DataFrame
    steps: ChannelSteps | None = None   # set by the reference stage (diag.analysis.reference.add_reference)


@dataclass
class OutageResult:
    """Error-performance accounting of one hop over the analysed period (ITU-T G.826 style, from levels)."""

    summary: dict                      # one row of OUTAGE_SUMMARY_COLUMNS, plus bounds/method fields
    by_cause: pd.DataFrame             # OUTAGE_BY_CAUSE_COLUMNS, adds up to the summary
    per_channel: pd.DataFrame          # the same figures per channel
    notes: list[str] = field(default_factory=list)   # method, caveats (bounds for coarse logs, annual scaling)


@dataclass
class LinkResult:
    """All findings for one hop."""

    link: Link
    series: dict[str, ChannelSeries]                  # by channel
    events: pd.DataFrame                               # EVENT_COLUMNS first, then feature columns
    statistics: dict = field(default_factory=dict)     # JSON-able: exceedance, K-factor, LCR/AFD, rain vs P.530
    cross_polar: dict = field(default_factory=dict)    # JSON-able: XPD, tilt, U-V fit, H/V imbalance
    level_changes: dict = field(default_factory=dict)  # JSON-able: steps and drift
    findings: list[dict] = field(default_factory=list) # ranked; each {title, detail, numbers, actions, cautions}
    skipped: list[str] = field(default_factory=list)   # checks skipped and why
    ingest: dict = field(default_factory=dict)         # reader report(s) for the files of this hop
    outage: OutageResult | None = None
    error: str | None = None                           # set when this hop could not be analysed (batch)
