"""Atomic output writing for the commands: nothing is half-written, no link is followed, nothing lands outside
``--out``.

``files_into(out_dir, {name: bytes or callable})`` makes every file in a fresh temporary folder beside ``out_dir``
(the slow part, e.g. the PDF, happens there) and only then moves them into place: a new ``out_dir`` is the
temporary folder renamed; in an existing one each file is renamed over its old version (``os.replace``: a
symbolic link of that name is replaced, never followed), so a kill during the work leaves the previous run's
files whole and consistent.  ``replace_dir(target, build)`` does the same for a whole folder (the Parquet store):
the new one is complete before the old one goes.  ``replace_file(target, build)`` for one file.  Every OS failure
(a file where a folder is wanted, a read-only place, a name over the system's limit) is an ``InputError``.
"""
from __future__ import annotations

import os
import shutil
import tempfile
from contextlib import contextmanager
from pathlib import Path
from typing import Callable, Iterator, Mapping

from diag.errors import InputError

NAME_MAX = 255   # bytes in one path component on common file systems (POSIX NAME_MAX)


def _why(exc: OSError) -> str:
    return exc.strerror or type(exc).__name__


def check_out_path(out: str | os.PathLike, *, folder: bool = True) -> Path:
    """``out`` as a Path, refused when a component is over ``NAME_MAX`` bytes, when it is a symbolic link, or
    (``folder``) when it exists and is not a folder / (not ``folder``) when it exists and is a folder."""
    path = Path(out)
    for part in path.parts:
        if len(os.fsencode(part)) > NAME_MAX:
            raise InputError(f"output name longer than {NAME_MAX} bytes", path=str(path)[:80] + "...")
    if path.is_symlink():
        raise InputError("the output path is a symbolic link; give the real folder", path=str(path))
    if path.exists():
        if folder and not path.is_dir():
            raise InputError("the output path exists and is not a folder", path=str(path))
        if not folder and path.is_dir():
            raise InputError("the output path is a folder; give a file name", path=str(path))
    return path


@contextmanager
def _temp_beside(target: Path, *, kind: str = "dir") -> Iterator[Path]:
    parent = target.parent if str(target.parent) else Path(".")
    try:
        parent.mkdir(parents=True, exist_ok=True)
        if kind == "dir":
            tmp = Path(tempfile.mkdtemp(prefix=f".{target.name[:40]}.", suffix=".tmp", dir=parent))
        else:
            fd, name = tempfile.mkstemp(prefix=f".{target.name[:40]}.", suffix=".tmp", dir=parent)
            os.close(fd)
            tmp = Path(name)
    except OSError as exc:
        raise InputError(f"cannot create the output folder or write beside it ({_why(exc)})",
                         path=str(target)) from None
    try:
        yield tmp
    finally:
        if tmp.is_dir() and not tmp.is_symlink():
            shutil.rmtree(tmp, ignore_errors=True)
        elif tmp.exists() or tmp.is_symlink():
            try:
                tmp.unlink()
            except OSError:
                pass


def files_into(out_dir: str | os.PathLike, makers: Mapping[str, bytes | Callable[[], bytes]], *,
               progress: Callable[[int, int, str], None] | None = None) -> list[Path]:
    """Write ``makers`` (file name -> bytes, or a function giving them) into ``out_dir`` atomically (see the module
    docstring).  Returns the final paths in the order given."""
    out = check_out_path(out_dir, folder=True)
    for name in makers:
        if Path(name).name != name or name in ("", ".", ".."):
            raise ValueError(f"output file name {name!r} must be a plain name")   # a bug of ours, not input
    with _temp_beside(out) as tmp:
        for i, (name, make) in enumerate(makers.items()):
            data = make() if callable(make) else make
            try:
                with open(tmp / name, "xb") as fh:
                    fh.write(data)
                    fh.flush()
                    os.fsync(fh.fileno())
            except OSError as exc:
                raise InputError(f"cannot write {name} ({_why(exc)})", path=str(out)) from None
            if progress is not None:
                progress(i + 1, len(makers), f"wrote {name}")
        try:
            if not out.exists():
                os.rename(tmp, out)           # a new folder appears whole
                os.chmod(out, 0o777 & ~_umask())
            else:
                for name in makers:
                    os.replace(tmp / name, out / name)   # replaces a link of that name, never follows it
        except OSError as exc:
            raise InputError(f"cannot move the outputs into place ({_why(exc)})", path=str(out)) from None
    return [out / name for name in makers]


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def replace_dir(target: str | os.PathLike, build: Callable[[Path], object], *,
                may_replace: Callable[[Path], bool] = lambda p: True) -> Path:
    """Build a folder with ``build(tmp)`` beside ``target``, then put it in place of ``target`` (which must be a
    folder that ``may_replace`` accepts, or absent).  The old folder is removed only after the new one is complete
    and in place."""
    target = check_out_path(target, folder=True)
    if target.exists() and not may_replace(target):
        raise InputError("output folder exists and is not one this command wrote; choose another --out",
                         path=str(target))
    with _temp_beside(target) as tmp:
        try:
            build(tmp)
            os.chmod(tmp, 0o777 & ~_umask())
            if target.exists():
                old = Path(tempfile.mkdtemp(prefix=f".{target.name[:40]}.", suffix=".old", dir=target.parent))
                os.rename(target, old / "x")
                os.rename(tmp, target)
                shutil.rmtree(old, ignore_errors=True)
            else:
                os.rename(tmp, target)
        except OSError as exc:
            raise InputError(f"cannot write the output folder ({_why(exc)})", path=str(target)) from None
    return target


def replace_file(target: str | os.PathLike, build: Callable[[Path], object]) -> Path:
    """Write one file with ``build(tmp_path)`` beside ``target``, then rename it over ``target``."""
    target = check_out_path(target, folder=False)
    with _temp_beside(target, kind="file") as tmp:
        try:
            build(tmp)
            os.chmod(tmp, 0o666 & ~_umask())
            os.replace(tmp, target)
        except OSError as exc:
            raise InputError(f"cannot write the output file ({_why(exc)})", path=str(target)) from None
    return target
