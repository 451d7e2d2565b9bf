"""Tables of the dashboard's fading-statistics screen: exceedance curves, fades by hour, key figures with human
labels and units, level crossings per level (from ``LinkResult.statistics``; no new computation)."""
from __future__ import annotations

import math
from collections.abc import Iterable

import pandas as pd

from diag import glossary, schema
from diag.report.views import cause_label, duration_text

# --- fading statistics ------------------------------------------------------------------------------------------
EXCEEDANCE_CURVES = {
    "all_percent": "measured, all fades",
    "all_percent_upper_bound": "measured, all fades (upper bound)",
    "multipath_percent": "measured, multipath",
    "rain_percent": "measured, rain",
    "rayleigh_percent": "Rayleigh distribution",
}


def exceedance_curves(channel_statistics: dict) -> pd.DataFrame:
    """Fade-depth exceedance of one channel as a long table for a log-scale chart.

    From ``LinkResult.statistics["channels"][channel]`` (``diag.analysis.fading_stats``): the measured curves, the
    Rayleigh curve
    and the design predictions (ITU-R P.530 multipath for the worst month, P.530 rain for the average year) as the
    statistics module gives them.  Columns: ``depth_db, percent, curve, kind`` (kind "measured", "theory" or
    "prediction").  Zero and missing percentages are dropped (they cannot be drawn on a log scale).
    """
    columns = ["depth_db", "percent", "curve", "kind"]
    rows: list[dict] = []
    exceedance = (channel_statistics or {}).get("exceedance") or {}
    depths = exceedance.get("depth_db") or []
    for key, label in EXCEEDANCE_CURVES.items():
        values = exceedance.get(key)
        if not isinstance(values, list):
            continue
        kind = "theory" if key == "rayleigh_percent" else "measured"
        rows += [{"depth_db": d, "percent": v, "curve": label, "kind": kind} for d, v in zip(depths, values)]
    multipath = exceedance.get("p530_multipath") or {}
    if isinstance(multipath.get("percent_worst_month"), list):
        rows += [{"depth_db": d, "percent": v, "curve": "P.530 multipath prediction (worst month)",
                  "kind": "prediction"} for d, v in zip(depths, multipath["percent_worst_month"])]
    rain = ((channel_statistics or {}).get("rain") or {}).get("p530") or {}
    if isinstance(rain.get("attenuation_db"), list) and isinstance(rain.get("percent_of_year"), list):
        rows += [{"depth_db": a, "percent": p, "curve": "P.530 rain prediction (average year)",
                  "kind": "prediction"} for a, p in zip(rain["attenuation_db"], rain["percent_of_year"])]
    out = pd.DataFrame(rows, columns=columns)
    out["depth_db"] = pd.to_numeric(out["depth_db"], errors="coerce")
    out["percent"] = pd.to_numeric(out["percent"], errors="coerce")
    out = out[(out["percent"] > 0) & out["depth_db"].notna()]
    return out.reset_index(drop=True)


def hourly_fading(channel_statistics: dict) -> pd.DataFrame:
    """Faded minutes and fade starts by hour of day (UTC) and cause, from ``diag.analysis.fading_stats``' ``by_hour``.

    Long table for a stacked bar chart: ``hour, cause, cause_label, faded_min, event_starts`` (all 24 hours for
    every cause that appears).  Multipath fading gathers in still nights and mornings, convective rain in the
    afternoon and evening: the shape helps read the cause (common practice).
    """
    columns = ["hour", "cause", "cause_label", "faded_min", "event_starts"]
    by_hour = (channel_statistics or {}).get("by_hour") or {}
    hours = by_hour.get("hour_utc") or list(range(24))
    faded = by_hour.get("faded_s_by_cause") or {}
    starts = by_hour.get("event_starts_by_cause") or {}
    causes = [c for c in schema.CAUSES if c in faded or c in starts]
    causes += sorted((set(faded) | set(starts)) - set(schema.CAUSES))
    rows = []
    for cause in causes:
        seconds = faded.get(cause) or [0.0] * len(hours)
        counts = starts.get(cause) or [0] * len(hours)
        for hour, sec, count in zip(hours, seconds, counts):
            rows.append({"hour": int(hour), "cause": cause, "cause_label": cause_label(cause),
                         "faded_min": float(sec or 0.0) / 60.0, "event_starts": int(count or 0)})
    return pd.DataFrame(rows, columns=columns)


def format_value(key: str, value) -> str:
    """One figure as a person reads it: unit from the key's suffix, sensible rounding, durations h:mm:ss, no
    exponent notation, yes/no for flags (``diag.glossary`` labels the key)."""
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "–"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, (list, tuple)):
        return ", ".join(format_value(key, v) for v in value)
    if not isinstance(value, (int, float)):
        return str(value)
    v = float(value)
    if key.endswith("_s") and not key.endswith(("_per_s",)):
        return duration_text(v) if abs(v) >= 60 else f"{v:.3g} s"
    unit = next((u for suffix, u in (("_dbm", " dBm"), ("_db_per_week", " dB/week"), ("_db", " dB"),
                                      ("_deg", "°"), ("_hz", " Hz"), ("_pct", " %"), ("_percent", " %"),
                                      ("_mmh", " mm/h"), ("_ghz", " GHz"), ("_km", " km"))
                 if key.endswith(suffix)), "")
    if isinstance(value, int) or v.is_integer() and abs(v) >= 100:
        return f"{v:,.0f}{unit}"
    if unit in (" dB", " dBm", "°", " dB/week"):
        return f"{v:.1f}{unit}" if abs(v) >= 0.1 or v == 0 else f"{v:.2f}{unit}"
    if abs(v) >= 1000:
        return f"{v:,.0f}{unit}"
    if abs(v) >= 0.001 or v == 0:
        return f"{v:.3g}{unit}"
    return f"{v:.2e}".replace("e-0", " × 10^-").replace("e-", " × 10^-") + unit


def key_figures(data, *, skip: Iterable[str] = (), max_list: int = 6) -> pd.DataFrame:
    """A nested JSON-able dict (statistics, cross-polar results) flattened to ``Figure, Value`` rows for display:
    each key's human label and unit (``diag.glossary.field_label``), values rounded (:func:`format_value`).

    Nested keys are joined with " › "; long lists (curves, segment lists) are summarised by their length instead
    of being printed (the per-level crossing table is :func:`crossing_table`).
    """
    skip = set(skip)
    rows: list[dict] = []

    def walk(prefix: str, key: str, value) -> None:
        label = glossary.field_label(key) if key else ""
        name = f"{prefix} › {label}" if prefix and label else (label or prefix)
        if isinstance(value, dict):
            for sub, item in value.items():
                if sub in skip:
                    continue
                walk(name, str(sub), item)
        elif isinstance(value, (list, tuple)) and (len(value) > max_list or any(isinstance(v, (dict, list))
                                                                                  for v in value)):
            rows.append({"Figure": name, "Value": f"{len(value)} values"})
        else:
            rows.append({"Figure": name, "Value": format_value(key, value)})

    for key, value in (data or {}).items():
        if key not in skip:
            walk("", str(key), value)
    return pd.DataFrame(rows, columns=["Figure", "Value"])


def crossing_table(lcr_afd: dict) -> pd.DataFrame:
    """Level-crossing rate and average fade duration per level (``diag.analysis.fading_stats``' ``lcr_afd``), one
    row per level with the Rayleigh and Rice references beside the measurement, and the per-level sampling note
    when the statistics module gives one (``undersampled`` list)."""
    levels = lcr_afd.get("level_db") or []
    columns = {"Level [dB]": levels,
               "Crossings": lcr_afd.get("crossings"),
               "LCR measured [1/h]": lcr_afd.get("crossing_rate_hz"),
               "LCR Rayleigh [1/h]": lcr_afd.get("rayleigh_crossing_rate_hz"),
               "LCR Rice [1/h]": lcr_afd.get("rice_crossing_rate_hz"),
               "AFD measured [s]": lcr_afd.get("afd_s"),
               "AFD Rayleigh [s]": lcr_afd.get("rayleigh_afd_s"),
               "AFD Rice [s]": lcr_afd.get("rice_afd_s")}
    out = pd.DataFrame({k: v for k, v in columns.items() if isinstance(v, list) and len(v) == len(levels)})
    for column in [c for c in out.columns if "[1/h]" in c]:
        out[column] = pd.to_numeric(out[column], errors="coerce") * 3600.0
    notes = lcr_afd.get("undersampled")
    if isinstance(notes, list) and len(notes) == len(levels):
        out["Sampling"] = ["too coarse: rate and duration biased" if n else "adequate" for n in notes]
    return out
