"""Column-name recognition: what a header name says (quantity, statistic, interval, unit, channel, role).

``recognise_name`` parses a signal column name (``RSL H (dBm)``, ``RxLevel_V``, ``RSL_min_15min``, ``XPD [dB]``)
into a ``NameInfo``; ``name_role`` tells the time, link, channel, quantity-name and value columns from their names.
The phrase tables below are the vocabulary.  Used by ``diag.read.colplan`` (the column plan) and
``diag.read.normalise``.
"""
from __future__ import annotations

import functools
import re
from dataclasses import dataclass

from diag import schema as S

# ---------------------------------------------------------------------------------------------------------------
# column names

_UNIT_RE = re.compile(r"\b(dbm|dbmw|db|dbuv|dbµv)\b", re.I)
_POWER_RE = re.compile(r"[\(\[]\s*([mµun]?w)\s*[\)\]]|(?<![A-Za-z])(mw|uw|nw)(?![A-Za-z])", re.I)
_INTERVAL_RE = re.compile(r"\b(\d+(?:\.\d+)?)\s*(s|sec|secs|seconds?|m|mins?|minutes?|h|hr|hrs|hours?)\b", re.I)
_INTERVAL_UNIT_S = {"s": 1, "sec": 1, "secs": 1, "second": 1, "seconds": 1, "m": 60, "min": 60, "mins": 60,
                    "minute": 60, "minutes": 60, "h": 3600, "hr": 3600, "hrs": 3600, "hour": 3600,
                    "hours": 3600}
_TOKEN_RE = re.compile(r"[A-Z]+(?![a-z])|[A-Z]?[a-z]+|\d+")

# phrases (token tuples, lower case) -> quantity; longest phrase wins; order breaks ties
_QUANTITY_PHRASES: list[tuple[tuple[str, ...], str]] = []


def _add(quantity: str, *phrases: str) -> None:
    for p in phrases:
        _QUANTITY_PHRASES.append((tuple(p.split()), quantity))


_add(S.XPL, "xpl", "xpol level", "x pol level", "xpol rsl", "x pol rsl", "xpol rx level", "cross pol level",
     "cross polar level", "cross polarisation level", "cross polarization level", "cross pol rsl",
     "cross polar rsl", "cross pol rx level", "xpol rxlevel")
_add(S.XPD, "xpd", "cross pol discrimination", "cross polar discrimination", "xpol discrimination",
     "cross polarisation discrimination", "cross polarization discrimination")
_add(S.SES, "ses", "severely errored seconds", "severely errored second", "sev errored seconds")
_add(S.UAS, "uas", "unavailable seconds", "unavailable second", "unavail seconds")
_add(S.ES, "es", "errored seconds", "errored second")
_add(S.TSL, "tsl", "tx level", "txlevel", "tx lvl", "txlvl", "tx power", "txpower", "ptx", "transmit level",
     "transmitted level", "transmit power", "transmitted power", "output power", "tx", "tx pwr", "sendepegel")
_add(S.RSL, "rsl", "rxl", "rx level", "rxlevel", "rx lvl", "rxlvl", "rx power", "rxpower", "prx", "rssi",
     "receive level", "received level", "receive signal level", "received signal level", "receive power",
     "received power", "rx", "rx signal level", "input level", "rcv level", "rx pwr", "empfangspegel",
     "niveau recu", "rx signal", "receive lvl")
_MAX_PHRASE = max(len(p) for p, _ in _QUANTITY_PHRASES)
_PHRASE_MAP = {p: q for p, q in reversed(_QUANTITY_PHRASES)}  # earlier entries win

_STAT_WORDS = {"min": S.MIN, "minimum": S.MIN, "lowest": S.MIN, "max": S.MAX, "maximum": S.MAX,
               "highest": S.MAX, "avg": S.AVG, "average": S.AVG, "mean": S.AVG, "av": S.AVG}
_FILLER_WORDS = {"value", "val", "level", "lvl", "current", "cur", "inst", "instant", "reading", "signal", "in",
                 "the", "of", "per", "interval", "period"}
_TIME_WORDS = {"time", "timestamp", "datetime", "date", "utc", "gmt", "local", "zeit", "uhrzeit", "datum",
               "epoch", "unix", "ts", "stamp", "start", "begin", "end", "period", "interval", "heure", "hora",
               "fecha", "day", "clock", "sample", "measured", "at", "logged", "log", "s", "ms", "sec", "z",
               "lt", "tz", "hour", "zeitstempel", "horodatage"}
_LINK_WORDS = {"link", "hop", "linkid", "path", "connection", "linkname", "hopid"}
_LINK_PHRASE_OK = {"id", "name", "no", "nr", "number", "label", "code"}
_CHANNEL_WORDS = {"channel", "ch", "pol", "polarization", "polarisation", "polarity", "direction", "dir", "port",
                  "carrier", "branch", "chan", "polar"}
_QNAME_WORDS = {"parameter", "param", "quantity", "metric", "measurement", "counter", "kpi", "variable",
                "measure", "type", "name"}
_VALUE_WORDS = {"value", "val", "reading", "wert", "valeur", "measurement", "result"}


@dataclass(frozen=True)
class NameInfo:
    """What a column name says."""

    quantity: str | None = None
    stat: str = S.SAMPLE
    interval_s: float | None = None
    unit: str | None = None
    channel: str | None = None   # leftover text (wide layout channel)
    guessed: bool = False        # quantity only inferred from a unit or a vague word


def _tokens(name: str):
    """Tokens of a name with spans: camelCase and letter/digit boundaries split, punctuation dropped."""
    return [(m.group(0), m.start(), m.end()) for m in _TOKEN_RE.finditer(name)]


@functools.lru_cache(maxsize=4096)
def recognise_name(name: str) -> NameInfo:
    """Parse a signal column name such as ``RSL H (dBm)``, ``RxLevel_V``, ``RSL_min_15min`` or ``XPD [dB]``."""
    text = re.sub(r"[^0-9A-Za-z]", " ", str(name))  # same length: spans stay valid
    interval = None
    m = _INTERVAL_RE.search(text)
    if m:
        interval = float(m.group(1)) * _INTERVAL_UNIT_S[m.group(2).lower()]
        text = text[:m.start()] + " " * (m.end() - m.start()) + text[m.end():]
    unit = None
    pw = _POWER_RE.search(str(name))
    if pw:
        unit = (pw.group(1) or pw.group(2)).lower().replace("µ", "u")
        text = text[:pw.start()] + " " * (pw.end() - pw.start()) + text[pw.end():]
    for u in _UNIT_RE.finditer(text):
        unit = u.group(1).lower().replace("µ", "u")
    text = _UNIT_RE.sub(lambda x: " " * len(x.group(0)), text)
    toks = _tokens(text)
    low = [t[0].lower() for t in toks]
    used = [False] * len(toks)
    quantity = None
    i = 0
    while i < len(low):
        hit = None
        for n in range(min(_MAX_PHRASE, len(low) - i), 0, -1):
            q = _PHRASE_MAP.get(tuple(low[i:i + n]))
            if q is not None:
                hit = (n, q)
                break
        if hit and quantity is None:
            n, quantity = hit
            for k in range(i, i + n):
                used[k] = True
            i += n
            continue
        i += 1
    stat = S.SAMPLE
    for k, w in enumerate(low):
        if not used[k] and w in _STAT_WORDS:
            stat = _STAT_WORDS[w]
            used[k] = True
    guessed = False
    if quantity is None:
        vague = {"level", "lvl", "signal", "pegel", "niveau", "power"}
        if unit == "dbm" or any(w in vague for w in low):
            if unit in (None, "dbm"):
                quantity, guessed = S.RSL, True
        elif unit == "db" and any(w in {"xpol", "cross"} for w in low):
            quantity, guessed = S.XPD, True
    for k, w in enumerate(low):
        if not used[k] and w in _FILLER_WORDS:
            used[k] = True
    left = [toks[k] for k in range(len(toks)) if not used[k]]
    channel = None
    if left:
        start, end = left[0][1], left[-1][2]
        piece = str(name)[start:end]
        contiguous = all(not used[k] for k in range(len(toks)) if start <= toks[k][1] < end)
        channel = piece.strip(" _-.:/") if contiguous else " ".join(t[0] for t in left)
        channel = channel or None
    return NameInfo(quantity, stat, interval, unit, channel, guessed)


def _words(name: str) -> list[str]:
    return [t[0].lower() for t in _tokens(re.sub(r"[^0-9A-Za-z]", " ", str(name)))]


@functools.lru_cache(maxsize=4096)
def name_role(name: str) -> str | None:
    """'time', 'link', 'channel', 'qname' or 'value' when the name alone says so (signal names excluded)."""
    w = _words(name)
    if not w:
        return None
    ws = set(w)
    if ws & _LINK_WORDS and ws <= (_LINK_WORDS | _LINK_PHRASE_OK):
        return "link"
    if ws & _CHANNEL_WORDS and ws <= (_CHANNEL_WORDS | {"id", "name", "no", "nr"}):
        return "channel"
    if ws <= _TIME_WORDS and ws & {"time", "timestamp", "datetime", "date", "zeit", "uhrzeit", "datum",
                                   "epoch", "unix", "ts", "stamp", "heure", "hora", "fecha", "clock", "utc",
                                   "gmt", "start", "begin", "end", "period", "day", "hour",
                                   "zeitstempel", "horodatage"}:
        return "time"
    if ws <= _QNAME_WORDS | {"id"} and ws & _QNAME_WORDS - {"measurement"}:
        return "qname"
    if ws <= _VALUE_WORDS:
        return "value"
    return None
