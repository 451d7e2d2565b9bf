"""Accuracy of the diagnosis on labelled simulator output, next to a simple rule of thumb.

Scenarios come from :func:`diag.sim.simulate.random_scenario`.  The rules in :mod:`diag.analysis.classify` were tuned
ONLY on
the seeds in ``TUNING_SEEDS``; the figures in docs/validation.md §3 come from ``EVALUATION_SEEDS`` (disjoint, never
looked at while tuning).  Run::

    .venv/bin/python bench/bench_accuracy.py            # evaluation seeds (docs/validation.md §3)
    .venv/bin/python bench/bench_accuracy.py --tuning   # tuning seeds

Measures, per run:

- 1-s logs: time-weighted macro F1 over the causes on faded samples.  A sample counts when the truth says it is
  faded (total fade > 3 dB; truth cause = largest contribution) or the analysis puts it in an event with a
  measured attenuation above 3 dB (then a wrong or missing call counts against the F1);
- the share of below-threshold seconds (measured level under the receiver threshold, or at the floor) whose
  cause is right;
- the same macro F1 for 15-min min/avg/max statistics of the same hops (simulator aggregation), each 1-s truth
  sample judged by the cause of its 15-min interval;
- level shifts: time and size error of the detected step nearest each simulated one (within 2 h);
- polarisation tilt error where the hop has a tilt and the cross-polar analysis reports one;
- the rule of thumb "fade longer than 5 min = rain, else multipath" applied to the same events, side by side.
"""
from __future__ import annotations

import argparse
import math
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from diag import schema as S  # noqa: E402
from diag.pipeline import analyze_link  # noqa: E402
from diag.sim.simulate import aggregate_statistics, random_scenario, simulate_link  # noqa: E402

TUNING_SEEDS = (101, 102, 103, 104, 105, 106)
EVALUATION_SEEDS = (9001, 9002, 9003, 9004, 9005, 9006, 9007, 9008)
CAUSES = (S.RAIN, S.MULTIPATH, S.REFRACTIVE, S.LEVEL_SHIFT, S.SIGNAL_LOSS)
BARS = {"f1_1s": 0.90, "below_right": 0.95, "f1_15min": 0.75, "tilt_deg": 1.0, "shift_min": 15.0, "shift_db": 1.0}


def macro_f1(truth: np.ndarray, pred: np.ndarray, weight: np.ndarray | None = None) -> tuple[float, dict]:
    """Macro F1 over the causes present in truth or prediction ("" = no event, never a class of its own)."""
    weight = np.ones(len(truth)) if weight is None else weight
    scores = {}
    for cause in CAUSES:
        t, p = truth == cause, pred == cause
        if not (t.any() or p.any()):
            continue
        tp = float(weight[t & p].sum())
        fp = float(weight[~t & p].sum())
        fn = float(weight[t & ~p].sum())
        scores[cause] = 2 * tp / (2 * tp + fp + fn) if tp + fp + fn > 0 else 1.0
    return (float(np.mean(list(scores.values()))) if scores else math.nan), scores


def _rule_of_thumb(result) -> dict[str, np.ndarray]:
    """Per-channel causes if every fade event were called by duration alone (> 5 min rain, else multipath)."""
    out = {}
    events = result.events
    for name, series in result.series.items():
        cause = np.full(len(series.frame), "", dtype=object)
        if len(events):
            mine = events[(events["channel"] == name) & (events["event_kind"] == "fade")]
            mine = mine.sort_values("duration_s", ascending=False)
            for a, b, d in zip(mine["start_index"], mine["end_index"], mine["duration_s"]):
                cause[int(a):int(b)] = S.RAIN if d > 300 else S.MULTIPATH
        out[name] = cause
    return out


def _collect(result, sim, *, stats: bool) -> dict[str, list[np.ndarray]]:
    """Aligned per-sample truth / prediction arrays for one hop (1-s truth samples)."""
    truth = sim.truth_samples
    thumb = _rule_of_thumb(result)
    acc = {"truth": [], "pred": [], "thumb": [], "below": [], "faded_pred": []}
    for name, series in result.series.items():
        tr = truth[truth["channel"] == name]
        tr = tr[tr["logged"].to_numpy()]
        frame = series.frame
        t_ns = tr["time_utc"].to_numpy(dtype="datetime64[ns]").astype(np.int64)
        g_ns = frame.index.to_numpy(dtype="datetime64[ns]").astype(np.int64)
        step = int(round(series.interval_s * 1e9))
        pos = (t_ns - g_ns[0]) // step if stats else np.rint((t_ns - g_ns[0]) / step).astype(np.int64)
        ok = (pos >= 0) & (pos < len(frame))
        pos = pos[ok]
        tcause = tr["cause"].to_numpy(dtype=object)[ok]
        pcause = frame["cause"].to_numpy(dtype=object)[pos]
        status = frame["status"].to_numpy(dtype=object)[pos]
        observed = status != "no_data"
        if not stats:
            observed &= status != S.MISSING
        att_col = "attenuation_peak_db" if stats else "attenuation_db"
        att = frame[att_col].to_numpy(dtype=float)[pos]
        lost = status == S.SIGNAL_LOST
        with np.errstate(invalid="ignore"):
            faded_pred = (pcause != "") & ((att > 3.0) | lost)
            rsl = frame["rsl_dbm"].to_numpy(dtype=float)[pos]
            below = lost | (rsl < result.link.threshold_dbm)
        # 1-s: truth-faded or called-faded samples; 15-min: truth-faded samples only (a 15-min record cannot
        # say which seconds of its interval faded, so its false alarms are counted per interval instead)
        keep = observed & ((tcause != "") | (faded_pred & (not stats)))
        acc["truth"].append(tcause[keep])
        acc["pred"].append(pcause[keep])
        acc["thumb"].append(thumb[name][pos][keep])
        acc["below"].append((below & observed & (tcause != ""))[keep])
        acc["faded_pred"].append(faded_pred[keep])
    return acc


def event_truth(result, sim) -> pd.DataFrame:
    """The events with the majority true cause of their truth-faded samples ("" when none faded)."""
    events = result.events.copy()
    truth = sim.truth_samples
    labels = []
    for _, row in events.iterrows():
        tr = truth[(truth["channel"] == row["channel"]) & (truth["time_utc"] >= row["start_utc"])
                   & (truth["time_utc"] < row["end_utc"])]
        causes = tr["cause"][tr["cause"] != ""]
        labels.append(causes.value_counts().index[0] if len(causes) else "")
    events["truth"] = labels
    events["seed_link"] = sim.spec.link_id
    events["frequency_ghz"] = sim.spec.frequency_ghz
    events["length_km"] = sim.spec.length_km
    return events


def _shift_errors(result, sim) -> list[tuple[float, float]]:
    truth = sim.truth_events
    truth = truth[truth["kind"] == "level_shift"]
    found = result.events[result.events["event_kind"] == "level_shift"] if len(result.events) else result.events
    errors = []
    for _, row in truth.iterrows():
        t0 = pd.Timestamp(row["shift_utc"])
        size = float(row["step_db"])
        cands = found[found["channel"] == row["channel"]] if len(found) else found
        best = None
        if len(cands):
            dt = (cands["start_utc"] - t0).abs().dt.total_seconds()
            i = dt.idxmin()
            if dt[i] <= 7200:
                best = (dt[i] / 60.0, abs(-float(cands.at[i, "step_db"]) - size))
        errors.append(best if best else (math.inf, math.inf))
    return errors


def _tilt_errors(result, sim) -> list[float]:
    spec = sim.spec
    truth = sim.truth_events
    tilts = [float(t) for t in truth.get("tilt_deg", pd.Series([], dtype=float)).dropna() if t and t > 0]
    true_tilt = spec.tilt_deg + (max(tilts) if tilts else 0.0)
    if not (1.0 <= true_tilt <= 10.0):
        return []
    cp = result.cross_polar or {}
    found = []
    for value in _find_key(cp, "tilt_deg"):
        if isinstance(value, (int, float)) and math.isfinite(value):
            found.append(float(value))
    if not found:
        return [math.inf]
    return [min(abs(v - true_tilt) for v in found)]


def _find_key(obj, key):
    if isinstance(obj, dict):
        for k, v in obj.items():
            if k == key:
                yield v
            else:
                yield from _find_key(v, key)
    elif isinstance(obj, list):
        for v in obj:
            yield from _find_key(v, key)


def run(seeds, *, n_links: int = 3, duration_h: float = 48.0, verbose: bool = False, dump: list | None = None,
        margin_db: float | None = None) -> dict:
    pooled = {"1s": {"truth": [], "pred": [], "thumb": [], "below": []},
              "15min": {"truth": [], "pred": [], "thumb": [], "below": []}}
    shifts, tilts = [], []
    t_sim = t_an = 0.0
    n_hops = 0
    for seed in seeds:
        scenario = random_scenario(seed, n_links=n_links, duration_h=duration_h)
        for spec in scenario.links:
            if margin_db is not None:  # stress test: thinner fade margin so propagation fades cross the threshold
                spec = spec.replace(threshold_dbm=float(round(spec.nominal_dbm - margin_db)))
            t = time.perf_counter()
            sim = simulate_link(spec, seed=seed)
            t_sim += time.perf_counter() - t
            t = time.perf_counter()
            result = analyze_link(sim.table, sim.link)
            t_an += time.perf_counter() - t
            acc = _collect(result, sim, stats=False)
            if dump is not None:
                dump.append(event_truth(result, sim))
            for k in pooled["1s"]:
                pooled["1s"][k].extend(acc[k])
            shifts.extend(_shift_errors(result, sim))
            tilts.extend(_tilt_errors(result, sim))
            stats_table = aggregate_statistics(sim.table, interval_s=900.0, floor_dbm=spec.floor_value_dbm)
            t = time.perf_counter()
            result15 = analyze_link(stats_table, sim.link)
            t_an += time.perf_counter() - t
            acc15 = _collect(result15, sim, stats=True)
            if dump is not None:
                dump.append(event_truth(result15, sim))
            for k in pooled["15min"]:
                pooled["15min"][k].extend(acc15[k])
            n_hops += 1
            if verbose:
                f1, per = macro_f1(np.concatenate(acc["truth"]), np.concatenate(acc["pred"]))
                print(f"  seed {seed} {spec.link_id} {spec.frequency_ghz:g} GHz {spec.length_km:g} km "
                      f"{spec.polarization}: F1 {f1:.3f} {({k: round(v, 2) for k, v in per.items()})}",
                      file=sys.stderr)
    out = {"hops": n_hops, "seeds": list(seeds), "simulate_s": t_sim, "analyse_s": t_an}
    for res, acc in pooled.items():
        truth = np.concatenate(acc["truth"])
        pred = np.concatenate(acc["pred"])
        thumb = np.concatenate(acc["thumb"])
        below = np.concatenate(acc["below"])
        out[res] = {"f1": macro_f1(truth, pred), "thumb_f1": macro_f1(truth, thumb),
                    "below_right": float(np.mean(pred[below] == truth[below])) if below.any() else math.nan,
                    "thumb_below_right": float(np.mean(thumb[below] == truth[below])) if below.any() else math.nan,
                    "below_s": int(below.sum()), "samples": int(len(truth)),
                    "below_by_cause": {c: (int((truth[below] == c).sum()),
                                           int(((truth == c) & (pred == c))[below].sum()))
                                       for c in CAUSES if (truth[below] == c).any()},
                    "confusion": pd.crosstab(pd.Series(truth, name="truth"), pd.Series(pred, name="pred"))}
    out["shifts"] = shifts
    out["tilts"] = tilts
    return out


def _fmt(x: float, pct: bool = False) -> str:
    if not math.isfinite(x):
        return "n/a"
    return f"{100 * x:.1f} %" if pct else f"{x:.3f}"


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--tuning", action="store_true", help="run the tuning seeds instead of the evaluation seeds")
    parser.add_argument("--links", type=int, default=3, help="hops per scenario (default 3)")
    parser.add_argument("--hours", type=float, default=48.0, help="hours per hop (default 48)")
    parser.add_argument("-v", "--verbose", action="store_true")
    parser.add_argument("--confusion", action="store_true", help="print the confusion matrices")
    parser.add_argument("--margin-db", type=float, default=None, metavar="M",
                        help="set every hop's threshold M dB below its clear-sky level (stress test of the "
                             "below-threshold attribution; default: the scenario's own 30-42 dB)")
    parser.add_argument("--dump", metavar="CSV", help="write every event with its majority true cause (tuning aid)")
    args = parser.parse_args(argv)
    seeds = TUNING_SEEDS if args.tuning else EVALUATION_SEEDS
    t0 = time.perf_counter()
    dump = [] if args.dump else None
    out = run(seeds, n_links=args.links, duration_h=args.hours, verbose=args.verbose, dump=dump,
              margin_db=args.margin_db)
    if dump:
        pd.concat(dump, ignore_index=True).to_csv(args.dump, index=False)
    wall = time.perf_counter() - t0
    one, q = out["1s"], out["15min"]
    shift_t = [e[0] for e in out["shifts"]]
    shift_s = [e[1] for e in out["shifts"]]
    print(f"accuracy on {'TUNING' if args.tuning else 'EVALUATION'} seeds {list(seeds)}: {out['hops']} hops x "
          f"{args.hours:g} h{'' if args.margin_db is None else f', fade margin {args.margin_db:g} dB'} "
          f"(simulate {out['simulate_s']:.0f} s, analyse {out['analyse_s']:.0f} s, wall {wall:.0f} s)")
    print(f"{'measure':<52}{'diag':>10}{'rule of thumb':>15}{'bar':>10}")
    print(f"{'1-s logs: macro F1 on faded samples':<52}{_fmt(one['f1'][0]):>10}{_fmt(one['thumb_f1'][0]):>15}"
          f"{'>= 0.90':>10}")
    print(f"{'1-s logs: below-threshold seconds, right cause':<52}{_fmt(one['below_right'], True):>10}"
          f"{_fmt(one['thumb_below_right'], True):>15}{'>= 95 %':>10}")
    print(f"{'15-min statistics: macro F1 on faded samples':<52}{_fmt(q['f1'][0]):>10}{_fmt(q['thumb_f1'][0]):>15}"
          f"{'>= 0.75':>10}")
    print(f"{'15-min statistics: below-threshold seconds, right':<52}{_fmt(q['below_right'], True):>10}"
          f"{_fmt(q['thumb_below_right'], True):>15}{'':>10}")
    for label, key in (("1-s", "1s"), ("15-min", "15min")):
        per = out[key]["f1"][1]
        thumb = out[key]["thumb_f1"][1]
        print(f"  {label} F1 per cause: " + ", ".join(
            f"{c} {per.get(c, math.nan):.2f} (thumb {thumb.get(c, math.nan):.2f})"
            for c in CAUSES if c in per or c in thumb))
    if shift_t:
        found = [t for t in shift_t if math.isfinite(t)]
        print(f"level shifts: {len(found)}/{len(shift_t)} found; time error max "
              f"{max(found) if found else math.nan:.1f} min (bar 15), size error max "
              f"{max([s for s in shift_s if math.isfinite(s)] or [math.nan]):.2f} dB (bar 1)")
    else:
        print("level shifts: none in these scenarios")
    if out["tilts"]:
        found = [t for t in out["tilts"] if math.isfinite(t)]
        print(f"polarisation tilt (1-10 deg): {len(found)}/{len(out['tilts'])} estimated; error max "
              f"{max(found) if found else math.nan:.2f} deg (bar 1)")
    else:
        print("polarisation tilt: no hop with a 1-10 deg tilt and cross-polar data in these scenarios")
    print(f"samples judged: 1-s {one['samples']}, below threshold {one['below_s']} s; 15-min {q['samples']}")
    for label, part in (("1-s", one), ("15-min", q)):
        print(f"below-threshold seconds by true cause (right/all), {label}: " + ", ".join(
            f"{c} {r}/{n}" for c, (n, r) in part["below_by_cause"].items()))
    if args.confusion:
        print("1-s confusion (rows truth, columns diagnosis):")
        print(one["confusion"].to_string())
        print("15-min confusion:")
        print(q["confusion"].to_string())
    return 0


if __name__ == "__main__":
    sys.exit(main())
