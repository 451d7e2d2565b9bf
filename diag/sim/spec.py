"""What the simulator is told: a hop (:class:`LinkSpec`), what happens to it (:class:`Effect`), a set of hops
(:class:`Scenario`), and what a simulation returns (:class:`SimResult`).  The physics of each effect is described in
:mod:`diag.sim.physics`; :func:`diag.sim.simulate.simulate_link` runs it.
"""
from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field
from typing import Mapping, Sequence

import pandas as pd

from diag import schema
from diag.errors import InputError
from diag.links import OPTIONAL, Link, make_link

EFFECT_KINDS = ("rain", "multipath", "refractive", "level_shift", "drift", "signal_loss", "gap")
# per-sample contribution columns of the truth, in this order
TRUTH_CAUSES = (schema.RAIN, schema.MULTIPATH, schema.REFRACTIVE, schema.LEVEL_SHIFT, schema.SIGNAL_LOSS)
_KIND_CAUSE = {
    "rain": schema.RAIN,
    "multipath": schema.MULTIPATH,
    "refractive": schema.REFRACTIVE,
    "level_shift": schema.LEVEL_SHIFT,
    "drift": schema.LEVEL_SHIFT,
    "signal_loss": schema.SIGNAL_LOSS,
    "gap": schema.NO_DATA,
}
FADE_LABEL_DB = 3.0  # a sample is "faded" (gets a cause label) when the total fade exceeds this
DIRECTION_NAMES = ("A>B", "B>A")  # channel names of a directions hop: sent from the first end, logged at the second
# complex correlation of the multipath scatter of go and return on a directions hop (a modelling choice: strongly,
# not fully correlated; see the module docstring)
DIRECTION_MP_CORRELATION = 0.9
TRUTH_EVENT_COLUMNS = [
    "link_id",
    "channel",
    "start_utc",
    "end_utc",
    "cause",
    "kind",
    "peak_fade_db",
    "peak_rain_mmh",
    "k_min",
    "fade_rate_hz",
    "step_db",
    "tilt_deg",
    "db_per_week",
    "shift_utc",
    "params",
]


@dataclass(frozen=True)
class Effect:
    """Something that happens to a hop: ``kind`` (EFFECT_KINDS), ``start_s`` after the hop's start,
    ``duration_s`` (``None``: until the end) and kind-specific ``params`` (see the module docstring)."""

    kind: str
    start_s: float
    duration_s: float | None = None
    params: Mapping = field(default_factory=dict)

    def __post_init__(self):
        if self.kind not in EFFECT_KINDS:
            raise InputError(f"unknown effect kind {self.kind!r}; use one of {', '.join(EFFECT_KINDS)}")
        if not math.isfinite(self.start_s):
            raise InputError(f"{self.kind}: start is not finite")
        if self.duration_s is not None and not (self.duration_s > 0 and math.isfinite(self.duration_s)):
            raise InputError(f"{self.kind}: duration must be positive")


@dataclass(frozen=True)
class LinkSpec:
    """A hop to simulate: the links-table fields, the simulation-only fields and its effects."""

    link_id: str
    frequency_ghz: float
    length_km: float
    polarization: str  # "H", "V" or "dual"
    threshold_dbm: float
    nominal_dbm: float = -40.0  # clear-sky receive level (with ATPC: at the ATPC minimum power)
    tx_dbm: float | None = None  # maximum transmit power (ATPC top); default 20 dBm
    antenna_gain_dbi: float | None = None
    antenna_height_m: float | None = None
    geoclimatic_k: float | None = None
    r001_mmh: float | None = None
    objective_pct: float | None = None
    xpd_required_db: float | None = None
    # simulation-only
    tilt_deg: float = 0.0  # polarisation tilt present from the start
    xpd_antenna_db: float = 35.0  # antennas' own cross-polar discrimination (dual-polarised hops)
    atpc: bool = False
    atpc_range_db: float = 10.0
    start: str = "2026-06-01T00:00:00Z"
    duration_s: float = 86400.0
    interval_s: float = 1.0
    noise_db: float = 0.1  # measurement noise, standard deviation [dB]
    quantisation_db: float = 0.1  # 0 = none
    floor_dbm: float | None = None  # level reported when the receiver has no usable signal
    channel_offset_db: float = 0.3  # clear-sky level of the 2nd channel relative to the 1st (dual)
    blank_fraction: float = 0.0  # rows present but with empty values
    drop_fraction: float = 0.0  # sporadic missed polls (no row)
    duplicate_fraction: float = 0.0  # rows repeated in the file
    swap_fraction: float = 0.0  # adjacent rows out of order in the file
    effects: tuple = ()
    # both directions of a single-polarised hop, one channel per direction (see the module docstring)
    directions: bool = False
    direction_names: tuple = DIRECTION_NAMES

    def __post_init__(self):
        if self.interval_s <= 0 or self.duration_s < self.interval_s:
            raise InputError(f"link {self.link_id}: interval_s must be positive and not above duration_s")
        if self.duration_s / self.interval_s > 50_000_000:
            raise InputError(f"link {self.link_id}: more than 50 million samples; shorten or coarsen")
        for name in ("blank_fraction", "drop_fraction", "duplicate_fraction", "swap_fraction"):
            if not 0.0 <= getattr(self, name) < 0.5:
                raise InputError(f"link {self.link_id}: {name} must be in [0, 0.5)")
        for name in ("noise_db", "quantisation_db", "atpc_range_db"):
            value = getattr(self, name)
            if not (value >= 0.0 and math.isfinite(value)):
                raise InputError(f"link {self.link_id}: {name} must be a finite number >= 0")
        if not 0.0 <= self.tilt_deg < 45.0:
            raise InputError(f"link {self.link_id}: tilt_deg must be in [0, 45)")
        if self.floor_value_dbm >= self.threshold_dbm:
            raise InputError(f"link {self.link_id}: floor_dbm must be below threshold_dbm")
        if self.nominal_dbm <= self.threshold_dbm:
            raise InputError(f"link {self.link_id}: nominal_dbm must be above threshold_dbm (no fade margin)")
        if self.directions:
            names = tuple(str(name) for name in self.direction_names)
            object.__setattr__(self, "direction_names", names)  # a TOML list becomes a tuple (frozen dataclass)
            if self.polarization not in ("H", "V"):
                raise InputError(f"link {self.link_id}: directions need a single polarisation (H or V)")
            if len(names) != 2 or names[0] == names[1] or not all(name.strip() for name in names):
                raise InputError(f"link {self.link_id}: direction_names must be two different names")
        self.to_link()  # validates the links-table fields

    @property
    def floor_value_dbm(self) -> float:
        if self.floor_dbm is not None:
            return float(self.floor_dbm)
        return min(-99.0, math.floor(self.threshold_dbm) - 10.0)

    @property
    def start_utc(self) -> pd.Timestamp:
        stamp = pd.Timestamp(self.start)
        return stamp.tz_localize("UTC") if stamp.tzinfo is None else stamp.tz_convert("UTC")

    @property
    def channels(self) -> list[str]:
        return channels_for(self.polarization, self.direction_names if self.directions else None)

    def to_link(self) -> Link:
        values = {
            name: getattr(self, name)
            for name in ("link_id", "frequency_ghz", "length_km", "polarization", "threshold_dbm") + OPTIONAL
        }
        if values["tx_dbm"] is None and self.atpc:
            values["tx_dbm"] = 20.0
        return make_link(values, where=f"scenario link {self.link_id}")

    def replace(self, **changes) -> "LinkSpec":
        return dataclasses.replace(self, **changes)


@dataclass(frozen=True)
class Scenario:
    """A set of hops and what happens to them."""

    name: str
    links: tuple
    description: str = ""
    tz: str = "UTC"  # local time zone of the invented place (used by the local-time writer)
    outputs: Mapping = field(default_factory=dict)  # link_id -> {"log_shape": shape, "gzip": bool}
    stats_interval_s: float = 900.0  # interval of the min/avg/max statistics shape

    def link_list(self) -> list[Link]:
        return [spec.to_link() for spec in self.links]


@dataclass
class SimResult:
    """One simulated hop (see the module docstring)."""

    spec: LinkSpec
    link: Link
    table: pd.DataFrame
    truth_samples: pd.DataFrame
    truth_events: pd.DataFrame
    file_defects: dict


def channels_for(polarization: str, directions: Sequence[str] | None = None) -> list[str]:
    """Channel names of a simulated hop: H and V (dual), the polarisation (single), or one per direction."""
    if directions is not None:
        return [str(name) for name in directions]
    return ["H", "V"] if polarization == "dual" else [polarization]
