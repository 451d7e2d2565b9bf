"""The project's own error types.

``InputError`` is the one error a user is meant to see: it carries the file and, where it applies, the line,
and formats itself as a single line.  The command line turns it into exit status 2; the dashboard shows it as a
message.  Anything else escaping the library is a bug.
"""
from __future__ import annotations


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
