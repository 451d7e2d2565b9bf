"""Leave-one-link-out choice of the network-silence setting on the 141 real OpenRainER links (1-min logs).

The one setting of the cause attribution chosen on real data: how strongly near hops that stayed quiet argue
against rain (``attribution.NETWORK_SILENCE_PER_HOUR`` x ``NETWORK_SILENCE_MAX``; candidates per hour 0 / 1 x bound
3 / 6 / 10).  Every candidate analyses the whole network once (network corroboration on, no gauge); then, for each
link L, the candidate with the smallest loss on the OTHER 140 links is chosen and L is counted with it, by the
counting rules of ``bench/validation/realdata.py`` (issue 14's definitions: faded, wet, dry minutes).  Two losses:

- plain: missed wet share + dry share called rain (the loss used since the setting was first chosen);
- target-normalised: each share over the issue's allowance, missed wet / 0.10 + dry / 0.05 (first computed on
  2026-12-05 after a plain-loss fold flipped; reported beside the plain one, not instead of it).

The rule of thumb ("a fade longer than 5 min is rain") is printed beside the totals.  Needs the all-links conversion
(``bench/validation/openrainer_convert.py``); about 30 s per candidate.

    .venv/bin/python bench/lolo_network_silence.py
"""
from __future__ import annotations

import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))
sys.path.insert(0, str(HERE / "validation"))

import realdata as rd  # noqa: E402

from diag.analysis import attribution as A  # noqa: E402

CANDIDATES = [(per_hour, bound) for per_hour in (0.0, 1.0) for bound in (3.0, 6.0, 10.0)]
LOSSES = {
    "plain": lambda missed_wet, dry: missed_wet + dry,
    "target-normalised": lambda missed_wet, dry: missed_wet / 0.10 + dry / 0.05,
}


def _shares(counts) -> tuple[float, float]:
    t = rd.Count()
    for c in counts:
        t.add(c)
    return 1.0 - t.wet_rain / t.wet_faded, t.dry_rain / t.dry_faded


def main(argv=None) -> int:
    if not (rd.DATA_ALL / "links_metadata.csv").exists():
        print(f"lolo_network_silence: no all-links conversion at {rd.DATA_ALL} (run openrainer_convert.py)")
        return 2
    saved = (A.NETWORK_SILENCE_PER_HOUR, A.NETWORK_SILENCE_MAX)
    per = {}
    try:
        for cand in CANDIDATES:
            A.NETWORK_SILENCE_PER_HOUR, A.NETWORK_SILENCE_MAX = cand
            per[cand] = rd.evaluate(base=rd.DATA_ALL)["per_link"]
            missed, dry = _shares(per[cand].values())
            print(f"per hour {cand[0]:g}, bound {cand[1]:g}: in-sample wet {100 * (1 - missed):.1f} %, "
                  f"dry {100 * dry:.1f} % called rain", flush=True)
    finally:
        A.NETWORK_SILENCE_PER_HOUR, A.NETWORK_SILENCE_MAX = saved
    links = list(per[CANDIDATES[0]])
    for name, loss in LOSSES.items():
        total, choices = rd.Count(), {}
        for k in links:
            best = min(CANDIDATES, key=lambda c: loss(*_shares(v for o, v in per[c].items() if o != k)))
            choices[best] = choices.get(best, 0) + 1
            total.add(per[best][k])
        print(f"leave-one-link-out, {name} loss: choices {choices}; wet {100 * total.wet_rain / total.wet_faded:.2f} % "
              f"({total.wet_rain}/{total.wet_faded}), dry {100 * total.dry_rain / total.dry_faded:.2f} % "
              f"({total.dry_rain}/{total.dry_faded}) called rain; rule of thumb wet "
              f"{100 * total.wet_thumb / total.wet_faded:.1f} %, dry {100 * total.dry_thumb / total.dry_faded:.1f} %")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
