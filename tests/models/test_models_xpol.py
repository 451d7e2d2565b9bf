"""Polarisation tilt: co-polar loss and XPD (diag.models.xpol)."""
import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from diag.models import xpol


@pytest.mark.parametrize("tilt, loss, xpd", [
    # docs/references.md §6 [C] from the polarisation loss factor cos^2(tilt) (Balanis, Antenna Theory, 3rd ed. §2.12.2)
    (1, 0.0013, 35.16), (3, 0.0119, 25.61), (5, 0.0331, 21.16), (10, 0.1330, 15.07), (45, 3.010, 0.0)])
def test_reference_sheet_values(tilt, loss, xpd):
    assert xpol.copolar_loss_db(tilt) == pytest.approx(loss, abs=1e-3 * max(loss, 1) + 1e-4)
    assert xpol.xpd_from_tilt_db(tilt) == pytest.approx(xpd, abs=0.01)


def test_45_degrees_is_3_db():
    # common practice / Balanis §2.12.2: a 45 deg mismatch between linear polarisations halves the power (3 dB)
    assert xpol.copolar_loss_db(45.0) == pytest.approx(10 * math.log10(2), rel=1e-12)


def test_limits_and_types():
    assert xpol.copolar_loss_db(0.0) == 0.0
    assert math.isinf(xpol.xpd_from_tilt_db(0.0))
    assert xpol.tilt_from_xpd_deg(math.inf) == 0.0
    s = pd.Series([1.0, 5.0, np.nan], index=["a", "b", "c"])
    out = xpol.xpd_from_tilt_db(s)
    assert isinstance(out, pd.Series) and list(out.index) == ["a", "b", "c"] and math.isnan(out["c"])
    assert math.isnan(xpol.tilt_from_copolar_loss_deg(-1.0))


def test_combine_xpd():
    # two equal incoherent leaks: 3 dB worse (power addition)
    assert xpol.combine_xpd_db(30.0, 30.0) == pytest.approx(30.0 - 10 * math.log10(2), rel=1e-12)
    assert xpol.combine_xpd_db(30.0, math.inf) == pytest.approx(30.0)
    with pytest.raises(ValueError, match="at least one"):
        xpol.combine_xpd_db()


@settings(max_examples=50, deadline=None)
@given(st.floats(0.01, 44.0), st.floats(0.01, 1.0))
def test_larger_tilt_lower_xpd_and_round_trip(tilt, step):
    # property: XPD falls and co-polar loss rises as the tilt grows; inverses round-trip
    assert xpol.xpd_from_tilt_db(tilt + step) < xpol.xpd_from_tilt_db(tilt)
    assert xpol.copolar_loss_db(tilt + step) > xpol.copolar_loss_db(tilt)
    assert xpol.tilt_from_xpd_deg(xpol.xpd_from_tilt_db(tilt)) == pytest.approx(tilt, rel=1e-9)
    assert xpol.tilt_from_copolar_loss_deg(xpol.copolar_loss_db(tilt)) == pytest.approx(tilt, rel=1e-6)
