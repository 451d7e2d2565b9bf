"""Every word a person reads in diag's outputs, defined once.

The CSV and JSON files, the PDF, the dashboard, the network page and the command line take their labels from here,
so the same figure has the same name everywhere.  Machine values (the ``cause`` column, ``meets_objective``,
``main_cause``) are the short codes below; screens and the PDF show the matching label.

Two quantities are never mixed up:

* **Outage** is *unavailable time* as ITU-T G.826 (12/2002) / G.828 (03/2000) Annex A count it: it starts at the
  first of ten consecutive severely errored seconds (SES) and ends at the first of ten consecutive seconds without
  SES.  Every "outage" figure (PDF bars, dashboard, network ranking) is this one.
* **Time below threshold** is every second the receive level was under the receiver threshold (or the signal was
  lost), whether or not it was part of unavailable time.  A short dip below threshold is an SES in available time,
  not outage.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from diag import schema

__all__ = ["Term", "TERMS", "TRADE_TERMS", "CAUSE_LABELS", "CAUSE_CODES", "CAUSE_SHORT", "NO_OUTAGE",
           "UNDETERMINED", "VERDICTS", "VERDICT_LABELS", "OUTAGE", "BELOW_THRESHOLD", "MAIN_CAUSE",
           "NO_DATA_LABEL", "NOT_ANALYSED", "cause_label", "cause_code", "verdict_label", "main_cause_label",
           "label", "definition", "allowed_cause_values", "allowed_main_cause_values", "FIELD_LABELS",
           "field_label", "SAFETY_CAUTIONS", "SAFETY_SHORT", "LICENCE_CAUTION", "HEIGHT_CAUTION",
           "RF_CAUTION", "ELECTRICAL_CAUTION"]


@dataclass(frozen=True)
class Term:
    key: str
    label: str         # what a screen or the PDF prints
    definition: str    # one or two plain sentences


# --- the terms of the outage accounting ---------------------------------------------------------------------------
NO_OUTAGE = "no outage"          # main cause of a hop without unavailable time (machine value and label alike)
UNDETERMINED = "undetermined"    # an objective the bounds of coarse data cannot judge (never "unclear")
VERDICTS = ("yes", "no", UNDETERMINED)
VERDICT_LABELS = {"yes": "met", "no": "NOT met", UNDETERMINED: "undetermined", "": "no objective"}
NOT_ANALYSED = "not analysed"
NO_DATA_LABEL = "No data (gap)"

_TERM_LIST = [
    Term("outage", "Outage (unavailable time)",
         "Unavailable time as ITU-T G.826/G.828 Annex A count it: from the first of ten consecutive severely "
         "errored seconds to the first of ten consecutive seconds without one. Data gaps are never outage."),
    Term("below_threshold", "Time below threshold",
         "Every second the receive level was under the receiver threshold or the signal was lost, inside or "
         "outside unavailable time."),
    Term("ses_available", "SES in available time",
         "Severely errored seconds outside unavailable time (short dips that did not last ten seconds)."),
    Term("availability", "Availability",
         "100 % minus the outage share of the observed time (time with data)."),
    Term("objective", "Availability objective",
         "The share of time the hop must be available (links table), e.g. 99.99 %, which allows 52.6 min a year."),
    Term("meets_objective", "Objective met",
         "yes, no, or undetermined when the log is too coarse: the outage bounds straddle the objective."),
    Term("main_cause", "Main cause",
         "The cause with the most outage on the hop (upper bound where the log gives bounds); \"no outage\" "
         "when the hop had no unavailable time."),
    Term("no_outage", NO_OUTAGE, "The hop had no unavailable time in the period (it may still have had short "
         "dips below threshold)."),
    Term("undetermined", UNDETERMINED,
         "The outage bounds from coarse data lie on both sides of the objective, so it cannot be judged."),
    Term("no_data", NO_DATA_LABEL, "Time without readings: left out of the observed time, never outage."),
    Term("fade_event", "Fade event",
         "A stretch where the receive level fell at least 3 dB below its clear-sky reference, with its cause."),
    Term("peak_fade_db", "Deepest fade [dB]",
         "Deepest point of a fade event below the clear-sky reference; for 15-min statistics the interval "
         "minimum, so deeper than the fading figures, which use the interval averages."),
    Term("deepest_rain_fade_db", "Deepest rain fade in the interval averages [dB]",
         "Fading figures: the deepest rain attenuation of the interval averages (15-min statistics) or of the "
         "samples; the event table's deepest fade uses the interval minimum and is deeper."),
    Term("deepest_fade_db", "Deepest fade of these events [dB]",
         "Findings: the deepest point of the events of this cause, as in the event table."),
]
TERMS: dict[str, Term] = {t.key: t for t in _TERM_LIST}
OUTAGE = TERMS["outage"].label
BELOW_THRESHOLD = TERMS["below_threshold"].label
MAIN_CAUSE = TERMS["main_cause"].label

# --- causes: label and two-letter mark (timelines, black-and-white print) ----------------------------------------
CAUSE_LABELS = {
    schema.RAIN: "Rain",
    schema.MULTIPATH: "Clear-air multipath",
    schema.REFRACTIVE: "Slow refractive fading",
    schema.LEVEL_SHIFT: "Level shift / alignment",
    schema.SIGNAL_LOSS: "Equipment signal loss",
    schema.UNKNOWN: "Unknown cause",
    schema.NO_DATA: NO_DATA_LABEL,
}
CAUSE_CODES = {
    schema.RAIN: "RN",
    schema.MULTIPATH: "MP",
    schema.REFRACTIVE: "RF",
    schema.LEVEL_SHIFT: "LS",
    schema.SIGNAL_LOSS: "SL",
    schema.UNKNOWN: "UN",
    schema.NO_DATA: "ND",
}
# a shorter label where a table column is narrow (PDF headline); still one word per cause, never a synonym
CAUSE_SHORT = {
    schema.RAIN: "Rain",
    schema.MULTIPATH: "Multipath",
    schema.REFRACTIVE: "Refractive",
    schema.LEVEL_SHIFT: "Level shift",
    schema.SIGNAL_LOSS: "Signal loss",
    schema.UNKNOWN: "Unknown",
}

# --- trade terms used in the reports, explained once (the PDF prints them as its glossary page) -------------------
TRADE_TERMS = {
    "RSL": "Receive signal level [dBm], what the radio logs.",
    "Clear-sky level": "The receive level without fading: the upper quartile of 15-min medians over a day.",
    "Fade depth / attenuation": "How far the level is below the clear-sky level [dB].",
    "Receiver threshold": "The level below which the radio loses frames (errors); from the links table.",
    "Fade margin": "Clear-sky level minus receiver threshold [dB]: how much fading the hop can take.",
    "SES": "Severely errored second: a second with at least 30 % errored blocks (ITU-T G.826). Here a second below "
           "the receiver threshold is taken as an SES.",
    "G.826 / G.828": "ITU-T Recommendations for error performance and availability of digital paths; their "
                     "Annex A defines unavailable time by the ten-second rule.",
    "P.530": "ITU-R Recommendation P.530: the prediction of fading on line-of-sight hops (rain, multipath).",
    "A0.01": "Rain attenuation exceeded for 0.01 % of an average year (P.530); compared with the fade margin.",
    "P.838": "ITU-R P.838: rain attenuation per km from rain rate, frequency and polarisation.",
    "P.841 worst month": "ITU-R P.841: converts a worst-month percentage to an average-year one.",
    "Worst month / average year": "P.530 multipath predictions are for the worst month; rain predictions for an "
                                  "average year.",
    "XPD": "Cross-polar discrimination [dB]: wanted polarisation level minus the leak into the other one. Low "
           "clear-sky XPD points at a rotated feed.",
    "CPA": "Co-polar attenuation [dB]: the fade of the wanted polarisation, against which XPD in rain is drawn.",
    "ATPC": "Automatic transmit power control: the transmitter raises its power in fades, hiding part of them.",
    "Multipath": "Clear-air fading from reflected and refracted rays adding out of phase; fast and deep, mostly "
                 "at night and in the morning in calm weather.",
    "Rice K-factor": "Power ratio of the steady to the scattered part of the received signal; 0 is Rayleigh "
                     "fading, large K is a steady signal.",
    "LCR / AFD": "Level-crossing rate and average fade duration: how often per second the level crosses a depth "
                 "downwards, and how long it stays below it on average.",
    "Level shift": "A lasting step of the clear-sky level (antenna moved, hardware changed), not a fade.",
}

# --- labels of the numbers on screens (dashboard tables, PDF) ------------------------------------------------------
FIELD_LABELS = {
    "k_moments_db": "Rice K, moment estimate [dB]",
    "k_mle_db": "Rice K, maximum-likelihood estimate [dB]",
    "k_db": "Rice K [dB]",
    "afd_s": "Average fade duration [s]",
    "lcr_per_s": "Level-crossing rate [1/s]",
    "lcr_per_h": "Level-crossing rate [1/h]",
    "depth_db": "Fade depth [dB]",
    "all_percent": "Time beyond depth, all fading [%]",
    "all_percent_upper_bound": "Time beyond depth, upper bound from interval minima [%]",
    "multipath_percent": "Time beyond depth, multipath [%]",
    "rain_percent": "Time beyond depth, rain [%]",
    "rayleigh_percent": "Rayleigh distribution [%]",
    "clear_xpd_db": "Clear-sky XPD [dB]",
    "tilt_deg": "Polarisation tilt [deg]",
    "tilt_deg_perfect_antenna": "Tilt if the antennas leaked nothing [deg]",
    "copolar_loss_db": "Co-polar loss from the tilt [dB]",
    "xpd_required_db": "Required XPD [dB]",
    "below_required": "XPD below the required value",
    "clear_sky_imbalance_db": "Clear-sky H - V level difference [dB]",
    "imbalance_flag": "H/V levels differ by more than the flag",
    "imbalance_flag_db": "Flag for the H/V difference [dB]",
    "slope_db_per_week": "Trend [dB/week]",
    "size_db": "Step size [dB]",
    "time_utc": "Time (UTC)",
    "samples": "Samples",
    "rain_s": "Rain time",
    "observed_s": "Observed time",
    "deepest_rain_fade_db": TERMS["deepest_rain_fade_db"].label,
    "deepest_fade_db": TERMS["deepest_fade_db"].label,
    "peak_fade_db": TERMS["peak_fade_db"].label,
    "a001_db": "P.530 A0.01 (average year) [dB]",
    "percent_of_period_above_a001": "Time beyond the P.530 A0.01 in the period [%]",
    "fade_margin_db": "Fade margin [dB]",
    "unavailable_s": OUTAGE,
    "below_threshold_s": BELOW_THRESHOLD,
    "ses_available_s": TERMS["ses_available"].label,
    "availability_pct": "Availability [%]",
    "objective_pct": "Availability objective [%]",
    "meets_objective": TERMS["meets_objective"].label,
    "main_cause": MAIN_CAUSE,
    "duration_s": "Duration",
    "fm_hz": "Fading bandwidth [Hz]",
}

# --- safety: one place for every caution attached to a field action ------------------------------------------------
HEIGHT_CAUTION = ("Work at height: tower and mast work only by trained, certified climbers with fall-arrest "
                  "equipment and a rescue plan; do not climb in wind, ice or lightning.")
RF_CAUTION = ("RF exposure: keep out of the antenna's main beam; mute or switch off the transmitters (both ends where "
              "needed) before working at the antenna, and respect the RF exposure limits that apply on site.")
LICENCE_CAUTION = ("Follow local codes, the site owner's rules and licensed practice; changes to frequency, "
                   "polarisation, transmit power or antennas need the licence holder's (and where required the "
                   "regulator's) approval.")
ELECTRICAL_CAUTION = ("Electrical safety: power and earthing checks only by qualified staff, following the equipment "
                      "maker's instructions and local electrical codes.")
SAFETY_CAUTIONS = (HEIGHT_CAUTION, RF_CAUTION, LICENCE_CAUTION)
SAFETY_SHORT = ("Safety: some actions mean work on towers and near radiating antennas. Follow the local codes for work "
                "at height and fall protection, respect the RF exposure limits (switch the transmitter off or stay "
                "outside the exclusion zone) and leave such work to trained, licensed staff.")


def label(key: str) -> str:
    """The printed label of a glossary term (``TERMS``)."""
    return TERMS[key].label


def definition(key: str) -> str:
    return TERMS[key].definition


def cause_label(cause: str | None) -> str:
    """The label of a cause code (``schema.CAUSES`` or ``schema.NO_DATA``); unknown codes print as given."""
    if cause is None or cause == "":
        return NO_OUTAGE
    return CAUSE_LABELS.get(cause, str(cause))


def cause_code(cause: str) -> str:
    """The two-letter mark of a cause (timelines)."""
    return CAUSE_CODES.get(cause, CAUSE_CODES[schema.UNKNOWN])


def verdict_label(meets: str | None) -> str:
    """yes / no / undetermined / "" (no objective) as printed: met, NOT met, undetermined, no objective."""
    return VERDICT_LABELS.get("" if meets is None else str(meets), str(meets))


def main_cause_label(cause: str | None) -> str:
    """Label of a hop's main cause: the cause's label, or "no outage"."""
    if not cause or cause == NO_OUTAGE:
        return NO_OUTAGE
    return cause_label(cause)


def field_label(key: str) -> str:
    """A human label for a result field; falls back to the key with underscores as spaces and the unit in
    brackets (``_db`` -> [dB], ``_s`` -> duration, ``_pct``/``_percent`` -> [%])."""
    if key in FIELD_LABELS:
        return FIELD_LABELS[key]
    units = {"_db": " [dB]", "_dbm": " [dBm]", "_pct": " [%]", "_percent": " [%]", "_deg": " [deg]",
             "_hz": " [Hz]", "_km": " [km]", "_m": " [m]", "_ghz": " [GHz]", "_mmh": " [mm/h]"}
    for suffix, unit in units.items():
        if key.endswith(suffix):
            words = key[: -len(suffix)].replace("_", " ")
            return words[:1].upper() + words[1:] + unit
    if key.endswith("_s"):
        words = key[:-2].replace("_", " ")
        return words[:1].upper() + words[1:]
    words = key.replace("_", " ")
    return words[:1].upper() + words[1:]


def allowed_cause_values() -> set[str]:
    """Values the ``cause`` column of events.csv / outage_by_cause.csv may hold."""
    return set(schema.CAUSES)


def allowed_main_cause_values() -> set[str]:
    return set(schema.CAUSES) | {NO_OUTAGE}


def duration_text(seconds: float | None) -> str:
    """A duration as h:mm:ss (the rule for every duration a person reads); days as "3 d 04:05:06"."""
    if seconds is None or not math.isfinite(float(seconds)):
        return "–"
    total = int(round(float(seconds)))
    sign = "-" if total < 0 else ""
    total = abs(total)
    days, rest = divmod(total, 86400)
    h, rest = divmod(rest, 3600)
    m, s = divmod(rest, 60)
    if days:
        return f"{sign}{days} d {h:02d}:{m:02d}:{s:02d}"
    return f"{sign}{h}:{m:02d}:{s:02d}"
