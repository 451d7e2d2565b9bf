"""Link budget: expected receive level and fade margin.

The expected (clear-sky, unfaded) receive level is the transmit power plus both antenna gains minus the feeder,
branching and other fixed losses and the path loss (free-space loss from ITU-R P.525 plus any gaseous absorption
the caller adds).  The flat fade margin is that level minus the receiver threshold.  These are the standard budget
relations of line-of-sight design (common practice; see e.g. ITU-R P.530-17 §1 for the losses to account for).
"""
from __future__ import annotations

from dataclasses import asdict, dataclass

from diag.models import p525
from diag.models._util import ArrayLike, as_float_array, like_input

__all__ = ["expected_level_dbm", "fade_margin_db", "LinkBudget", "link_budget"]


def expected_level_dbm(tx_power_dbm: ArrayLike, path_loss_db: ArrayLike, tx_gain_dbi: ArrayLike = 0.0,
                       rx_gain_dbi: ArrayLike = 0.0, tx_losses_db: ArrayLike = 0.0, rx_losses_db: ArrayLike = 0.0,
                       other_losses_db: ArrayLike = 0.0) -> ArrayLike:
    """Expected receive level [dBm] = P_tx + G_tx + G_rx - L_tx - L_rx - L_other - L_path.

    ``tx_losses_db``/``rx_losses_db``: feeder and branching losses at each end; ``other_losses_db``: radome,
    gaseous absorption, diffraction or any fixed allowance.
    """
    level = (as_float_array(tx_power_dbm) + as_float_array(tx_gain_dbi) + as_float_array(rx_gain_dbi)
             - as_float_array(tx_losses_db) - as_float_array(rx_losses_db) - as_float_array(other_losses_db)
             - as_float_array(path_loss_db))
    return like_input(level, tx_power_dbm, path_loss_db, tx_gain_dbi, rx_gain_dbi, tx_losses_db, rx_losses_db,
                      other_losses_db)


def fade_margin_db(expected_level_dbm: ArrayLike, threshold_dbm: ArrayLike) -> ArrayLike:
    """Flat fade margin [dB] = expected receive level - receiver threshold (negative: the hop is below threshold)."""
    margin = as_float_array(expected_level_dbm) - as_float_array(threshold_dbm)
    return like_input(margin, expected_level_dbm, threshold_dbm)


@dataclass(frozen=True)
class LinkBudget:
    """A scalar link budget.  Units are in the field names."""

    frequency_ghz: float
    length_km: float
    free_space_loss_db: float
    expected_level_dbm: float
    threshold_dbm: float | None
    fade_margin_db: float | None

    def to_dict(self) -> dict:
        return asdict(self)


def link_budget(frequency_ghz: float, length_km: float, tx_power_dbm: float, *, tx_gain_dbi: float = 0.0,
                rx_gain_dbi: float = 0.0, tx_losses_db: float = 0.0, rx_losses_db: float = 0.0,
                other_losses_db: float = 0.0, threshold_dbm: float | None = None) -> LinkBudget:
    """Budget of one hop: free-space loss (ITU-R P.525), expected level and, with a threshold, the fade margin."""
    fsl = float(p525.free_space_loss_db(float(length_km), float(frequency_ghz)))
    level = float(expected_level_dbm(tx_power_dbm, fsl, tx_gain_dbi, rx_gain_dbi, tx_losses_db, rx_losses_db,
                                     other_losses_db))
    margin = None if threshold_dbm is None else float(fade_margin_db(level, threshold_dbm))
    return LinkBudget(frequency_ghz=float(frequency_ghz), length_km=float(length_km), free_space_loss_db=fsl,
                      expected_level_dbm=level,
                      threshold_dbm=None if threshold_dbm is None else float(threshold_dbm), fade_margin_db=margin)
