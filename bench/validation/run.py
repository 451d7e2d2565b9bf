"""Print every validation table: scenario family B (held-out half) and the OpenRainER real-data count.

    .venv/bin/python bench/validation/run.py            # held-out seeds 51-100 (about 6 s a seed)
    .venv/bin/python bench/validation/run.py --quick    # held-out seeds 51-56
    .venv/bin/python bench/validation/run.py --fit-half # the fit half (seeds 1-50) instead
    .venv/bin/python bench/validation/run.py --variant  # seeds 101-150, made by the changed process B2
    .venv/bin/python bench/validation/run.py --family c # family C (family_c.py), clean held-out seeds 32-50
    .venv/bin/python bench/validation/run.py --level-step-db 1   # family B's levels written in whole dB
    .venv/bin/python bench/validation/run.py --real-only --real-all   # only the real count, on all 141 links
    .venv/bin/python bench/validation/run.py --real-only --real-base DIR  # ... on any folder of the same layout

Generated logs go to bench/output/validation/ (git-ignored) and are rewritten on each run.
"""
from __future__ import annotations

import argparse
import json
import os
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

import family_b as fb  # noqa: E402
import score  # noqa: E402


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description="family B held-out scores and the OpenRainER real-data count")
    ap.add_argument("--quick", action="store_true", help="6 seeds of the chosen half")
    ap.add_argument("--attribution", choices=("posterior", "rules"), default=None,
                    help="cause attribution to score (default: posterior, or DIAG_BENCH_ATTRIBUTION)")
    ap.add_argument("--fit-half", action="store_true", help="score the fit half (seeds 1-50) instead")
    ap.add_argument("--variant", action="store_true",
                    help="score seeds 101-150, made by the changed process B2 (held out from every fit)")
    ap.add_argument("--family", choices=("b", "c"), default="b",
                    help="scenario family: b (family_b.py, default) or c (family_c.py, written independently of both "
                         "the tool and family B)")
    ap.add_argument("--level-step-db", type=float, default=None,
                    help="family B only: write the levels rounded to this step (default 0.1; 1 = whole dB)")
    ap.add_argument("--seeds", default=None, help="these seeds instead of a whole half, e.g. 32-50")
    ap.add_argument("--no-real", action="store_true", help="skip the OpenRainER count")
    ap.add_argument("--real-only", action="store_true", help="only the OpenRainER count (skip family B)")
    ap.add_argument("--real-base", default=None,
                    help="folder of the real-data count (links_metadata.csv, links/, gauges...; default: the "
                         "15-link csv subset)")
    ap.add_argument("--real-all", action="store_true",
                    help="shortcut for --real-base at the all-links conversion (csv_all, openrainer_convert.py)")
    ap.add_argument("--real-minmax", type=int, default=None, metavar="SECONDS",
                    help="analyse the real logs as min/max exports of this interval (e.g. 900), built from the "
                         "1-min samples; minutes are still labelled from the 1-min log")
    ap.add_argument("--real-agreement", action="store_true",
                    help="also count the faded minutes where the 1-min analysis and the 15-min min/max one agree")
    ap.add_argument("--no-cells", action="store_true", help="leave out the per-cell table")
    ap.add_argument("--matrices", action="store_true", help="print the confusion matrix of every cell")
    ap.add_argument("--worst", type=int, default=10, help="list this many worst hop logs")
    ap.add_argument("--out", default=str(score.DEFAULT_OUT))
    ap.add_argument("--json", help="also write every figure to this JSON file")
    args = ap.parse_args(argv)
    if args.attribution:
        os.environ["DIAG_BENCH_ATTRIBUTION"] = args.attribution
        score.ATTRIBUTION = args.attribution
    import diag

    print(f"diag analysed with: {Path(diag.__file__).parent}; attribution {score.ATTRIBUTION}")
    figures = {"diag": str(Path(diag.__file__).parent), "attribution": score.ATTRIBUTION}
    if not args.real_only:
        fam = fb
        if args.family == "c":
            import family_c as fam
            if args.variant or args.level_step_db is not None:
                print("error: --variant and --level-step-db apply to family B only", file=sys.stderr)
                return 2
            score.use_family(fam)
        if args.level_step_db is not None:
            if not args.level_step_db > 0:
                print("error: --level-step-db must be positive", file=sys.stderr)
                return 2
            fb.LEVEL_STEP_DB = args.level_step_db
        seeds = (fam.FIT_SEEDS if args.fit_half else fb.VARIANT_SEEDS if args.variant
                 else getattr(fam, "CLEAN_HELDOUT_SEEDS", fam.HELDOUT_SEEDS))
        if args.seeds:
            seeds = tuple(score._seed_list(args.seeds))
        if args.quick:
            seeds = seeds[:6]
        t0 = time.perf_counter()
        tally, timing = score.run(seeds, fam.SHAPES, Path(args.out))
        t_sim = time.perf_counter() - t0
        half = "FIT" if args.fit_half else "HELD-OUT (changed process B2)" if args.variant else "HELD-OUT"
        if args.seeds:
            fit = set(seeds) & set(fam.FIT_SEEDS)
            half = "FIT" if fit == set(seeds) else "MIXED fit and held-out" if fit else half
        step = f", levels in {args.level_step_db:g}-dB steps" if args.level_step_db is not None else ""
        print(f"Family {args.family.upper()}, {half} half, seeds {seeds[0]}-{seeds[-1]} ({len(seeds)} seeds){step}")
        print(score.report(tally, cells=not args.no_cells, matrices=args.matrices))
        print(score.worst_hops(tally, args.worst))
        print("timing (s): " + ", ".join(f"{k} {v:.1f}" for k, v in timing.items())
              + f"; family {args.family.upper()} total {t_sim:.1f}")
        figures.update({"half": half, "seeds": list(seeds), f"family_{args.family}": score.summary(tally),
                        "timing_s": timing, "level_step_db": args.level_step_db})
    if not args.no_real:
        try:
            import realdata
        except ImportError:
            realdata = None
        if realdata is not None:
            base = Path(args.real_base) if args.real_base else realdata.DATA_ALL if args.real_all else realdata.DATA
            if not (base / "links_metadata.csv").is_file():
                print(f"error: {base} has no links_metadata.csv (make csv_all with openrainer_convert.py)",
                      file=sys.stderr)
                return 2
            t0 = time.perf_counter()
            res = realdata.evaluate(base=base, minmax_s=args.real_minmax)
            print()
            print(f"real data: {base}" + (f", analysed as {args.real_minmax}-s min/max exports"
                                          if args.real_minmax else ""))
            print(realdata.report(res))
            import resource

            peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
            print(f"real-data time {time.perf_counter() - t0:.1f} s ({len(res['per_link'])} links); "
                  f"peak memory of this process {peak_mb:.0f} MB")
            figures["openrainer"] = {k: vars(c) for k, c in res["per_link"].items()}
            figures["openrainer"]["total"] = vars(res["total"])
            figures["openrainer_noise_floor_links"] = res.get("noise_floor", [])
            figures["openrainer_bands"] = {b: {"links": n, **vars(c)}
                                           for b, (n, c) in realdata.band_totals(res).items()}
            if args.real_agreement:
                agree = realdata.agreement(base=base)
                n, same = agree["faded_minutes"], agree["agree"]
                print(f"1-min against 15-min min/max verdicts of the same faded minutes: {same}/{n} agree "
                      f"({100.0 * same / max(n, 1):.1f} %); largest disagreements (1 min -> 15 min, minutes):")
                ns, ss = agree["faded_minutes_signal"], agree["agree_signal"]
                print(f"  without the links that read noise only: {ss}/{ns} ({100.0 * ss / max(ns, 1):.1f} %)")
                worst = sorted(((v, k) for k, v in agree["pairs"].items() if k[0] != k[1]), reverse=True)[:6]
                print("  " + "; ".join(f"{a} -> {b} {v}" for v, (a, b) in worst))
                figures["openrainer_agreement"] = {"faded_minutes": n, "agree": same, "faded_minutes_signal": ns,
                                                   "agree_signal": ss,
                                                   "pairs": {f"{a}->{b}": v for (a, b), v in agree["pairs"].items()}}
    if args.json:
        Path(args.json).write_text(json.dumps(figures, indent=1, default=float))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
