"""OpenRainER minute-by-minute figures with leave-one-link-out weights (bench/fit_attribution.py --weights-out).

For each real link L the attribution weights fitted WITHOUT L (on both simulator families' fit halves and the
other 14 links) are set, the whole network is analysed (network corroboration on), and only L is counted, by the
counting rules of bench/validation/realdata.py (issue 14's definitions).  The rule of thumb ("a fade longer than
5 min is rain") is printed beside every figure.

    .venv/bin/python bench/eval_realdata_lolo.py [/tmp/diag_fit_weights.json]
"""
from __future__ import annotations

import json
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))
sys.path.insert(0, str(HERE / "validation"))

import realdata  # noqa: E402

from diag.analysis import attribution  # noqa: E402


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    weights = json.loads(Path(argv[0] if argv else "/tmp/diag_fit_weights.json").read_text())
    lolo = weights["lolo"]
    chosen = iter(sorted(lolo))
    saved = dict(attribution.WEIGHTS)

    def fit(training):
        left_out = next(chosen)
        assert left_out not in training, "leave-one-link-out broken"

        def analyse(table, links):
            attribution.WEIGHTS.clear()
            attribution.WEIGHTS.update(lolo[left_out])
            try:
                return realdata._analyse_network(table, links)
            finally:
                attribution.WEIGHTS.clear()
                attribution.WEIGHTS.update(saved)
        return analyse

    res = realdata.evaluate(links=sorted(lolo), fit=fit)
    print("leave-one-link-out weights")
    print(realdata.report(res))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
