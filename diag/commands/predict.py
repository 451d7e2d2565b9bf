"""``python -m diag predict --freq-ghz F --length-km D [...] [--json]``: what the published models expect of a hop.

Only formats the dict returned by ``diag.analysis.prediction.predict_link``.
"""
from __future__ import annotations

import json
import sys

from diag.analysis.prediction import predict_link


def register(subparsers) -> None:
    p = subparsers.add_parser("predict", help="published-model expectations for a hop (budget, rain, multipath)",
                              description="Expected level, fade margin, rain attenuation (ITU-R P.838-3/P.530) and "
                                          "multipath outage (ITU-R P.530) for one hop. Items whose inputs are "
                                          "missing are named as skipped.")
    p.add_argument("--freq-ghz", type=float, required=True, metavar="F", help="frequency [GHz]")
    p.add_argument("--length-km", type=float, required=True, metavar="D", help="path length [km]")
    p.add_argument("--polarization", default="H", type=str.upper, choices=("H", "V", "DUAL"),
                   help="H, V or dual (default H; dual reports rain for the worse of the two)")
    p.add_argument("--r001-mmh", type=float, metavar="R", help="rain rate exceeded 0.01 %% of the year [mm/h]")
    k = p.add_mutually_exclusive_group()
    k.add_argument("--geoclimatic-k", type=float, metavar="K", help="P.530 geoclimatic factor K")
    k.add_argument("--dn1", type=float, metavar="DN1", help="refractivity gradient dN1 [N-units/km] (with --sa)")
    p.add_argument("--sa", type=float, metavar="M", help="terrain roughness s_a [m] (with --dn1)")
    p.add_argument("--tx-dbm", type=float, metavar="P", help="transmit power [dBm]")
    p.add_argument("--antenna-gain-dbi", "--gain-dbi", dest="gain_dbi", type=float, metavar="G",
                   help="antenna gain, each end [dBi] (--gain-dbi: the older name)")
    p.add_argument("--rx-gain-dbi", type=float, metavar="G", help="receive antenna gain if it differs [dBi]")
    p.add_argument("--losses-db", type=float, default=0.0, metavar="L",
                   help="total fixed losses: feeders, branching, radomes, gases [dB] (default 0)")
    p.add_argument("--threshold-dbm", type=float, metavar="T", help="receiver threshold [dBm]")
    p.add_argument("--nominal-dbm", type=float, metavar="N", help="planned clear-sky level, if no budget [dBm]")
    p.add_argument("--antenna-height-m", type=float, metavar="H",
                   help="both antennas' altitude above sea level [m] (ground height + site altitude), as analyze "
                        "and the links table take it; --height-tx-m / --height-rx-m set each end")
    p.add_argument("--height-tx-m", type=float, metavar="H", help="one antenna's altitude above sea level [m]")
    p.add_argument("--height-rx-m", type=float, metavar="H", help="the other antenna's altitude above sea level [m]")
    p.add_argument("--latitude-deg", type=float, metavar="LAT", help="path latitude (multipath average year)")
    p.add_argument("--json", action="store_true", help="print the predictions as JSON")
    p.set_defaults(func=run)


def _fmt(value, unit: str = "", digits: int = 4) -> str:
    if value is None:
        return "-"
    return f"{value:.{digits}g}{(' ' + unit) if unit else ''}"


def run(args) -> int:
    result = predict_link(
        args.freq_ghz, args.length_km, polarization="dual" if args.polarization == "DUAL" else args.polarization,
        r001_mmh=args.r001_mmh, geoclimatic_k=args.geoclimatic_k, dn1=args.dn1, sa_m=args.sa, tx_dbm=args.tx_dbm,
        antenna_gain_dbi=args.gain_dbi, rx_antenna_gain_dbi=args.rx_gain_dbi, losses_db=args.losses_db,
        threshold_dbm=args.threshold_dbm, nominal_dbm=args.nominal_dbm,
        height_tx_m=args.height_tx_m if args.height_tx_m is not None else args.antenna_height_m,
        height_rx_m=args.height_rx_m if args.height_rx_m is not None else args.antenna_height_m,
        latitude_deg=args.latitude_deg)
    if args.json:
        json.dump(result, sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
        return 0
    r = result
    lines = [
        f"hop: {args.freq_ghz:g} GHz, {args.length_km:g} km, polarization {r['inputs']['polarization']}",
        f"free-space loss            {_fmt(r['free_space_loss_db'], 'dB', 5)}",
        f"expected level             {_fmt(r['expected_level_dbm'], 'dBm')}"
        + (f" ({r['expected_level_source']})" if r["expected_level_source"] else ""),
        f"fade margin                {_fmt(r['fade_margin_db'], 'dB')}",
        f"rain A exceeded 0.01 %     {_fmt(r['rain_attenuation_0p01pct_db'], 'dB')}"
        + (f" ({r['rain_polarization']})" if r["rain_polarization"] else ""),
        f"rain A exceeded 0.1 %      {_fmt(r['rain_attenuation_0p1pct_db'], 'dB')}",
        f"rain unavailability        {_fmt(r['rain_unavailability_pct'], '%')}"
        f"  = {_fmt(r['rain_unavailability_min_per_year'], 'min/year')}",
        f"multipath p0               {_fmt(r['multipath_p0_pct'], '%')}",
        f"multipath outage           {_fmt(r['multipath_outage_worst_month_pct'], '% of the worst month')}"
        f"  = {_fmt(r['multipath_outage_worst_month_min'], 'min')}",
        f"multipath outage, year     {_fmt(r['multipath_outage_year_pct'], '%')}"
        f"  = {_fmt(r['multipath_outage_min_per_year'], 'min/year')}",
        f"unavailability             {_fmt(r['unavailability_min_per_year'], 'min/year')} (rain)",
    ]
    for item in r["skipped"]:
        lines.append(f"skipped: {item}")
    for item in r["notes"]:
        lines.append(f"note: {item}")
    print("\n".join(lines))
    return 0
