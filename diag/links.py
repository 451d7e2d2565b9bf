"""The link description: a links table (CSV) or command-line flags, one ``Link`` per hop.

Required fields: ``link_id, frequency_ghz, length_km, polarization`` (H, V or dual), ``threshold_dbm``.
Optional: ``nominal_dbm, tx_dbm, antenna_gain_dbi, antenna_height_m, geoclimatic_k, r001_mmh, objective_pct,
xpd_required_db``, ``site_a_lat, site_a_lon, site_b_lat, site_b_lon`` (degrees; used for the local solar time
and the distances between hops in network corroboration).  A missing optional field is ``None``; the analysis
names the checks it had to skip.
"""
from __future__ import annotations

import csv
import io
import math
from dataclasses import asdict, dataclass, fields
from pathlib import Path

from diag.errors import InputError

REQUIRED = ("link_id", "frequency_ghz", "length_km", "polarization", "threshold_dbm")
OPTIONAL = ("nominal_dbm", "tx_dbm", "antenna_gain_dbi", "antenna_height_m", "geoclimatic_k", "r001_mmh",
            "objective_pct", "xpd_required_db")
# optional site coordinates [deg] (links table only): local solar time and distances between hops
COORDINATES = ("site_a_lat", "site_a_lon", "site_b_lat", "site_b_lon")
POLARIZATIONS = ("H", "V", "dual")

# plausibility ranges: outside them the value is almost certainly a unit or typing mistake
_RANGES = {
    "frequency_ghz": (1.0, 100.0),
    "length_km": (0.01, 200.0),
    "threshold_dbm": (-120.0, -20.0),
    "nominal_dbm": (-120.0, 10.0),
    "tx_dbm": (-30.0, 50.0),
    "antenna_gain_dbi": (0.0, 65.0),
    "antenna_height_m": (0.0, 1000.0),
    "geoclimatic_k": (1e-9, 1e-1),
    "r001_mmh": (0.0, 300.0),
    "objective_pct": (50.0, 100.0),
    "xpd_required_db": (0.0, 60.0),
    "site_a_lat": (-90.0, 90.0),
    "site_a_lon": (-180.0, 180.0),
    "site_b_lat": (-90.0, 90.0),
    "site_b_lon": (-180.0, 180.0),
}


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
    try:
        value = float(str(raw).strip().replace(",", ".")) if isinstance(raw, str) else float(raw)
    except ValueError:
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
    return Link(**kwargs)


def read_links_table(path_or_text: str | Path, *, text: str | None = None) -> list[Link]:
    """Read a links table CSV (comma or semicolon separated).  Raises ``InputError`` on any bad row."""
    where = str(path_or_text)
    if text is None:
        try:
            raw = Path(path_or_text).read_bytes()
        except OSError as exc:
            raise InputError(f"cannot read links table: {exc.strerror}", path=where) from None
        try:
            text = raw.decode("utf-8-sig")
        except UnicodeDecodeError:
            text = raw.decode("latin-1")
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.lstrip().startswith("#")]
    if not lines:
        raise InputError("links table is empty", path=where)
    sep = ";" if lines[0].count(";") > lines[0].count(",") else ","
    reader = csv.DictReader(io.StringIO("\n".join(lines)), delimiter=sep)
    header = [h.strip().lower() for h in (reader.fieldnames or [])]
    missing = [name for name in REQUIRED if name not in header]
    if missing:
        raise InputError(f"links table lacks column(s) {', '.join(missing)}", path=where, line=1)
    reader.fieldnames = header
    links: list[Link] = []
    seen: set[str] = set()
    for number, row in enumerate(reader, start=2):
        link = make_link(row, where=where, line=number)
        if link.link_id in seen:
            raise InputError(f"links table: link_id {link.link_id!r} appears twice", path=where, line=number)
        seen.add(link.link_id)
        links.append(link)
    if not links:
        raise InputError("links table has a header but no links", path=where)
    return links


def link_field_names() -> list[str]:
    return [f.name for f in fields(Link)]


def match_link(links: list[Link], link_id: str | None, *, file_name: str | None = None) -> Link:
    """The link a log belongs to: by id, else by file name containing an id, else the table's only row."""
    by_id = {link.link_id: link for link in links}
    if link_id and link_id in by_id:
        return by_id[link_id]
    if file_name:
        stem = Path(file_name).name
        hits = [link for link in links if link.link_id and link.link_id in stem]
        if len(hits) >= 1:
            return max(hits, key=lambda item: len(item.link_id))
    if len(links) == 1:
        return links[0]
    raise InputError(f"no link in the links table matches {link_id or file_name!r}; add a row for it",
                     path=file_name)
