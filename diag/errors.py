"""The project's own error types.

``InputError`` is the one error a user is meant to see: it carries the file and, where it applies, the line,
and formats itself as a single line.  The command line turns it into exit status 2; the dashboard shows it as a
message.  Anything else escaping the library is a bug.
"""
from __future__ import annotations

import os
import stat


class InputError(ValueError):
    """Bad input the user can fix (a file, an argument, a links table)."""

    def __init__(self, message: str, *, path: str | None = None, line: int | None = None):
        super().__init__(message)
        self.message = message
        self.path = path
        self.line = line

    def one_line(self) -> str:
        where = ""
        if self.path:
            where = f"{self.path}"
            if self.line is not None:
                where += f", line {self.line}"
            where += ": "
        text = f"{where}{self.message}"
        return " ".join(text.split())  # never more than one line


class DataWarning(UserWarning):
    """Something in the data the caller should know about (out-of-order rows, DST ambiguity ...)."""


def format_warning_line(message) -> str:
    """A warning as the command line shows it: one line, no source location or code."""
    return f"diag: warning: {' '.join(str(message).split())[:400]}\n"


def one_line_warnings(function):
    """Decorator for tasks run in worker processes (``diag.batch``): warnings raised inside are written to stderr
    as ``format_warning_line`` gives them (one line each, once per message), not with Python's file, line number
    and source line."""
    import functools
    import sys
    import warnings

    @functools.wraps(function)
    def run(*args, **kwargs):
        with warnings.catch_warnings():
            warnings.simplefilter("default")
            seen: set[str] = set()

            def show(message, category, filename, lineno, file=None, line=None):
                text = format_warning_line(message)
                if text not in seen:
                    seen.add(text)
                    try:
                        (file or sys.stderr).write(text)
                    except (OSError, ValueError):
                        pass
            warnings.showwarning = show
            return function(*args, **kwargs)
    return run


def require_regular_file(path: os.PathLike | str, label: str | None = None) -> None:
    """InputError unless ``path`` is a regular file (a FIFO, a device or a socket would block or never end).
    Checked with ``os.stat`` before any open; a link to a regular file is fine (reading follows it)."""
    try:
        mode = os.stat(path).st_mode
    except FileNotFoundError:
        raise InputError("cannot read (file not found)", path=label or str(path)) from None
    except OSError as exc:
        raise InputError(f"cannot read ({exc.strerror or exc})", path=label or str(path)) from None
    if not stat.S_ISREG(mode):
        kind = ("a folder" if stat.S_ISDIR(mode) else "a named pipe (FIFO)" if stat.S_ISFIFO(mode)
                else "a device" if stat.S_ISCHR(mode) or stat.S_ISBLK(mode) else "a socket" if stat.S_ISSOCK(mode)
                else "not a regular file")
        raise InputError(f"not a regular file ({kind}); give a log file", path=label or str(path))
