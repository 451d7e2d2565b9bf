"""The link description: a links table (CSV) or command-line flags, one ``Link`` per hop.

Required fields: ``link_id, frequency_ghz, length_km, polarization`` (H, V or dual), ``threshold_dbm``.
Optional: ``nominal_dbm, tx_dbm, antenna_gain_dbi, antenna_height_m, geoclimatic_k, r001_mmh, objective_pct,
xpd_required_db``, ``site_a_lat, site_a_lon, site_b_lat, site_b_lon`` (degrees; used for the local solar time
and the distances between hops in network corroboration).  A missing optional field is ``None``; the analysis
names the checks it had to skip.
``antenna_height_m`` is the antennas' altitude above sea level (ground height + site altitude), as ITU-R P.530 uses it.
"""
from __future__ import annotations

import csv
import math
import re
from dataclasses import asdict, dataclass
from pathlib import Path

import numpy as np

from diag.errors import InputError, require_regular_file

REQUIRED = ("link_id", "frequency_ghz", "length_km", "polarization", "threshold_dbm")
OPTIONAL = ("nominal_dbm", "tx_dbm", "antenna_gain_dbi", "antenna_height_m", "geoclimatic_k", "r001_mmh",
            "objective_pct", "xpd_required_db")
# optional site coordinates [deg] (links table only): local solar time and distances between hops
COORDINATES = ("site_a_lat", "site_a_lon", "site_b_lat", "site_b_lon")
POLARIZATIONS = ("H", "V", "dual")

# plausibility ranges of the hop fields: outside them the value is almost certainly a unit or typing mistake (the
# one definition: the prediction and the dashboard check against these too)
PLAUSIBLE_RANGES = {
    "frequency_ghz": (1.0, 100.0),
    "length_km": (0.01, 200.0),
    "threshold_dbm": (-120.0, -20.0),
    "nominal_dbm": (-120.0, 10.0),
    "tx_dbm": (-30.0, 50.0),
    "antenna_gain_dbi": (0.0, 65.0),
    "antenna_height_m": (-500.0, 9000.0),   # altitude above sea level (ground + site): high sites exist
    "geoclimatic_k": (1e-9, 1e-1),
    "r001_mmh": (0.0, 300.0),
    "objective_pct": (50.0, 100.0),
    "xpd_required_db": (0.0, 60.0),
    "site_a_lat": (-90.0, 90.0),
    "site_a_lon": (-180.0, 180.0),
    "site_b_lat": (-90.0, 90.0),
    "site_b_lon": (-180.0, 180.0),
}
_RANGES = PLAUSIBLE_RANGES


def in_plausible_range(name: str, values) -> np.ndarray:
    """Whether each value of the hop field ``name`` lies in its plausibility range (:data:`PLAUSIBLE_RANGES`,
    bounds included; NaN is outside); vectorised."""
    lo, hi = PLAUSIBLE_RANGES[name]
    x = np.asarray(values, dtype=float)
    return (x >= lo) & (x <= hi)


@dataclass(frozen=True)
class Link:
    """One hop.  Units are in the field names; ``polarization`` is "H", "V" or "dual"."""

    link_id: str
    frequency_ghz: float
    length_km: float
    polarization: str
    threshold_dbm: float
    nominal_dbm: float | None = None
    tx_dbm: float | None = None
    antenna_gain_dbi: float | None = None
    antenna_height_m: float | None = None
    geoclimatic_k: float | None = None
    r001_mmh: float | None = None
    objective_pct: float | None = None
    xpd_required_db: float | None = None
    site_a_lat: float | None = None   # site coordinates [deg]: local solar time and network distances (optional)
    site_a_lon: float | None = None
    site_b_lat: float | None = None
    site_b_lon: float | None = None

    def to_dict(self) -> dict:
        return asdict(self)

    def missing_optional(self) -> list[str]:
        """Names of the optional fields not given."""
        return [name for name in OPTIONAL if getattr(self, name) is None]


def _number(name: str, raw, *, where: str, line: int | None, required: bool) -> float | None:
    if raw is None or (isinstance(raw, str) and raw.strip() == ""):
        if required:
            raise InputError(f"links table: '{name}' is required but empty", path=where, line=line)
        return None
    text = str(raw).strip()
    if isinstance(raw, str) and (("," in text and "." in text) or re.fullmatch(r"[-+]?\d{1,3}( \d{3})+", text)):
        raise InputError(f"links table: '{name}' = {text[:40]!r} looks like a number with a thousands separator; "
                         f"write it without one (e.g. 1000 or 1.5)", path=where, line=line)
    try:
        value = float(text.replace(",", ".")) if isinstance(raw, str) else float(raw)
    except (ValueError, OverflowError):
        raise InputError(f"links table: '{name}' is not a number: {str(raw)[:40]!r}", path=where,
                         line=line) from None
    if not math.isfinite(value):
        raise InputError(f"links table: '{name}' is not finite", path=where, line=line)
    lo, hi = _RANGES.get(name, (-math.inf, math.inf))
    if not lo <= value <= hi:
        raise InputError(f"links table: '{name}' = {value:g} is outside the plausible range {lo:g}..{hi:g}",
                         path=where, line=line)
    return value


def _polarization(raw, *, where: str, line: int | None) -> str:
    text = str(raw or "").strip().lower()
    mapping = {"h": "H", "horizontal": "H", "v": "V", "vertical": "V", "dual": "dual", "hv": "dual",
               "h+v": "dual", "xpic": "dual", "both": "dual"}
    if text not in mapping:
        raise InputError(f"links table: polarization must be H, V or dual, not {str(raw)[:20]!r}", path=where,
                         line=line)
    return mapping[text]


def make_link(values: dict, *, where: str = "link parameters", line: int | None = None) -> Link:
    """Build and validate a ``Link`` from a mapping of field name to raw value (strings or numbers)."""
    link_id = str(values.get("link_id") or "").strip()
    if not link_id:
        raise InputError("links table: 'link_id' is required but empty", path=where, line=line)
    kwargs: dict = {"link_id": link_id,
                    "polarization": _polarization(values.get("polarization"), where=where, line=line)}
    for name in ("frequency_ghz", "length_km", "threshold_dbm"):
        kwargs[name] = _number(name, values.get(name), where=where, line=line, required=True)
    for name in OPTIONAL + COORDINATES:
        kwargs[name] = _number(name, values.get(name), where=where, line=line, required=False)
    if kwargs["nominal_dbm"] is not None and not kwargs["threshold_dbm"] < kwargs["nominal_dbm"]:
        raise InputError(f"links table: threshold_dbm {kwargs['threshold_dbm']:g} must be below nominal_dbm "
                         f"{kwargs['nominal_dbm']:g} (the receiver threshold is the weakest level it works at)",
                         path=where, line=line)
    return Link(**kwargs)


def read_links_table(path_or_text: str | Path, *, text: str | None = None) -> list[Link]:
    """Read a links table CSV (comma or semicolon separated).  Raises ``InputError`` on any bad row."""
    where = str(path_or_text)
    if text is None:
        require_regular_file(path_or_text, where)
        try:
            raw = Path(path_or_text).read_bytes()
        except OSError as exc:
            raise InputError(f"cannot read links table: {exc.strerror}", path=where) from None
        try:
            text = raw.decode("utf-8-sig")
        except UnicodeDecodeError:
            text = raw.decode("latin-1")
    # physical line numbers: blank and comment lines are skipped but still counted
    lines = [(number, ln) for number, ln in enumerate(text.splitlines(), start=1)
             if ln.strip() and not ln.lstrip().startswith("#")]
    if not lines:
        raise InputError("links table is empty", path=where)
    for number, ln in lines:
        bad = next((ch for ch in ln if ord(ch) < 32 and ch != "\t" or ord(ch) == 127), None)
        if bad is not None:
            raise InputError(f"links table: control character U+{ord(bad):04X} in the line; remove it", path=where,
                             line=number)
    first = lines[0][1]
    sep = ";" if first.count(";") > first.count(",") else ","
    rows = list(csv.reader([ln for _, ln in lines], delimiter=sep))
    header = [h.strip().lower() for h in rows[0]]
    dup = sorted({h for h in header if h and header.count(h) > 1})
    if dup:
        raise InputError(f"links table: column(s) {', '.join(dup)} appear more than once", path=where,
                         line=lines[0][0])
    missing = [name for name in REQUIRED if name not in header]
    if missing:
        raise InputError(f"links table lacks column(s) {', '.join(missing)}", path=where, line=lines[0][0])
    links: list[Link] = []
    seen: set[str] = set()
    for (number, _), fields_ in zip(lines[1:], rows[1:]):
        if len(fields_) > len(header) and any(f.strip() for f in fields_[len(header):]):
            raise InputError(f"links table: {len(fields_)} fields, the header has {len(header)}", path=where,
                             line=number)
        row = dict(zip(header, fields_))
        if sep == ",":   # a comma inside a quoted field of a comma-separated table: "1,000" is 1000 or 1.0?
            for name, value in row.items():
                if name in _RANGES and re.fullmatch(r"\s*[-+]?\d{1,3}(,\d{3})+\s*", value or ""):
                    raise InputError(f"links table: '{name}' = {value.strip()!r} may hold a thousands separator or "
                                     f"a decimal comma; write it with a decimal point and no separator",
                                     path=where, line=number)
        link = make_link(row, where=where, line=number)
        if link.link_id in seen:
            raise InputError(f"links table: link_id {link.link_id!r} appears twice", path=where, line=number)
        seen.add(link.link_id)
        links.append(link)
    if not links:
        raise InputError("links table has a header but no links", path=where)
    return links


def channel_polarization(channel: str, link: Link | None = None, default: str | None = None) -> str | None:
    """The polarisation of a channel: the link's when it is single-polarised (H or V), else "H" or "V" when the
    channel name says so (a token H/V/horizontal/vertical), else ``default``.  The one rule for a channel's
    polarisation (events, fading statistics and classification use it).

    On a single-polarised hop the channel names name the directions or ends ("A>B", "near", "S1>V2"), so a site
    code that reads like a polarisation token ("V2") must not override the links table."""
    if link is not None and link.polarization in ("H", "V"):
        return link.polarization
    tokens = [t for t in re.split(r"[^A-Za-z]+", str(channel).lower()) if t]
    if any(t in ("h", "horizontal", "hor", "hh") for t in tokens):
        return "H"
    if any(t in ("v", "vertical", "ver", "vv") for t in tokens):
        return "V"
    return default


def polarisation_guesses(link: Link, channels) -> list[str]:
    """What polarisation the analysis takes for each channel of a dual-polarised hop when the links table cannot
    say it per channel: from a channel name token (H/V), or none found (P.838 coefficients then fall back to
    horizontal where a polarisation is needed).  Each with its override.  A single-polarised hop's polarisation is
    the links table's: nothing is guessed."""
    if link.polarization in ("H", "V"):
        return []
    out = []
    for channel in channels:
        pol = channel_polarization(str(channel), link)
        if pol is None:
            out.append(f"channel '{channel}' of dual-polarised hop {link.link_id}: polarisation not known from its "
                       f"name; H assumed where one is needed (name the channels H and V, e.g. with --signal-col "
                       f"or [signals] channel)")
        else:
            out.append(f"channel '{channel}' of hop {link.link_id} taken as {pol}-polarised from its name (rename "
                       f"the channel with --signal-col or [signals] channel if wrong)")
    return out


def polarisation_from_channels(channels) -> str | None:
    """The hop polarisation the channel names say: "dual" when both H and V channels are named, "H" or "V" when
    only one is, else None (then it must be asked, never assumed: issue 15 case 4)."""
    pols = {channel_polarization(str(c)) for c in channels} - {None}
    return "dual" if pols == {"H", "V"} else (pols.pop() if len(pols) == 1 else None)
