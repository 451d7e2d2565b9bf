"""What the published models predict for one hop: budget, rain (ITU-R P.530 §2.4), multipath (§2.3), outage.

``predict_link`` takes plain numbers and returns a flat dict (JSON-ready; ``None`` where an input was missing,
with the reason in ``skipped``).  ``predict_for_link`` does the same from a ``diag.links.Link``.  The ``predict``
command and the diagnosis/report code both call these; nothing here prints.

Conventions.  Rain unavailability is the percentage of an average year the P.530 rain attenuation exceeds the
flat fade margin (rain fades last minutes, so they count as unavailable time).  Multipath outage is the
percentage of the average worst month (and, with a latitude, of the average year, §2.3.4) that the fade margin is
exceeded; multipath fades are mostly shorter than 10 s, so in ITU-T G.826 terms they cost severely errored
seconds in available time rather than unavailability, and they are reported separately.  Minutes per year use a
365-day year (525 600 min).
"""
from __future__ import annotations

import logging
import math
import warnings

from diag.errors import InputError
from diag.links import PLAUSIBLE_RANGES
from diag.models import budget, p525, p530, p838
from diag.numeric import round_sig

log = logging.getLogger(__name__)

__all__ = ["predict_link", "predict_for_link", "MINUTES_PER_YEAR"]

MINUTES_PER_YEAR = 365 * 24 * 60  # 525 600
_WORST_MONTH_MINUTES = 30 * 24 * 60

# the hop fields' ranges are those of the links table (diag.links.PLAUSIBLE_RANGES); the rest are the prediction's own
_RANGES = {
    **{name: PLAUSIBLE_RANGES[name] for name in ("frequency_ghz", "length_km", "r001_mmh", "geoclimatic_k", "tx_dbm",
                                                 "antenna_gain_dbi", "threshold_dbm", "nominal_dbm")},
    "dn1": (-2000.0, 500.0), "sa_m": (0.0, 2000.0), "rx_antenna_gain_dbi": PLAUSIBLE_RANGES["antenna_gain_dbi"],
    "losses_db": (0.0, 100.0), "height_tx_m": (-500.0, 9000.0), "height_rx_m": (-500.0, 9000.0),
    "latitude_deg": (-90.0, 90.0),
}


def _check(name: str, value):
    if value is None:
        return None
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name.replace('_', '-')} is not a number: {str(value)[:30]!r}") from None
    if not math.isfinite(number):
        raise InputError(f"{name.replace('_', '-')} is not finite")
    lo, hi = _RANGES[name]
    if not lo <= number <= hi:
        raise InputError(f"{name.replace('_', '-')} = {number:g} is outside the plausible range {lo:g}..{hi:g}")
    return number


def _rounded(value, digits: int = 6):
    return round_sig(value, digits, keep_negative_zero=True)


def predict_link(frequency_ghz: float, length_km: float, *, polarization: str = "H", r001_mmh: float | None = None,
                 geoclimatic_k: float | None = None, dn1: float | None = None, sa_m: float | None = None,
                 tx_dbm: float | None = None, antenna_gain_dbi: float | None = None,
                 rx_antenna_gain_dbi: float | None = None, losses_db: float = 0.0,
                 threshold_dbm: float | None = None, nominal_dbm: float | None = None,
                 height_tx_m: float | None = None, height_rx_m: float | None = None,
                 latitude_deg: float | None = None) -> dict:
    """Predictions of the published models for one hop, as a flat dict.

    Parameters
    ----------
    frequency_ghz, length_km : the hop
    polarization : "H", "V" or "dual" (dual: rain figures for the worse of H and V)
    r001_mmh : rain rate exceeded 0.01 % of an average year (1-min integration); without it rain is skipped
    geoclimatic_k : P.530 geoclimatic factor K; or ``dn1`` (N-units/km) with ``sa_m`` (terrain roughness, m)
    tx_dbm, antenna_gain_dbi : transmit power and antenna gain (both ends, unless ``rx_antenna_gain_dbi``)
    losses_db : total fixed losses (feeders, branching, radomes, gases) of the hop
    threshold_dbm : receiver threshold; needed for the fade margin and every outage figure
    nominal_dbm : planned/measured clear-sky level, used as the expected level when no transmit power is given
    height_tx_m, height_rx_m : antenna altitudes above sea level (path inclination and lower antenna altitude for
        multipath; without them 0 is used, the more pessimistic choice)
    latitude_deg : path latitude, for the worst-month to average-year multipath conversion (§2.3.4)

    Returns
    -------
    dict with keys: inputs, free_space_loss_db, wavelength_m, fresnel_radius_mid_m, expected_level_dbm,
    expected_level_source, fade_margin_db, rain_polarization, rain_a001_db, rain_attenuation_0p01pct_db,
    rain_attenuation_0p1pct_db, rain_unavailability_pct, rain_unavailability_min_per_year,
    rain_fades_10s_per_year, multipath_geoclimatic_k, multipath_p0_pct, multipath_outage_worst_month_pct,
    multipath_outage_worst_month_min, multipath_outage_year_pct, multipath_outage_min_per_year,
    unavailability_min_per_year, predicted_availability_pct, skipped (list of str), notes (list of str),
    sources (dict).

    Raises
    ------
    InputError
        A value outside its plausible range, or K given both directly and as dN1/s_a.
    """
    values = {name: _check(name, val) for name, val in (
        ("frequency_ghz", frequency_ghz), ("length_km", length_km), ("r001_mmh", r001_mmh),
        ("geoclimatic_k", geoclimatic_k), ("dn1", dn1), ("sa_m", sa_m), ("tx_dbm", tx_dbm),
        ("antenna_gain_dbi", antenna_gain_dbi), ("rx_antenna_gain_dbi", rx_antenna_gain_dbi),
        ("losses_db", losses_db if losses_db is not None else 0.0), ("threshold_dbm", threshold_dbm),
        ("nominal_dbm", nominal_dbm), ("height_tx_m", height_tx_m), ("height_rx_m", height_rx_m),
        ("latitude_deg", latitude_deg))}
    if values["frequency_ghz"] is None or values["length_km"] is None:
        raise InputError("frequency and length are required")
    pol = str(polarization or "H").strip()
    pol = {"h": "H", "v": "V", "dual": "dual", "hv": "dual"}.get(pol.lower())
    if pol is None:
        raise InputError(f"polarization must be H, V or dual, not {str(polarization)[:20]!r}")
    if values["geoclimatic_k"] is not None and (values["dn1"] is not None or values["sa_m"] is not None):
        raise InputError("give either the geoclimatic factor K or dN1 with s_a, not both")
    if (values["dn1"] is None) != (values["sa_m"] is None):
        raise InputError("dN1 and s_a go together: give both (or the geoclimatic factor K instead)")

    f, d = values["frequency_ghz"], values["length_km"]
    out: dict = {"inputs": {"frequency_ghz": f, "length_km": d, "polarization": pol,
                            **{k: v for k, v in values.items() if k not in ("frequency_ghz", "length_km")}}}
    skipped: list[str] = []
    notes: list[str] = []

    # free space and budget (P.525, link budget)
    fsl = float(p525.free_space_loss_db(d, f))
    out["free_space_loss_db"] = _rounded(fsl)
    out["wavelength_m"] = _rounded(p525.wavelength_m(f))
    out["fresnel_radius_mid_m"] = _rounded(p525.fresnel_radius_m(d / 2, d / 2, f))
    level = None
    source = None
    if values["tx_dbm"] is not None and values["antenna_gain_dbi"] is not None:
        rx_gain = values["rx_antenna_gain_dbi"] if values["rx_antenna_gain_dbi"] is not None else \
            values["antenna_gain_dbi"]
        level = float(budget.expected_level_dbm(values["tx_dbm"], fsl, values["antenna_gain_dbi"], rx_gain,
                                                other_losses_db=values["losses_db"] or 0.0))
        source = "budget"
        if values["nominal_dbm"] is not None:
            notes.append(f"nominal level {values['nominal_dbm']:g} dBm differs from the budget by "
                         f"{values['nominal_dbm'] - level:+.1f} dB; the budget is used")
    elif values["nominal_dbm"] is not None:
        level, source = values["nominal_dbm"], "nominal"
    else:
        skipped.append("expected level: needs transmit power and antenna gain (or a nominal level)")
    out["expected_level_dbm"] = _rounded(level)
    out["expected_level_source"] = source
    margin = None
    if level is not None and values["threshold_dbm"] is not None:
        margin = float(budget.fade_margin_db(level, values["threshold_dbm"]))
        if margin <= 0:
            notes.append("the expected level is at or below the threshold: the hop cannot work as planned")
    elif level is not None:
        skipped.append("fade margin and outage: needs the receiver threshold")
    out["fade_margin_db"] = _rounded(margin)

    # rain (P.838-3, P.530 §2.4.1)
    rain_keys = ("rain_polarization", "rain_a001_db", "rain_attenuation_0p01pct_db", "rain_attenuation_0p1pct_db",
                 "rain_unavailability_pct", "rain_unavailability_min_per_year", "rain_fades_10s_per_year")
    out.update(dict.fromkeys(rain_keys))
    rain_pct = None
    if values["r001_mmh"] is None:
        skipped.append("rain: needs R0.01 (rain rate exceeded 0.01 % of the year, mm/h)")
    else:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            candidates = ["H", "V"] if pol == "dual" else [pol]
            a001 = {p: float(p530.rain_attenuation_001_db(d, f, values["r001_mmh"], p838.tilt_deg_for_polarization(p)))
                    for p in candidates}
            worst = max(candidates, key=lambda p: a001[p])
            out["rain_polarization"] = worst
            out["rain_a001_db"] = _rounded(a001[worst])
            # A0.01 is the step-4 estimate of the attenuation exceeded 0.01 % of the time; 0.1 % from eq. (34)
            out["rain_attenuation_0p01pct_db"] = _rounded(a001[worst])
            out["rain_attenuation_0p1pct_db"] = _rounded(p530.rain_attenuation_db(0.1, a001[worst], f))
            if margin is not None and a001[worst] > 0:
                if margin <= 0:
                    rain_pct = None
                    notes.append("rain unavailability not computed: no fade margin")
                else:
                    rain_pct = float(p530.rain_time_percent(margin, a001[worst], f))
                    out["rain_unavailability_pct"] = _rounded(rain_pct)
                    out["rain_unavailability_min_per_year"] = _rounded(rain_pct / 100 * MINUTES_PER_YEAR)
                    out["rain_fades_10s_per_year"] = _rounded(p530.rain_fade_count_10s(rain_pct))
            elif a001[worst] == 0:
                rain_pct = 0.0
                out["rain_unavailability_pct"] = 0.0
                out["rain_unavailability_min_per_year"] = 0.0
            else:
                skipped.append("rain unavailability: needs the fade margin (expected level and threshold)")
        for item in caught:
            notes.append(f"rain: {item.message}")
        if d > 60:
            notes.append("rain: P.530 §2.4.1 is stated for paths up to 60 km")

    # multipath (P.530-17 §2.3)
    mp_keys = ("multipath_geoclimatic_k", "multipath_p0_pct", "multipath_outage_worst_month_pct",
               "multipath_outage_worst_month_min", "multipath_outage_year_pct", "multipath_outage_min_per_year")
    out.update(dict.fromkeys(mp_keys))
    mp_year_pct = None
    k = values["geoclimatic_k"]
    if k is None and values["dn1"] is not None:
        k = float(p530.geoclimatic_factor_k(values["dn1"], values["sa_m"]))
    if k is None:
        skipped.append("multipath: needs the geoclimatic factor K (or dN1 and s_a)")
    else:
        h_tx = values["height_tx_m"] if values["height_tx_m"] is not None else 0.0
        h_rx = values["height_rx_m"] if values["height_rx_m"] is not None else 0.0
        if values["height_tx_m"] is None or values["height_rx_m"] is None:
            notes.append("multipath: antenna altitudes not given; path inclination 0 and lower antenna at 0 m "
                         "(pessimistic)")
        eps = float(p530.path_inclination_mrad(h_tx, h_rx, d))
        p0 = float(p530.multipath_occurrence_percent(d, f, k, eps, min(h_tx, h_rx)))
        out["multipath_geoclimatic_k"] = _rounded(k)
        out["multipath_p0_pct"] = _rounded(p0)
        if d < 5:
            notes.append("multipath: P.530 says multipath fading need only be computed for paths longer than 5 km")
        if not 15.0 / d <= f <= 45.0:
            notes.append(f"multipath: P.530-17 §2.3.1 is stated for {15.0 / d:.2g} to 45 GHz on this path")
        if margin is not None and margin > 0:
            pw = float(p530.multipath_fade_percent(margin, p0))
            out["multipath_outage_worst_month_pct"] = _rounded(pw)
            out["multipath_outage_worst_month_min"] = _rounded(pw / 100 * _WORST_MONTH_MINUTES)
            if values["latitude_deg"] is not None:
                dg = float(p530.geoclimatic_conversion_db(values["latitude_deg"], d, eps))
                mp_year_pct = float(p530.multipath_fade_percent_year(margin, p0, dg))
                out["multipath_outage_year_pct"] = _rounded(mp_year_pct)
                out["multipath_outage_min_per_year"] = _rounded(mp_year_pct / 100 * MINUTES_PER_YEAR)
            else:
                skipped.append("multipath average year: needs the path latitude (worst month given)")
        elif margin is None:
            skipped.append("multipath outage: needs the fade margin (expected level and threshold)")

    out["unavailability_min_per_year"] = out["rain_unavailability_min_per_year"]
    if rain_pct is not None:
        total_pct = rain_pct + (mp_year_pct or 0.0)
        out["predicted_availability_pct"] = _rounded(100.0 - rain_pct, 10)
        if mp_year_pct is not None:
            notes.append(f"rain and multipath together exceed the margin {total_pct:.3g} % of the year; multipath "
                         "fades are mostly under 10 s and count as errored seconds, not unavailability")
    else:
        out["predicted_availability_pct"] = None
    out["skipped"] = skipped
    out["notes"] = notes
    out["sources"] = {
        "free_space_loss_db": "ITU-R P.525-4 §2.2",
        "rain": "ITU-R P.838-3 eqs. (1)-(5); ITU-R P.530-17/-18 §2.4.1 (C0 read as 0.4 log10((f/10)^0.8))",
        "multipath": "ITU-R P.530-17 §2.3.1-2.3.2 (worst month), §2.3.4 (average year)",
    }
    return out


def predict_for_link(link, *, latitude_deg: float | None = None, losses_db: float = 0.0,
                     height_tx_m: float | None = None, height_rx_m: float | None = None) -> dict:
    """``predict_link`` for a ``diag.links.Link`` (one antenna gain for both ends; its ``antenna_height_m`` is
    used as both antennas' altitude unless heights are given)."""
    h = link.antenna_height_m
    return predict_link(link.frequency_ghz, link.length_km, polarization=link.polarization, r001_mmh=link.r001_mmh,
                        geoclimatic_k=link.geoclimatic_k, tx_dbm=link.tx_dbm, antenna_gain_dbi=link.antenna_gain_dbi,
                        losses_db=losses_db, threshold_dbm=link.threshold_dbm, nominal_dbm=link.nominal_dbm,
                        height_tx_m=height_tx_m if height_tx_m is not None else h,
                        height_rx_m=height_rx_m if height_rx_m is not None else h, latitude_deg=latitude_deg)
