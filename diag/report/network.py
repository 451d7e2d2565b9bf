"""The network table and page of a many-hop run: hops ranked by outage minutes, failed hops with their error.

:func:`network_ranking` builds the table from the hops' ``LinkResult``; :func:`write_network_page` draws the one-page
PDF.  Called by :mod:`diag.batch` after a run.
"""
from __future__ import annotations

import math
import shutil
from collections.abc import Sequence
from pathlib import Path

import numpy as np
import pandas as pd

from diag import glossary, schema
from diag.report import style
from diag.results import LinkResult

__all__ = ["COMBINED_FILES", "RANKING_COLUMNS", "bounds", "network_ranking", "spreadsheet_safe", "write_combined",
           "write_network_page"]

COMBINED_FILES = ("events.csv", "outage_summary.csv", "outage_by_cause.csv")
RANKING_COLUMNS = ["rank", "link_id", "outage_min_lo", "outage_min_hi", "exact", "below_threshold_min_lo",
                   "below_threshold_min_hi", "availability_pct_lo", "availability_pct_hi", "objective_pct",
                   "meets_objective", "main_cause", "main_cause_min_lo", "main_cause_min_hi", "events", "observed_h",
                   "no_data_h", "folder", "error"]

# --- network table and page ----------------------------------------------------------------------------------
def _num(mapping, key: str) -> float:
    try:
        return float(mapping.get(key))
    except (TypeError, ValueError):
        return math.nan


def bounds(mapping, key: str) -> tuple[float, float]:
    """(low, high) of an outage figure: ``key_lo``/``key_hi`` when the accounting gives bounds (coarse logs,
    15-min statistics; see ``diag.analysis.outage``), else the exact ``key`` twice."""
    exact, lo, hi = _num(mapping, key), _num(mapping, f"{key}_lo"), _num(mapping, f"{key}_hi")
    if math.isfinite(lo) and math.isfinite(hi):
        return lo, hi
    return exact, exact


def _cause_minutes(by_cause: pd.DataFrame | None, cause: str) -> tuple[float, float]:
    if by_cause is None or not len(by_cause) or "cause" not in by_cause:
        return 0.0, 0.0
    lo = hi = 0.0
    for _, row in by_cause[by_cause["cause"] == cause].iterrows():
        a, b = bounds(row, "unavailable_s")
        lo += a if math.isfinite(a) else 0.0
        hi += b if math.isfinite(b) else 0.0
    return lo / 60, hi / 60


def network_ranking(results: Sequence[LinkResult], folders: dict[str, str] | None = None) -> pd.DataFrame:
    """The network table: one row per hop, worst first.

    Outage = unavailable time (ITU-T G.826 sense) in minutes.  1-s logs give it exactly (``exact``; low = high);
    coarser logs and 15-min statistics give bounds (``diag.analysis.outage``).  Hops are ranked by the upper bound
    (worst
    case), then the lower bound, then minutes below threshold (upper bound); no number between the bounds is made
    up.  Hops that could not be analysed come last, with their error and no rank."""
    rows = []
    for res in results:
        link_id = res.link.link_id
        row = {"link_id": link_id, "folder": (folders or {}).get(link_id, ""), "error": res.error or ""}
        if res.error is None and res.outage is not None:
            s = res.outage.summary or {}
            minutes = {c: _cause_minutes(res.outage.by_cause, c) for c in schema.CAUSES}
            main = max(minutes, key=lambda c: (minutes[c][1], minutes[c][0]))
            if minutes[main][1] <= 0:
                main = ""
            lo, hi = bounds(s, "unavailable_s")
            blo, bhi = bounds(s, "below_threshold_s")
            alo, ahi = bounds(s, "availability_pct")
            meets = s.get("meets_objective")
            row.update(outage_min_lo=lo / 60, outage_min_hi=hi / 60,
                       exact=bool(math.isfinite(_num(s, "unavailable_s")) and lo == hi),
                       below_threshold_min_lo=blo / 60, below_threshold_min_hi=bhi / 60,
                       availability_pct_lo=alo, availability_pct_hi=ahi, objective_pct=_num(s, "objective_pct"),
                       meets_objective="" if meets is None or (isinstance(meets, float) and math.isnan(meets))
                       else str(meets),
                       main_cause=main or glossary.NO_OUTAGE, main_cause_min_lo=minutes[main][0] if main else 0.0,
                       main_cause_min_hi=minutes[main][1] if main else 0.0, events=int(len(res.events)),
                       observed_h=_num(s, "observed_s") / 3600, no_data_h=_num(s, "no_data_s") / 3600)
        elif res.error is None:
            row["error"] = "analysis returned no outage accounting"
        rows.append(row)
    table = pd.DataFrame(rows, columns=[c for c in RANKING_COLUMNS if c != "rank"])
    ok = table["error"] == ""
    good = table[ok].sort_values(["outage_min_hi", "outage_min_lo", "below_threshold_min_hi", "link_id"],
                                 ascending=[False, False, False, True], kind="mergesort", na_position="last")
    good.insert(0, "rank", np.arange(1, len(good) + 1))
    bad = table[~ok].sort_values("link_id", kind="mergesort")
    bad.insert(0, "rank", pd.NA)
    out = pd.concat([good, bad], ignore_index=True) if len(bad) else good.reset_index(drop=True)
    out["rank"] = out["rank"].astype("Int64")
    return out[RANKING_COLUMNS]


def spreadsheet_safe(table: pd.DataFrame) -> pd.DataFrame:
    """Text cells a spreadsheet would run as a formula get a leading apostrophe (``diag.report.safe_cell``)."""
    from diag.report.tables import safe_cell

    out = table.copy()
    for col in ("link_id", "folder", "main_cause", "error", "meets_objective"):
        out[col] = out[col].map(safe_cell).astype(object)
    return out


def _short(text: str, width: int) -> str:
    """Shorten in the middle so hop ids that differ only at the end stay distinct."""
    text = str(text)
    if len(text) <= width:
        return text
    head = (width - 2) // 2
    return f"{text[:head]}..{text[-(width - 2 - head):]}"


def write_network_page(results: Sequence[LinkResult], ranking: pd.DataFrame, path: Path, *, top: int = 20) -> Path:
    """One A4-landscape PDF page: outage minutes by cause for the worst hops, the ranking, and failed hops.

    Hop ids are user text: mathtext is off for the whole page (tick labels are made only when the page is drawn,
    so switching it off per text object is not enough), so a "$" prints instead of being typeset."""
    import matplotlib

    with matplotlib.rc_context({"text.parse_math": False}):
        return _write_network_page(results, ranking, path, top=top)


def _write_network_page(results: Sequence[LinkResult], ranking: pd.DataFrame, path: Path, *, top: int = 20) -> Path:
    import matplotlib

    matplotlib.use("Agg", force=False)
    from matplotlib.backends.backend_pdf import PdfPages
    from matplotlib.figure import Figure

    colours, names = style.CAUSE_COLORS, style.CAUSE_LABELS
    ok = ranking[ranking["error"] == ""].head(top)
    failed = ranking[ranking["error"] != ""]
    by_id = {r.link.link_id: r for r in results}
    fig = Figure(figsize=(11.69, 8.27))
    fig.text(0.04, 0.955, "Network outage ranking", fontsize=16, weight="bold")
    fig.text(0.04, 0.925, f"{len(ranking)} hops: {int((ranking['error'] == '').sum())} analysed, {len(failed)} "
             "could not be analysed.  Outage = unavailable time (ITU-T G.826 sense), by cause.", fontsize=9)
    ax = fig.add_axes((0.17, 0.57, 0.79, 0.31))
    labels = list(ok["link_id"])[::-1]
    shown = [f"{_short(h, 30)} " for h in labels]
    left = np.zeros(len(labels))
    pairs = {cause: np.asarray([_cause_minutes(by_id[h].outage.by_cause if h in by_id and by_id[h].outage
                                               else None, cause) for h in labels]).reshape(-1, 2)
             for cause in schema.CAUSES}
    # certain minutes (lower bound) as solid bars, the rest up to the upper bound as hatched outlines after them:
    # a 0-15 min range never looks like 15 certain minutes
    for cause in schema.CAUSES:
        minutes = pairs[cause][:, 0]
        if labels and minutes.sum() > 0:
            ax.barh(range(len(labels)), minutes, left=left, color=colours.get(cause, "#888888"),
                    label=names.get(cause, cause))
            left += minutes
    for cause in schema.CAUSES:
        extra = pairs[cause][:, 1] - pairs[cause][:, 0]
        if labels and extra.sum() > 0:
            ax.barh(range(len(labels)), extra, left=left, facecolor="none", hatch="////", linewidth=0.8,
                    edgecolor=colours.get(cause, "#888888"), label=f"{names.get(cause, cause)}: possible (upper bound)")
            left += extra
    ax.set_yticks(range(len(labels)), shown)
    ax.set_ylim(-0.6, max(len(labels), 1) - 0.4)
    ax.set_xlabel("outage [min] (upper bound where the log gives bounds)")
    ax.set_title(f"Worst {len(labels)} hops", fontsize=10, loc="left")
    ax.tick_params(axis="y", labelsize=6 if len(labels) > 12 else 7)
    if left.sum() > 0:
        ax.legend(fontsize=7, loc="lower right")
    else:
        ax.text(0.5, 0.5, "no outage on any analysed hop", transform=ax.transAxes, ha="center", fontsize=9)
    rows = []
    for row in ok.itertuples():
        same = row.exact or row.outage_min_lo == row.outage_min_hi
        minutes = f"{row.outage_min_hi:.1f}" if same else f"{row.outage_min_lo:.0f} – {row.outage_min_hi:.0f}"
        avail = ("" if pd.isna(row.availability_pct_lo) else f"{row.availability_pct_lo:.3f}" if same
                 else f"{row.availability_pct_lo:.3f} – {row.availability_pct_hi:.3f}")
        met = glossary.verdict_label(str(row.meets_objective)) if row.meets_objective else "–"
        rows.append([f"{int(row.rank)}", _short(row.link_id, 34), minutes, avail, met,
                     names.get(row.main_cause, row.main_cause) or glossary.NO_OUTAGE])
    if rows:
        row_h = min(0.022, 0.30 / (len(rows) + 1))          # 20 hops and the failed list still fit the page
        tab = fig.add_axes((0.04, 0.455 - row_h * (len(rows) + 1), 0.92, row_h * (len(rows) + 1)))
        tab.axis("off")
        table = tab.table(cellText=rows, colLabels=["Rank", "Hop", "Outage [min]", "Availability [%]",
                                                    glossary.TERMS["meets_objective"].label, glossary.MAIN_CAUSE],
                          bbox=[0, 0, 1, 1], cellLoc="left", colWidths=[0.06, 0.30, 0.14, 0.2, 0.12, 0.18])
        table.auto_set_font_size(False)
        table.set_fontsize(8 if len(rows) <= 12 else 7)
        for (r, _), cell in table.get_celld().items():
            cell.set_edgecolor("#D0D0D0")
            if r == 0:
                cell.set_text_props(weight="bold")
    if len(ok) and not ok["exact"].all():
        fig.text(0.04, 0.47, "a – b: lower and upper bound (15-min statistics or coarse logs); ranked by the upper "
                 "bound", fontsize=7.5, style="italic")
    if len(failed):
        text = ["Hops not analysed (fix and rerun):"] + [f"  {_short(r.link_id, 26)}: {_short(r.error, 140)}"
                                                      for r in failed.head(8).itertuples()]
        if len(failed) > 8:
            text.append(f"  ... and {len(failed) - 8} more (network_ranking.csv)")
        fig.text(0.04, 0.14, "\n".join(text), fontsize=7, va="top", color="#a02020")
    fig.text(0.04, 0.03, "Per-hop outputs: hops/<hop>/.  Advice that involves work on towers or near radiating "
             "antennas: follow local codes for work at height and RF exposure limits.", fontsize=7)
    for text_obj in fig.findobj(matplotlib.text.Text):   # hop ids are user text: a "$" must print, not typeset
        text_obj.set_parse_math(False)

    def build(tmp: Path) -> None:
        with PdfPages(tmp, metadata={"Title": "Network outage ranking", "Creator": "diag"}) as pdf:
            pdf.savefig(fig)

    from diag.outputs import replace_file

    return replace_file(Path(path), build)   # made beside, renamed into place: never a truncated page


def write_combined(out_dir: Path, order: list[str], folders: dict[str, str]) -> list[Path]:
    """Concatenate the per-hop CSV files into network-wide ones (header once, hops in ``order``)."""
    written = []
    for name in COMBINED_FILES:
        parts = [out_dir / "hops" / folders[h] / name for h in order if folders.get(h)
                 and (out_dir / "hops" / folders[h] / name).exists()]
        if not parts:
            continue
        target = out_dir / name
        with target.open("wb") as dst:
            for i, part in enumerate(parts):
                with part.open("rb") as src:
                    header = src.readline()
                    if i == 0:
                        dst.write(header)
                    shutil.copyfileobj(src, dst)
        written.append(target)
    return written
