"""Which hop of the links table a log's rows belong to: the one rule every entry point uses (``analyze``,
``batch``, the dashboard, the reader's ``[link] only`` filter).

The rule (explicit, never a silent reassignment):

- A log that names its hops (a link column, ``--link-id`` or the mapping's ``[link] id``): each id must be a row of
  the links table.  An id that is not is an error naming it, or, with ``--only-listed`` (the mapping's
  ``[link] only``), its rows are rejected by the reader under ``unlisted_hop``.  One exception: a links table of
  exactly one row and a log that names exactly one hop with another id: the row is used for it, with a warning
  naming both ids.
- A log that names no hop (its id was taken from the file name, or is the default): the links-table id that the
  file name contains as a whole word (bounded by characters other than letters and digits; the longest where one
  id contains another); several such ids are an error; none: the table's only row, else an error.
"""
from __future__ import annotations

import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Iterable

from diag import schema as S
from diag.errors import InputError

UNLISTED = "unlisted_hop"          # the reader's row reason for rows of a hop that is not in the links table
NAMED_SOURCES = ("column", "argument", "mapping")   # IngestReport.link_source values meaning "the log names it"


@dataclass
class HopAssignment:
    """``hops``: the log's link id -> the links-table id its rows are analysed under; ``warnings``: what was
    applied that the user should know."""

    hops: dict[str, str] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)
    unlisted: list[str] = field(default_factory=list)   # named ids kept under their own id (keep_unlisted)


def _ids(links: Iterable) -> list[str]:
    return [str(getattr(x, "link_id", x)) for x in links]


def hop_of_file_name(links: Iterable, file_name: str | None) -> str | None:
    """The links-table id a file name contains as a whole word (None when none does).  ``InputError`` when it
    contains several (``link_12.csv`` with ids ``1`` and ``12`` gives ``12``; with ids ``1`` and ``2`` it gives
    none: ``1`` and ``2`` are not whole words of it)."""
    if not file_name:
        return None
    name = Path(str(file_name)).name
    spans = []
    for link_id in dict.fromkeys(_ids(links)):
        if not link_id:
            continue
        pattern = r"(?<![A-Za-z0-9])" + re.escape(link_id) + r"(?![A-Za-z0-9])"
        for m in re.finditer(pattern, name, flags=0):
            spans.append((m.start(), m.end(), link_id))
    # an id inside a longer matching id at the same place is not a match of its own (HOP-A inside HOP-A-2)
    kept = {sid for a, b, sid in spans
            if not any(a2 <= a and b <= b2 and (b2 - a2) > (b - a) for a2, b2, _ in spans)}
    if len(kept) > 1:
        raise InputError(f"the file name matches several hops of the links table ({', '.join(sorted(kept))}); "
                         f"rename the file or give --link-id", path=str(file_name))
    return next(iter(kept)) if kept else None


def assign_hops(log_ids: Iterable[str], links: Iterable, *, file_name: str | None = None,
                names_hop: bool = True, keep_unlisted: bool = False) -> HopAssignment:
    """Match the link ids found in one log to the links table (the rule in the module docstring).

    ``log_ids``: the distinct link ids of the log's rows; ``names_hop``: whether the log itself names them (False
    when the reader took the id from the file name or used the default).  Raises ``InputError`` naming the ids
    that match no row, unless ``keep_unlisted`` (``batch``: such a hop is listed as not analysed, with the
    reason), where they map to themselves and are listed in ``unlisted``."""
    table = _ids(links)
    listed = set(table)
    ids = [str(i) for i in dict.fromkeys(log_ids)]
    out = HopAssignment()
    if not table:
        raise InputError("the links table holds no hop")
    named = [i for i in ids if names_hop and i not in ("", S.DEFAULT_LINK_ID)]
    unnamed = [i for i in ids if i not in named]
    for i in named:
        if i in listed:
            out.hops[i] = i
    missing = [i for i in named if i not in listed]
    if missing:
        if len(table) == 1 and len(named) == 1 and not unnamed:
            out.hops[missing[0]] = table[0]
            out.warnings.append(f"the links table's only row '{table[0]}' is applied to the log's hop "
                                f"'{missing[0]}' (ids differ; give the log's id in the links table to silence this)")
        elif keep_unlisted:
            out.unlisted = missing
            out.hops.update({i: i for i in missing})
        else:
            shown = ", ".join(repr(i) for i in missing[:10]) + (f" and {len(missing) - 10} more"
                                                                 if len(missing) > 10 else "")
            raise InputError(f"hop(s) {shown} in the log are not in the links table; add rows for them, or pass "
                             f"--only-listed to skip their rows (counted as {UNLISTED})", path=file_name)
    if unnamed:
        hop = hop_of_file_name(table, file_name)
        if hop is None:
            if len(table) != 1:
                raise InputError(f"the log names no hop and its file name contains none of the links table's ids "
                                 f"({', '.join(table[:5])}{' ...' if len(table) > 5 else ''}); give --link-id or "
                                 f"rename the file", path=file_name)
            hop = table[0]
        for i in unnamed:
            out.hops[i] = hop
    return out
