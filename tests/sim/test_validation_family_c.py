"""Checks of the third validation family (bench/validation/family_c.py, written apart from the tool and family B).

- its own P.838-3, P.525, P.530 and Fresnel functions against published check values
  (``family_c.check_published_values``: P.838-3 gamma at 23 / 38 GHz, R = 50 mm/h, as in docs/references.md §2 [C],
  matching itur 0.4.0; the ITU-R test rows of P.838-3 for the coefficients);
- its truth convention (faded = total >= 3 dB or signal lost; cause = largest positive contribution) on a world;
- every log layout it writes read whole by diag.read.ingest.read_log, and the fixed fit/held-out split.
"""
from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pytest

sys.path.insert(0, str(Path(__file__).resolve().parents[2] / "bench" / "validation"))
import family_c as fc  # noqa: E402

from tests.sim._family_support import read_back  # noqa: E402


def test_published_check_values():
    fc.check_published_values()


def test_split_is_fixed_and_disjoint():
    assert fc.FIT_SEEDS == tuple(range(1, 26)) and fc.HELDOUT_SEEDS == tuple(range(26, 51))
    with pytest.raises(ValueError):
        fc.fit_half([26])


@pytest.fixture(scope="module")
def world():
    w = fc.make_world(3)
    return fc.World(w.seed, w.hops[:2], w.notes)


def test_truth_convention(world):
    for t in world.hops:
        for ch in t.hop.channels:
            code = t.cause_codes(ch)
            total = t.total_db(ch)
            faded = (total >= fc.FADE_DB) | t.lost[ch]
            assert np.array_equal(code >= 0, faded)
            stack = np.stack([np.maximum(t.contributions[ch][c], 0.0) for c in fc.CAUSES])
            plain = faded & ~t.equipment_lost[ch]
            assert np.array_equal(code[plain], np.argmax(stack, axis=0)[plain])
            assert np.all(code[t.equipment_lost[ch]] == fc.CAUSES.index("signal_loss"))


def test_every_layout_is_read_whole(world, tmp_path):
    from diag import schema as S

    # channels, the statistics of each shape and every row kept are checked by read_back
    for _, _, read, rep in read_back(fc, world, tmp_path):
        assert not rep["rejected"]
        span = (read.table[S.TIME].max() - fc.START_UTC).total_seconds()
        assert 0 < span < fc.DURATION_S
