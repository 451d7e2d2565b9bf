"""The files beside the simulated logs: the links table and the ground truth (events, labelled segments, and
optionally the per-sample truth)."""
from __future__ import annotations

from pathlib import Path
from typing import Mapping

import numpy as np
import pandas as pd


def _iso(values) -> list[str]:
    stamps = pd.to_datetime(pd.Series(values), utc=True)
    return [("" if pd.isna(v) else v.strftime("%Y-%m-%dT%H:%M:%SZ")) for v in stamps]


def write_links_table(links, path: str | Path) -> Path:
    """A links table CSV (``diag.links`` columns: required first, then every optional one; empty when
    unknown)."""
    from diag.links import OPTIONAL, REQUIRED

    rows = [",".join(REQUIRED + OPTIONAL)]
    for link in links:
        cells = []
        for name in REQUIRED + OPTIONAL:
            value = getattr(link, name)
            cells.append("" if value is None else (f"{value:g}" if isinstance(value, float) else str(value)))
        rows.append(",".join(cells))
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    return path


def truth_segments(result) -> pd.DataFrame:
    """Run-length segments of the per-sample true cause of one simulated hop (faded runs only).

    Columns ``link_id, channel, start_utc, end_utc`` (end exclusive: start of the next sample), ``cause``,
    ``samples``, ``peak_fade_db``."""
    truth = result.truth_samples
    dt = pd.Timedelta(seconds=result.spec.interval_s)
    out = []
    for channel, part in truth.groupby("channel", sort=True):
        cause = part["cause"].to_numpy(dtype=object)
        fade = part["total_fade_db"].to_numpy(dtype=float)
        times = part["time_utc"].reset_index(drop=True)
        change = np.flatnonzero(np.r_[True, cause[1:] != cause[:-1]])
        ends = np.r_[change[1:], len(cause)]
        for a, b in zip(change, ends):
            if cause[a] == "":
                continue
            out.append(
                {
                    "link_id": result.spec.link_id,
                    "channel": channel,
                    "start_utc": times[a],
                    "end_utc": times[b - 1] + dt,
                    "cause": cause[a],
                    "samples": int(b - a),
                    "peak_fade_db": round(float(fade[a:b].max()), 2),
                }
            )
    return pd.DataFrame(
        out, columns=["link_id", "channel", "start_utc", "end_utc", "cause", "samples", "peak_fade_db"]
    )


def write_truth(results, out_dir: str | Path, *, samples: bool = True) -> list[Path]:
    """Ground truth beside the logs: ``truth_events.csv``, ``truth_labels.csv`` (run-length cause
    segments) and, when ``samples``, ``truth_samples.parquet`` (every sample's contribution per cause)."""
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    results = list(results.values()) if isinstance(results, Mapping) else list(results)
    events = pd.concat(
        [r.truth_events for r in results if not r.truth_events.empty]
        or [pd.DataFrame(columns=results[0].truth_events.columns if results else [])],
        ignore_index=True,
    )
    for column in ("start_utc", "end_utc", "shift_utc"):
        if column in events:
            events[column] = _iso(events[column])
    for column in events.columns:
        if events[column].dtype.kind == "f":
            events[column] = events[column].round(3)
    paths = [out_dir / "truth_events.csv", out_dir / "truth_labels.csv"]
    events.to_csv(paths[0], index=False, lineterminator="\n")
    labels = pd.concat([truth_segments(r) for r in results], ignore_index=True)
    labels["start_utc"] = _iso(labels["start_utc"])
    labels["end_utc"] = _iso(labels["end_utc"])
    labels.to_csv(paths[1], index=False, lineterminator="\n")
    if samples:
        frames = []
        for r in results:
            frame = r.truth_samples.copy()
            frame.insert(1, "link_id", r.spec.link_id)
            frames.append(frame)
        paths.append(out_dir / "truth_samples.parquet")
        pd.concat(frames, ignore_index=True).to_parquet(paths[-1], index=False)
    return paths
