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


LINK_FIELDS = ("link_id", "frequency_ghz", "length_km", "polarization", "threshold_dbm") + OPTIONAL
_DEFAULT_NOMINAL_DBM = -40.0   # clear-sky receive level when none is given (with ATPC: at the ATPC minimum power)
_DEFAULT_ATPC_TX_DBM = 20.0    # maximum transmit power (ATPC top) when none is given


@dataclass(frozen=True, init=False)
class LinkSpec:
    """A hop to simulate: the hop itself (``link``, a :class:`diag.links.Link`), the simulation-only fields and its
    effects.

    Built from the links-table fields, positionally or by name as a scenario file gives them
    (``LinkSpec("HOP", 23.0, 5.0, "H", -70.0, nominal_dbm=-38.0, duration_s=...)``), or from a Link
    (``LinkSpec(link=..., duration_s=...)``).  The Link's fields read through (``spec.frequency_ghz`` is
    ``spec.link.frequency_ghz``).  Defaults: ``nominal_dbm`` -40 dBm (the clear-sky level; with ATPC at the ATPC
    minimum power), ``tx_dbm`` 20 dBm with ATPC (the ATPC top).
    """

    link: Link
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

    def __init__(self, link_id: str | None = None, frequency_ghz: float | None = None, length_km: float | None = None,
                 polarization: str | None = None, threshold_dbm: float | None = None,
                 nominal_dbm: float | None = None, tx_dbm: float | None = None,
                 antenna_gain_dbi: float | None = None, antenna_height_m: float | None = None,
                 geoclimatic_k: float | None = None, r001_mmh: float | None = None,
                 objective_pct: float | None = None, xpd_required_db: float | None = None, *,
                 link: Link | None = None, **simulation):
        given = {"link_id": link_id, "frequency_ghz": frequency_ghz, "length_km": length_km,
                 "polarization": polarization, "threshold_dbm": threshold_dbm, "nominal_dbm": nominal_dbm,
                 "tx_dbm": tx_dbm, "antenna_gain_dbi": antenna_gain_dbi, "antenna_height_m": antenna_height_m,
                 "geoclimatic_k": geoclimatic_k, "r001_mmh": r001_mmh, "objective_pct": objective_pct,
                 "xpd_required_db": xpd_required_db}
        unknown = set(simulation) - _SIMULATION_FIELDS
        if unknown:
            raise TypeError(f"LinkSpec got unexpected field(s) {', '.join(sorted(unknown))}")
        for name in _SIMULATION_FIELDS:
            default = LinkSpec.__dataclass_fields__[name].default
            object.__setattr__(self, name, simulation.get(name, default))
        if link is not None:
            if any(value is not None for value in given.values()):
                raise TypeError("LinkSpec takes either a link or its fields, not both")
            values = link.to_dict()
        else:
            values = dict(given)
        if values["nominal_dbm"] is None:
            values["nominal_dbm"] = _DEFAULT_NOMINAL_DBM
        if values["tx_dbm"] is None and self.atpc:
            values["tx_dbm"] = _DEFAULT_ATPC_TX_DBM
        self._check(values)
        object.__setattr__(self, "link", make_link(values, where=f"scenario link {values['link_id']}"))

    def __getattr__(self, name: str):
        """The Link's fields read through (``spec.frequency_ghz``)."""
        if name in LINK_FIELDS:
            return getattr(self.link, name)
        raise AttributeError(f"{type(self).__name__!r} object has no attribute {name!r}")

    def _check(self, values: dict) -> None:
        """The simulation-only fields, and how they sit with the hop's (the hop's own fields are checked by
        :func:`diag.links.make_link`)."""
        link_id = values["link_id"]
        if self.interval_s <= 0 or self.duration_s < self.interval_s:
            raise InputError(f"link {link_id}: interval_s must be positive and not above duration_s")
        if self.duration_s / self.interval_s > 50_000_000:
            raise InputError(f"link {link_id}: more than 50 million samples; shorten or coarsen")
        for name in ("blank_fraction", "drop_fraction", "duplicate_fraction", "swap_fraction"):
            if not 0.0 <= getattr(self, name) < 0.5:
                raise InputError(f"link {link_id}: {name} must be in [0, 0.5)")
        for name in ("noise_db", "quantisation_db", "atpc_range_db"):
            value = getattr(self, name)
            if not (value >= 0.0 and math.isfinite(value)):
                raise InputError(f"link {link_id}: {name} must be a finite number >= 0")
        if not 0.0 <= self.tilt_deg < 45.0:
            raise InputError(f"link {link_id}: tilt_deg must be in [0, 45)")
        if self._floor_value(values["threshold_dbm"]) >= values["threshold_dbm"]:
            raise InputError(f"link {link_id}: floor_dbm must be below threshold_dbm")
        if values["nominal_dbm"] <= values["threshold_dbm"]:
            raise InputError(f"link {link_id}: nominal_dbm must be above threshold_dbm (no fade margin)")
        if self.directions:
            names = tuple(str(name) for name in self.direction_names)
            object.__setattr__(self, "direction_names", names)  # a TOML list becomes a tuple (frozen dataclass)
            if values["polarization"] not in ("H", "V"):
                raise InputError(f"link {link_id}: directions need a single polarisation (H or V)")
            if len(names) != 2 or names[0] == names[1] or not all(name.strip() for name in names):
                raise InputError(f"link {link_id}: direction_names must be two different names")

    def _floor_value(self, threshold_dbm) -> float:
        if self.floor_dbm is not None:
            return float(self.floor_dbm)
        return min(-99.0, math.floor(threshold_dbm) - 10.0)

    @property
    def floor_value_dbm(self) -> float:
        return self._floor_value(self.link.threshold_dbm)

    @property
    def start_utc(self) -> pd.Timestamp:
        stamp = pd.Timestamp(self.start)
        return stamp.tz_localize("UTC") if stamp.tzinfo is None else stamp.tz_convert("UTC")

    @property
    def channels(self) -> list[str]:
        return channels_for(self.polarization, self.direction_names if self.directions else None)

    def to_link(self) -> Link:
        return self.link

    def replace(self, **changes) -> "LinkSpec":
        """A copy with some fields changed: simulation fields, and the Link's fields by name (or ``link=``)."""
        link_changes = {name: changes.pop(name) for name in LINK_FIELDS if name in changes}
        link = changes.pop("link", self.link)
        if link_changes:
            link = dataclasses.replace(link, **link_changes)
        current = {name: getattr(self, name) for name in _SIMULATION_FIELDS}
        return LinkSpec(link=link, **{**current, **changes})


_SIMULATION_FIELDS = frozenset(f.name for f in dataclasses.fields(LinkSpec)) - {"link"}


def spec_field_names() -> set[str]:
    """Every key a hop of a scenario may give: the Link's fields and the simulation-only fields."""
    return set(LINK_FIELDS) | set(_SIMULATION_FIELDS)


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
