"""Resource bounds of the reader (issue 15, case 10), stated in the README's "Limits" section and enforced with a
one-line ``InputError`` (status 2).  Each can be raised for a trusted big job through an environment variable.

- ``MAX_DECOMPRESSED_BYTES``: bytes a gzip'd log (or gauge file) may expand to: 500 MB by default, five times the
  dashboard's 100 MB upload cap (``DIAG_MAX_DECOMPRESSED_MB``).  A 5 MB ``.csv.gz`` bomb stops there instead of
  filling memory.
- ``MAX_HOPS_PER_FILE``: distinct link ids in one log file: 10,000 (``DIAG_MAX_HOPS_PER_FILE``).
- ``MAX_CHANNELS_PER_HOP``: distinct channels of one hop in one file: 64 (``DIAG_MAX_CHANNELS_PER_HOP``); a hop has
  a handful (H, V, two directions, XPIC pairs).
- ``MAX_VALUE_COLUMNS``: signal columns of a wide log: 1024 (``DIAG_MAX_VALUE_COLUMNS``).
"""
from __future__ import annotations

import os


def _env_int(name: str, default: int, scale: int = 1) -> int:
    raw = os.environ.get(name, "").strip()
    try:
        value = int(float(raw)) if raw else default
    except ValueError:
        value = default
    return max(1, value) * scale


MAX_DECOMPRESSED_BYTES = _env_int("DIAG_MAX_DECOMPRESSED_MB", 500, 1_000_000)
MAX_HOPS_PER_FILE = _env_int("DIAG_MAX_HOPS_PER_FILE", 10_000)
MAX_CHANNELS_PER_HOP = _env_int("DIAG_MAX_CHANNELS_PER_HOP", 64)
MAX_VALUE_COLUMNS = _env_int("DIAG_MAX_VALUE_COLUMNS", 1024)


class BoundedReader:
    """A binary file object over ``inner`` that raises ``InputError`` once more than ``limit`` bytes were read
    (wraps a gzip stream: the limit is on the decompressed bytes)."""

    def __init__(self, inner, limit: int, label: str):
        self.inner, self.limit, self.label, self.total = inner, limit, label, 0
        self.closed = False

    def read(self, n: int = -1) -> bytes:
        if n is None or n < 0:   # read all: in 1 MiB steps, so a bomb stops at the bound, not after it
            parts = []
            while True:
                chunk = self.read(1 << 20)
                if not chunk:
                    return b"".join(parts)
                parts.append(chunk)
        data = self.inner.read(n)
        self.total += len(data)
        if self.total > self.limit:
            from diag.errors import InputError

            raise InputError(f"decompresses to more than {self.limit / 1e6:g} MB (the limit; raise it with "
                             f"DIAG_MAX_DECOMPRESSED_MB for a trusted file)", path=self.label)
        return data

    def readable(self) -> bool:
        return True

    def seekable(self) -> bool:
        return False

    def close(self) -> None:
        self.closed = True
        self.inner.close()
