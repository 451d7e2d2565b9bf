"""Scenario files (TOML, read with the standard library's ``tomllib``) and the built-in scenarios.

A scenario names hops and what happens to them::

    name = "example"
    description = "one short 23 GHz hop with a storm"
    tz = "Europe/Vienna"             # clock of the (invented) place; used by the local-time log shape
    start = "2026-06-08T00:00:00Z"   # defaults for every hop (any hop field may be set here) ...
    duration_h = 24
    interval_s = 1
    stats_interval_s = 900           # interval of the min/avg/max statistics shape

    [[link]]
    link_id = "HILL-MILL"            # links-table fields: frequency_ghz, length_km, polarization,
    frequency_ghz = 23               #   threshold_dbm, nominal_dbm, tx_dbm, ..., objective_pct, r001_mmh
    length_km = 6.5
    polarization = "dual"
    threshold_dbm = -72
    nominal_dbm = -38
    tilt_deg = 0                     # simulation fields: tilt_deg, xpd_antenna_db, atpc, atpc_range_db,
    log_shape = "wide_iso"           #   noise_db, quantisation_db, floor_dbm, *_fraction, log_shape, gzip,
    counters = false                 #   counters (SES/UAS columns in the statistics shape)

    [[link.rain]]                    # one table per effect: rain, multipath, refractive, level_shift,
    at_h = 14.5                      #   drift, signal_loss, gap.  When: at_h / at_min / at_s (after start)
    duration_min = 90                #   or at = "ISO time"; how long: duration_s / duration_min /
    peak_mmh = 60                    #   duration_h (none: until the end); the rest are its parameters

Times are hours after the hop's start unless ``at`` gives an ISO 8601 time.  A bad file raises
``InputError`` naming the file and the offending entry.
"""

from __future__ import annotations

import math
import tomllib
from pathlib import Path

import pandas as pd

from diag.errors import InputError
from diag.sim.simulate import EFFECT_KINDS, Effect, LinkSpec, Scenario
from diag.sim.spec import spec_field_names

__all__ = ["load_scenario", "parse_scenario", "builtin_names", "BUILTIN_DIR", "LINK_EXTRA_FIELDS"]

BUILTIN_DIR = Path(__file__).resolve().parent
# hop keys that are not LinkSpec fields but steer the output
LINK_EXTRA_FIELDS = ("log_shape", "gzip", "counters")
_SCENARIO_KEYS = {"name", "description", "tz", "stats_interval_s", "link", "defaults"}
_EFFECT_PARAMS = {
    "rain": {
        "peak_mmh",
        "profile",
        "cells",
        "variability",
        "variability_s",
        "wet_antenna_db",
        "drying_min",
        "wetting_s",
    },
    "multipath": {"k_min", "k_max", "fade_rate_hz", "correlation", "repeat_days", "plateau"},
    "refractive": {"depth_db"},
    "level_shift": {"step_db", "tilt_deg", "ramp_s", "channels"},
    "drift": {"db_per_week"},
    "signal_loss": {"channels"},
    "gap": set(),
}
_TIME_KEYS = {"at", "at_h", "at_min", "at_s", "duration_s", "duration_min", "duration_h", "duration_d"}
_SPEC_FIELDS = spec_field_names() - {"effects"}


def builtin_names() -> list[str]:
    """Names of the built-in scenarios (the ``*.toml`` files beside this module)."""
    return sorted(p.stem for p in BUILTIN_DIR.glob("*.toml"))


def load_scenario(name_or_path: str | Path) -> Scenario:
    """A built-in scenario by name, or a scenario file by path."""
    text_name = str(name_or_path)
    path = Path(text_name)
    if not path.suffix and (BUILTIN_DIR / f"{text_name}.toml").is_file():
        path = BUILTIN_DIR / f"{text_name}.toml"
    if not path.is_file():
        raise InputError(
            f"no scenario file or built-in scenario named {text_name!r} "
            f"(built-in: {', '.join(builtin_names())})",
            path=text_name,
        )
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"not a valid TOML scenario: {exc}", path=str(path)) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read scenario: {exc}", path=str(path)) from None
    return parse_scenario(data, where=str(path), default_name=path.stem)


def _seconds(value, what: str, where: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise InputError(f"{what} must be a number, not {value!r}", path=where)
    return float(value)


def _duration_s(entry: dict, what: str, where: str) -> float | None:
    given = [k for k in ("duration_s", "duration_min", "duration_h", "duration_d") if k in entry]
    if len(given) > 1:
        raise InputError(f"{what}: give only one of {', '.join(given)}", path=where)
    if not given:
        return None
    scale = {"duration_s": 1.0, "duration_min": 60.0, "duration_h": 3600.0, "duration_d": 86400.0}[given[0]]
    seconds = _seconds(entry[given[0]], f"{what}: {given[0]}", where) * scale
    if seconds <= 0:
        raise InputError(f"{what}: {given[0]} must be positive", path=where)
    return seconds


def _effect(kind: str, entry: dict, start: pd.Timestamp, what: str, where: str) -> Effect:
    if not isinstance(entry, dict):
        raise InputError(f"{what} must be a table ([[link.{kind}]])", path=where)
    unknown = set(entry) - _TIME_KEYS - _EFFECT_PARAMS[kind]
    if unknown:
        raise InputError(
            f"{what}: unknown key(s) {', '.join(sorted(unknown))} (allowed: "
            f"{', '.join(sorted(_EFFECT_PARAMS[kind] | _TIME_KEYS))})",
            path=where,
        )
    whens = [k for k in ("at", "at_h", "at_min", "at_s") if k in entry]
    if len(whens) != 1:
        raise InputError(f"{what}: give exactly one of at (ISO time), at_h, at_min, at_s", path=where)
    key = whens[0]
    if key == "at":
        try:
            stamp = pd.Timestamp(entry["at"])
        except (ValueError, TypeError):
            raise InputError(f"{what}: at = {entry['at']!r} is not an ISO 8601 time", path=where) from None
        stamp = stamp.tz_localize("UTC") if stamp.tzinfo is None else stamp.tz_convert("UTC")
        start_s = (stamp - start).total_seconds()
    else:
        scale = {"at_h": 3600.0, "at_min": 60.0, "at_s": 1.0}[key]
        start_s = _seconds(entry[key], f"{what}: {key}", where) * scale
    params = {k: v for k, v in entry.items() if k not in _TIME_KEYS}
    for name, value in params.items():
        if name == "profile":
            if value not in ("storm", "constant"):
                raise InputError(f"{what}: profile must be 'storm' or 'constant'", path=where)
        elif name == "channels":
            if not isinstance(value, list) or not all(isinstance(c, str) for c in value):
                raise InputError(f"{what}: channels must be a list of channel names", path=where)
        else:
            _seconds(value, f"{what}: {name}", where)
    try:
        return Effect(kind, start_s, _duration_s(entry, what, where), params)
    except InputError as exc:
        raise InputError(f"{what}: {exc.message}", path=where) from None


def parse_scenario(data: dict, *, where: str = "scenario", default_name: str = "scenario") -> Scenario:
    """Build a :class:`Scenario` from parsed TOML (a dict)."""
    if not isinstance(data, dict):
        raise InputError("a scenario must be a TOML table", path=where)
    links = data.get("link")
    if not isinstance(links, list) or not links:
        raise InputError("a scenario needs at least one [[link]] table", path=where)
    defaults = {k: v for k, v in data.items() if k not in _SCENARIO_KEYS}
    defaults.update(data.get("defaults", {}) if isinstance(data.get("defaults"), dict) else {})
    specs, extras, seen = [], {}, set()
    for number, raw in enumerate(links, start=1):
        if not isinstance(raw, dict):
            raise InputError(f"[[link]] number {number} is not a table", path=where)
        entry = {**defaults, **raw}
        what = f"link {entry.get('link_id', number)!s}"
        effects_raw = {kind: entry.pop(kind) for kind in EFFECT_KINDS if kind in entry}
        duration = _duration_s(entry, what, where)
        for key in ("duration_min", "duration_h", "duration_d"):
            entry.pop(key, None)
        if duration is not None:
            entry["duration_s"] = duration
        extra = {k: entry.pop(k) for k in LINK_EXTRA_FIELDS if k in entry}
        unknown = set(entry) - _SPEC_FIELDS
        if unknown:
            raise InputError(f"{what}: unknown key(s) {', '.join(sorted(unknown))}", path=where)
        if "start" in entry:
            entry["start"] = str(entry["start"])
        try:
            spec = LinkSpec(**entry)
            start = spec.start_utc
        except InputError as exc:
            raise InputError(f"{what}: {exc.message}", path=where) from None
        except (TypeError, ValueError) as exc:
            raise InputError(f"{what}: {' '.join(str(exc).split())}", path=where) from None
        if spec.link_id in seen:
            raise InputError(f"{what}: link_id appears twice", path=where)
        seen.add(spec.link_id)
        effects = []
        for kind, items in effects_raw.items():
            items = items if isinstance(items, list) else [items]
            for index, item in enumerate(items, start=1):
                effects.append(_effect(kind, item, start, f"{what}: {kind} #{index}", where))
        effects.sort(key=lambda e: (e.start_s, EFFECT_KINDS.index(e.kind)))
        specs.append(spec.replace(effects=tuple(effects)))
        shape = extra.get("log_shape", "wide_iso")
        from diag.sim.log_shapes import SHAPES

        if shape not in SHAPES:
            raise InputError(f"{what}: log_shape must be one of {', '.join(SHAPES)}", path=where)
        extras[spec.link_id] = {
            "log_shape": shape,
            "gzip": bool(extra.get("gzip", False)),
            "counters": bool(extra.get("counters", False)),
        }
    tz = str(data.get("tz", "UTC"))
    try:
        pd.Timestamp("2026-01-01", tz=tz)
    except Exception:  # noqa: BLE001 - any failure means the zone is unknown
        raise InputError(f"tz = {tz!r} is not an IANA time zone name", path=where) from None
    stats_interval = _seconds(data.get("stats_interval_s", 900), "stats_interval_s", where)
    return Scenario(
        name=str(data.get("name", default_name)),
        links=tuple(specs),
        description=str(data.get("description", "")),
        tz=tz,
        outputs=extras,
        stats_interval_s=stats_interval,
    )
