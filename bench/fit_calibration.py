"""Fit the posterior's confidence temperature per sampling on the FIT half of scenario family B (seeds 1-50 only).

Temperature scaling (Guo et al., "On calibration of modern neural networks", ICML 2017): the posterior's logits are
divided by T before the softmax, which leaves every verdict (the arg-max) unchanged and only makes the stated
confidence match how often such verdicts are right.  One T per sampling kind of ``diag.analysis.attribution``
("fine": 10 s or finer, "coarse": instantaneous samples up to 5 min apart, "stats": interval min/avg/max), fitted by
maximum likelihood of right/wrong over the propagation verdicts (rain, multipath, refractive) of the fit-half
events, with the rest of the posterior taken as one class (the events keep only the top confidence).  The values go
into ``attribution.TEMPERATURE`` by hand; the held-out seeds judge them (``bench/validation/run.py``).

    .venv/bin/python bench/fit_calibration.py [--seeds 1-20]
"""
from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE / "validation"))
sys.path.insert(0, str(HERE.parent))

import family_b as fb  # noqa: E402
import score  # noqa: E402

KIND = {"1s": "fine", "1min": "coarse", "15min_mam": "stats", "15min_mm": "stats"}


def _scaled(p: np.ndarray, t: float) -> np.ndarray:
    p = np.clip(p, 1e-4, 1 - 1e-4)
    a, b = np.log(p) / t, np.log1p(-p) / t
    return 1.0 / (1.0 + np.exp(b - a))


def fit_t(conf: np.ndarray, right: np.ndarray) -> float:
    grid = np.exp(np.linspace(np.log(0.5), np.log(20.0), 400))
    nll = [-np.mean(np.where(right, np.log(_scaled(conf, t)), np.log1p(-_scaled(conf, t)))) for t in grid]
    return float(grid[int(np.argmin(nll))])


def ece(conf: np.ndarray, right: np.ndarray, bins: int = 10) -> float:
    idx = np.clip(np.digitize(conf, np.linspace(0, 1, bins + 1)[1:-1]), 0, bins - 1)
    return float(sum((idx == b).sum() / conf.size * abs(conf[idx == b].mean() - right[idx == b].mean())
                     for b in range(bins) if (idx == b).any()))


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--seeds", default="1-20", help="fit-half seeds (within 1-50)")
    args = ap.parse_args(argv)
    seeds = score._seed_list(args.seeds)
    if not set(seeds) <= set(fb.FIT_SEEDS):
        raise SystemExit("fit_calibration: only fit-half seeds (1-50)")
    os.environ["DIAG_BENCH_ATTRIBUTION"] = "posterior"
    score.ATTRIBUTION = "posterior"
    tally, _ = score.run(seeds, fb.SHAPES, score.DEFAULT_OUT / "fit")
    for kind in ("fine", "coarse", "stats"):
        rec = [(c, r) for s, c, r, cause in tally.events
               if KIND[s] == kind and cause in ("rain", "multipath", "refractive")]
        conf = np.array([c for c, _ in rec])
        right = np.array([r for _, r in rec], dtype=bool)
        t = fit_t(conf, right)
        print(f"{kind:7s} events {conf.size:5d}  right {right.mean():.3f}  mean conf {conf.mean():.3f}  "
              f"ECE {ece(conf, right):.3f} -> T {t:.2f}: ECE {ece(_scaled(conf, t), right):.3f}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
