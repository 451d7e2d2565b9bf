"""Score the project's cause attribution on scenario family B (``family_b.py``), held-out half by default.

THE SPLIT (fixed, also in family_b): seeds 1-50 are the FIT half, seeds 51-100 the HELD-OUT half.  Anything tuned
on this family is tuned on ``fit_half()`` / ``family_b.fit_half()`` only; figures are reported on held-out seeds.

What is measured, per frequency band x length band x sampling cell and in total per sampling:

- the confusion matrix, truth cause (rows) against called cause (columns, plus ``unknown`` and ``none`` = no
  event), TIME-WEIGHTED over the faded truth samples: a 1-s sample weighs 1 s, a 1-min sample 60 s (its truth is
  the truth at the sampled instant), a 15-min interval contributes each of its faded truth seconds with the
  interval's called cause;
- time-weighted macro-F1 over the truth causes present (per cause: TP on the diagonal, FN the rest of its row,
  FP the rest of its column, all within faded truth time);
- the share of faded time called ``unknown``;
- THE RULE OF THUMB on the same analysed events: an event longer than 5 min is rain, else multipath;
- calibration over fade events (``unknown`` left out and counted): an event is right when its cause equals the
  time-weighted majority truth cause of the faded truth samples it covers (``none`` when it covers none);
  reliability table by confidence decile and the expected calibration error ECE = sum_b n_b / N |conf_b - acc_b|;
- agreement between the 1-min and the 15-min verdicts of the same hops: over 15-min intervals holding at least
  60 faded truth seconds, the share where the 15-min call equals the time-weighted majority call of the 1-min
  samples in that interval.

CLI: ``python bench/validation/score.py [--seeds 51-60] [--shapes 1s,1min,...] [--out DIR]``.
"""
from __future__ import annotations

import argparse
import os
import sys
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parent))
import family_b as fb  # noqa: E402

REPO = Path(__file__).resolve().parents[2]
try:  # a ``diag`` on PYTHONPATH (e.g. an exported older version, to compare) wins over this checkout's
    import diag  # noqa: F401
except ImportError:
    sys.path.insert(0, str(REPO))

CALLED = fb.CAUSES + ("unknown", "none")
# the scenario family scored: family B by default; use_family() switches to another module with the same interface
FAMILY = fb


def use_family(module) -> None:
    """Score ``module`` (same interface as family_b: CAUSES, SHAPES, START_UTC, make_world, write_world)."""
    global FAMILY
    if tuple(module.CAUSES) != tuple(fb.CAUSES) or tuple(module.SHAPES) != tuple(fb.SHAPES):
        raise ValueError(f"{module.__name__}: CAUSES and SHAPES must be family B's")
    FAMILY = module
F_BANDS = ((6.0, 15.0), (15.0, 30.0), (30.0, 50.0), (50.0, 81.0))
D_BANDS = ((0.0, 1.0), (1.0, 5.0), (5.0, 20.0), (20.0, 61.0))
DEFAULT_OUT = REPO / "bench" / "output" / "validation"



# which cause attribution the bench scores: the physics posterior by default (the candidate this harness was built
# to check), "rules" for the default rulebook; set with run.py --attribution or DIAG_BENCH_ATTRIBUTION
ATTRIBUTION = os.environ.get("DIAG_BENCH_ATTRIBUTION", "posterior")


def bench_config():
    from diag.config import AnalysisConfig

    return AnalysisConfig(attribution=ATTRIBUTION)


def fit_half(seeds=fb.FIT_SEEDS):
    """The fit-half worlds (seeds 1-50 or a subset) for tuning; raises on any held-out seed."""
    return fb.fit_half(seeds)


def _band(value, bands) -> str:
    for lo, hi in bands:
        if lo <= value < hi:
            return f"{lo:g}-{hi:g}"
    return "?"


def cell_of(hop: fb.Hop, shape: str) -> tuple[str, str, str]:
    return (_band(hop.frequency_ghz, F_BANDS) + " GHz", _band(hop.length_km, D_BANDS) + " km", shape)


@dataclass
class Tally:
    """Confusion matrices (seconds), rule of thumb beside, and event calibration records."""
    diag: dict = field(default_factory=dict)     # cell -> (5 x 7) seconds
    thumb: dict = field(default_factory=dict)
    events: list = field(default_factory=list)   # (shape, confidence, right, cause)
    covers: list = field(default_factory=list)   # per event: True when it covers a faded truth second
    unknown_events: dict = field(default_factory=dict)
    agree: dict = field(default_factory=dict)    # shape -> [agree, total]
    hops: list = field(default_factory=list)     # per hop and shape: (seed, link_id, shape, mechanisms, 5x7 s)

    def add(self, store: dict, cell, truth: np.ndarray, called: np.ndarray, weight: np.ndarray) -> None:
        m = store.setdefault(cell, np.zeros((len(fb.CAUSES), len(CALLED))))
        np.add.at(m, (truth, called), weight)


def _called_codes(causes: pd.Series) -> np.ndarray:
    lookup = {c: i for i, c in enumerate(CALLED)}
    lookup[""] = CALLED.index("none")
    return np.array([lookup.get(str(c), CALLED.index("unknown")) for c in causes], dtype=np.int64)


def _thumb_codes(event_id: np.ndarray, events: pd.DataFrame) -> np.ndarray:
    dur = events["duration_s"].to_numpy(dtype=float) if len(events) else np.zeros(0)
    out = np.full(event_id.size, CALLED.index("none"), dtype=np.int64)
    has = event_id >= 0
    long_ = dur[event_id[has]] > 300.0
    out[has] = np.where(long_, CALLED.index("rain"), CALLED.index("multipath"))
    return out


def _per_second_calls(frame: pd.DataFrame, n: int, step: int, codes: np.ndarray) -> np.ndarray:
    """Called code per truth second for a statistics log (each interval's call over its seconds)."""
    out = np.full(n, CALLED.index("none"), dtype=np.int64)
    k = ((frame.index - FAMILY.START_UTC) // pd.Timedelta(seconds=1)).to_numpy()
    for start, code in zip(k, codes):
        if 0 <= start < n:
            out[start:start + step] = code
    return out


def score_hop(tally: Tally, truth: fb.HopTruth, result, shape: str) -> dict[str, np.ndarray]:
    """Add one analysed hop log to the tally; returns the per-second called codes by channel (for agreement)."""
    hop = truth.hop
    n = next(iter(truth.rsl_dbm.values())).size
    cell = cell_of(hop, shape)
    per_second = {}
    events = result.events
    before = tally.diag.get(cell, np.zeros((len(fb.CAUSES), len(CALLED)))).copy()
    for ch in hop.channels:
        series = result.series.get(ch)
        tcodes = truth.cause_codes(ch)
        if series is None:
            called_s = np.full(n, CALLED.index("none"))
            thumb_s = called_s
            frame = None
        else:
            frame = series.frame
            eid = frame["event_id"].to_numpy(dtype=np.int64)
            called = _called_codes(frame["cause"])
            thumb = _thumb_codes(eid, events)
            if shape in ("1s", "1min"):
                step = 1 if shape == "1s" else 60
                k = ((frame.index - FAMILY.START_UTC) // pd.Timedelta(seconds=1)).to_numpy()
                ok = (k >= 0) & (k < n)
                k, called, thumb, eid = k[ok], called[ok], thumb[ok], eid[ok]
                tr = tcodes[k]
                faded = tr >= 0
                w = np.full(faded.sum(), float(step))
                tally.add(tally.diag, cell, tr[faded], called[faded], w)
                tally.add(tally.thumb, cell, tr[faded], thumb[faded], w)
                called_s = np.full(n, CALLED.index("none"), dtype=np.int64)
                for off in range(0, step):
                    idx = k + off
                    good = idx < n
                    called_s[idx[good]] = called[good]
                # calibration over events
                _event_records(tally, shape, events, ch, eid, tr, np.full(eid.size, float(step)))
            else:
                called_s = _per_second_calls(frame, n, 900, called)
                thumb_s = _per_second_calls(frame, n, 900, thumb)
                faded = tcodes >= 0
                w = np.ones(faded.sum())
                tally.add(tally.diag, cell, tcodes[faded], called_s[faded], w)
                tally.add(tally.thumb, cell, tcodes[faded], thumb_s[faded], w)
                eid_s = np.full(n, -1, dtype=np.int64)
                k = ((frame.index - FAMILY.START_UTC) // pd.Timedelta(seconds=1)).to_numpy()
                for start, e in zip(k, eid):
                    if 0 <= start < n:
                        eid_s[start:start + 900] = e
                _event_records(tally, shape, events, ch, eid_s, tcodes, np.ones(n))
        if series is None:
            faded = tcodes >= 0
            w = np.ones(faded.sum())
            tally.add(tally.diag, cell, tcodes[faded], called_s[faded], w)
            tally.add(tally.thumb, cell, tcodes[faded], thumb_s[faded], w)
        per_second[ch] = called_s
    tally.hops.append((hop.link_id, shape, hop, tally.diag[cell] - before if cell in tally.diag else before))
    return per_second


def _event_records(tally: Tally, shape: str, events: pd.DataFrame, ch: str, eid: np.ndarray, truth: np.ndarray,
                   weight: np.ndarray) -> None:
    if not len(events):
        return
    mine = events[events["channel"].astype(str) == ch]
    for i in mine.index:
        pos = events.index.get_loc(i)
        sel = eid == pos
        cause = str(events.at[i, "cause"])
        if cause == "unknown":
            tally.unknown_events[shape] = tally.unknown_events.get(shape, 0) + 1
            continue
        tr = truth[sel]
        wt = weight[sel]
        faded = tr >= 0
        if faded.any():
            major = fb.CAUSES[int(np.argmax(np.bincount(tr[faded], weights=wt[faded], minlength=len(fb.CAUSES))))]
        else:
            major = "none"
        conf = float(events.at[i, "confidence"]) if pd.notna(events.at[i, "confidence"]) else 0.0
        tally.events.append((shape, conf, cause == major, cause))
        tally.covers.append(major != "none")


def _agreement(tally: Tally, truth: fb.HopTruth, one_min: dict, fifteen: dict, shape15: str) -> None:
    n = next(iter(truth.rsl_dbm.values())).size
    for ch in truth.hop.channels:
        if ch not in one_min or ch not in fifteen:
            continue
        tcodes = truth.cause_codes(ch)
        a = tally.agree.setdefault(shape15, [0, 0])
        for start in range(0, n - 899, 900):
            tr = tcodes[start:start + 900]
            if (tr >= 0).sum() < 60:
                continue
            # 1-min samples in this interval (the called code at each sampled minute)
            m = one_min[ch][start:start + 900:60]
            mt = tr[::60]
            use = m[mt >= 0] if (mt >= 0).any() else m
            verdict1 = int(np.bincount(use, minlength=len(CALLED)).argmax())
            verdict15 = int(fifteen[ch][start])
            a[1] += 1
            a[0] += int(verdict1 == verdict15)


def analyse_world(world: fb.World, out_dir: Path, shapes, tally: Tally, timing: dict) -> None:
    from diag.links import read_links_table
    from diag.pipeline import analyze_files

    t0 = time.perf_counter()
    files = FAMILY.write_world(world, out_dir, shapes)
    timing["write_s"] = timing.get("write_s", 0.0) + time.perf_counter() - t0
    links = read_links_table(out_dir / "links.csv")
    by_id = {t.hop.link_id: t for t in world.hops}
    calls: dict[str, dict] = {}
    for shape in shapes:
        t0 = time.perf_counter()
        results = analyze_files(files[shape], links=links, config=bench_config())
        timing[shape] = timing.get(shape, 0.0) + time.perf_counter() - t0
        for res in results:
            if res.error:
                print(f"  {res.link.link_id} {shape}: analysis error {res.error}", file=sys.stderr)
                continue
            calls[(res.link.link_id, shape)] = score_hop(tally, by_id[res.link.link_id], res, shape)
    for link_id, truth in by_id.items():
        for s15 in ("15min_mam", "15min_mm"):
            if (link_id, "1min") in calls and (link_id, s15) in calls:
                _agreement(tally, truth, calls[(link_id, "1min")], calls[(link_id, s15)], s15)


# ---------------------------------------------------------------------------------------------------------------
# figures

def macro_f1(m: np.ndarray) -> float:
    f1s = []
    for i in range(len(fb.CAUSES)):
        row = m[i].sum()
        if row <= 0:
            continue
        tp = m[i, i]
        fp = m[:, i].sum() - tp
        fn = row - tp
        f1s.append(2 * tp / (2 * tp + fp + fn) if tp > 0 else 0.0)
    return float(np.mean(f1s)) if f1s else float("nan")


def unknown_share(m: np.ndarray) -> float:
    tot = m.sum()
    return float(m[:, CALLED.index("unknown")].sum() / tot) if tot else float("nan")


def reliability(records, shape=None, bins=10):
    rec = [(c, r) for s, c, r, _ in records if shape is None or s == shape]
    rows = []
    if not rec:
        return rows, float("nan")
    conf = np.array([c for c, _ in rec])
    right = np.array([r for _, r in rec], dtype=float)
    edges = np.linspace(0.0, 1.0, bins + 1)
    idx = np.clip(np.digitize(conf, edges[1:-1]), 0, bins - 1)
    ece = 0.0
    for b in range(bins):
        sel = idx == b
        if not sel.any():
            continue
        mc, acc = conf[sel].mean(), right[sel].mean()
        rows.append((edges[b], edges[b + 1], int(sel.sum()), mc, acc))
        ece += sel.sum() / conf.size * abs(mc - acc)
    return rows, float(ece)


def summary(tally: Tally) -> dict:
    """JSON-able figures: per cell and per sampling (diag and rule of thumb), calibration, agreement."""
    out = {"cells": [], "by_shape": {}, "calibration": {}, "agreement": {}}
    for cell in sorted(tally.diag):
        m, t = tally.diag[cell], tally.thumb[cell]
        out["cells"].append({"freq": cell[0], "length": cell[1], "shape": cell[2], "faded_s": float(m.sum()),
                             "f1": macro_f1(m), "f1_thumb": macro_f1(t), "unknown": unknown_share(m)})
    shapes = sorted({c[2] for c in tally.diag}, key=lambda s: fb.SHAPES.index(s))
    for shape in shapes:
        m = sum(v for k, v in tally.diag.items() if k[2] == shape)
        t = sum(v for k, v in tally.thumb.items() if k[2] == shape)
        rows, ece = reliability(tally.events, shape)
        _, ece_faded = reliability([e for e, c in zip(tally.events, tally.covers) if c], shape)
        out["by_shape"][shape] = {"faded_s": float(m.sum()), "f1": macro_f1(m), "f1_thumb": macro_f1(t),
                                  "unknown": unknown_share(m), "confusion": m.tolist(), "confusion_thumb": t.tolist(),
                                  "ece": ece, "ece_faded": ece_faded,
                                  "events": sum(1 for e in tally.events if e[0] == shape),
                                  "events_no_truth_fade": sum(1 for e, c in zip(tally.events, tally.covers)
                                                              if e[0] == shape and not c),
                                  "unknown_events": tally.unknown_events.get(shape, 0)}
        out["calibration"][shape] = rows
    rows, ece = reliability(tally.events)
    out["calibration"]["all"] = rows
    out["ece_all"] = ece
    for s15, (a, n) in tally.agree.items():
        out["agreement"][s15] = {"agree": a, "intervals": n, "share": a / n if n else float("nan")}
    return out


def _matrix_text(m: np.ndarray, title: str) -> str:
    head = f"{title:<14}" + "".join(f"{c[:10]:>11}" for c in CALLED)
    lines = [head]
    for i, c in enumerate(fb.CAUSES):
        if m[i].sum() <= 0:
            continue
        lines.append(f"{c:<14}" + "".join(f"{v / 60:11.1f}" for v in m[i]))
    return "\n".join(lines)


def worst_hops(tally: Tally, n: int = 10) -> str:
    """The hops with the most faded time called wrong (all shapes), with what was put on them."""
    rows = []
    for link_id, shape, hop, m in tally.hops:
        wrong = m.sum() - np.trace(m[:, : len(fb.CAUSES)])
        if wrong > 0:
            rows.append((wrong, link_id, shape, hop, m))
    rows.sort(key=lambda r: -r[0])
    lines = [f"== {n} hop logs with the most faded time called wrong =="]
    for wrong, link_id, shape, hop, m in rows[:n]:
        pairs = [f"{fb.CAUSES[i]}->{CALLED[j]} {m[i, j] / 60:.0f}" for i in range(m.shape[0])
                 for j in range(m.shape[1]) if i != j and m[i, j] >= 60]
        lines.append(f"{link_id:<9}{shape:<10}{hop.frequency_ghz:5.1f} GHz {hop.length_km:6.2f} km "
                     f"{hop.polarization:<4} atpc {hop.atpc_range_db:4.1f}  {','.join(hop.mechanisms)}: "
                     f"wrong {wrong / 60:.0f} min ("
                     + "; ".join(pairs) + ")")
    return "\n".join(lines)


def report(tally: Tally, *, cells: bool = True, matrices: bool = False) -> str:
    s = summary(tally)
    lines = []
    name = "Family " + FAMILY.__name__.rsplit("_", 1)[-1].upper()
    lines.append(f"== {name}: per sampling (time-weighted over faded truth samples) ==")
    lines.append(f"{'sampling':<11}{'faded min':>11}{'macro-F1':>10}{'thumb F1':>10}{'unknown':>9}{'events':>8}"
                 f"{'ECE':>7}{'no fade':>9}{'ECE faded':>11}")
    for shape, v in s["by_shape"].items():
        lines.append(f"{shape:<11}{v['faded_s'] / 60:11.0f}{v['f1']:10.3f}{v['f1_thumb']:10.3f}"
                     f"{100 * v['unknown']:8.1f}%{v['events']:8d}{v['ece']:7.3f}{v['events_no_truth_fade']:9d}"
                     f"{v['ece_faded']:11.3f}")
    lines.append("(no fade: events covering no faded truth second, counted wrong in ECE; ECE faded: ECE over the "
                 "other events)")
    lines.append("")
    lines.append("-- per cause: share of the cause's faded time called right (recall), diag / rule of thumb --")
    lines.append(f"{'sampling':<11}" + "".join(f"{c:>20}" for c in fb.CAUSES))
    for shape, v in s["by_shape"].items():
        m, t = np.array(v["confusion"]), np.array(v["confusion_thumb"])
        cells_txt = []
        for i in range(len(fb.CAUSES)):
            row = m[i].sum()
            cells_txt.append(f"{100 * m[i, i] / row:8.1f}% /{100 * t[i, i] / row:6.1f}%" if row else f"{'-':>20}")
        lines.append(f"{shape:<11}" + "".join(f"{c:>20}" for c in cells_txt))
    for shape in s["by_shape"]:
        lines.append("")
        lines.append(f"-- confusion, {shape} (minutes; rows truth, columns called) --")
        lines.append(_matrix_text(np.array(s["by_shape"][shape]["confusion"]), "diag"))
        lines.append(_matrix_text(np.array(s["by_shape"][shape]["confusion_thumb"]), "rule of thumb"))
    if cells:
        lines.append("")
        lines.append("== per frequency x length x sampling cell ==")
        lines.append(f"{'freq':<12}{'length':<10}{'sampling':<11}{'faded min':>10}{'F1':>7}{'thumb':>7}"
                     f"{'unknown':>9}")
        for c in s["cells"]:
            lines.append(f"{c['freq']:<12}{c['length']:<10}{c['shape']:<11}{c['faded_s'] / 60:10.0f}"
                         f"{c['f1']:7.3f}{c['f1_thumb']:7.3f}{100 * c['unknown']:8.1f}%")
    if matrices:
        for cell in sorted(tally.diag):
            lines.append("")
            lines.append(f"-- confusion, {cell[0]} x {cell[1]} x {cell[2]} (minutes) --")
            lines.append(_matrix_text(tally.diag[cell], "diag"))
            lines.append(_matrix_text(tally.thumb[cell], "rule of thumb"))
    lines.append("")
    lines.append("== calibration (fade events, unknown left out) ==")
    lines.append(f"{'confidence':<12}{'events':>8}{'mean conf':>11}{'right':>8}")
    for lo, hi, nb, mc, acc in s["calibration"]["all"]:
        lines.append(f"{lo:.1f}-{hi:.1f}{'':<5}{nb:8d}{mc:11.3f}{acc:8.3f}")
    lines.append(f"ECE (all samplings) {s['ece_all']:.3f}; unknown events: {dict(tally.unknown_events)}")
    lines.append("")
    lines.append("== 1-min vs 15-min verdicts of the same hops (intervals with >= 60 faded truth s) ==")
    for s15, v in s["agreement"].items():
        lines.append(f"{s15:<11} {v['agree']}/{v['intervals']} = {100 * v['share']:.1f}%")
    return "\n".join(lines)


def run(seeds, shapes=fb.SHAPES, out_dir: Path = DEFAULT_OUT, progress=True) -> tuple[Tally, dict]:
    tally = Tally()
    timing: dict = {}
    for seed in seeds:
        t0 = time.perf_counter()
        world = FAMILY.make_world(seed)
        timing["generate_s"] = timing.get("generate_s", 0.0) + time.perf_counter() - t0
        analyse_world(world, Path(out_dir) / f"seed{seed:03d}", shapes, tally, timing)
        if progress:
            print(f"  seed {seed}: {len(world.hops)} hops", file=sys.stderr)
    return tally, timing


def _seed_list(text: str) -> list[int]:
    out = []
    for part in text.split(","):
        if "-" in part:
            a, b = part.split("-")
            out.extend(range(int(a), int(b) + 1))
        elif part:
            out.append(int(part))
    return out


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seeds", default="51-60", help="seed list, e.g. 51-60 (held-out half is 51-100)")
    ap.add_argument("--shapes", default=",".join(fb.SHAPES))
    ap.add_argument("--out", default=str(DEFAULT_OUT))
    ap.add_argument("--worst", type=int, default=10, help="list this many worst hop logs")
    args = ap.parse_args(argv)
    seeds = _seed_list(args.seeds)
    tally, timing = run(seeds, tuple(args.shapes.split(",")), Path(args.out))
    print(report(tally))
    print(worst_hops(tally, args.worst))
    print("timing (s): " + ", ".join(f"{k} {v:.1f}" for k, v in timing.items()))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
