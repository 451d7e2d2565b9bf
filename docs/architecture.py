"""The architecture block of DEVELOPERS.md, generated from the package tree as it stands.

Every module and package of ``diag/`` (and the root ``dashboard.py``) is listed in pipeline order with the first
sentence of its docstring.  The docstrings are read with ``ast``; nothing is imported or run.

    .venv/bin/python docs/architecture.py            # print the block
    .venv/bin/python docs/architecture.py --check    # exit 1 when DEVELOPERS.md holds a different block
    .venv/bin/python docs/architecture.py --write    # put the block into DEVELOPERS.md between the markers

Modules not named in the orders below still appear: after the named ones of their package, alphabetically.
"""
from __future__ import annotations

import argparse
import ast
import re
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
DEVELOPERS = ROOT / "DEVELOPERS.md"
BEGIN = "<!-- architecture:begin -->"
END = "<!-- architecture:end -->"

# Pipeline order of the top level: shared vocabulary first, then the stages, then the callers.
TOP_ORDER = ("__init__.py", "errors.py", "schema.py", "links.py", "results.py", "config.py",
             "models", "read", "analysis", "report", "sim",
             "pipeline.py", "batch.py", "commands", "cli.py", "__main__.py", "ui")
# Order inside each package (a name missing from the tree is skipped).
PACKAGE_ORDER = {
    "models": ("p525.py", "budget.py", "p838.py", "p530.py", "fading.py", "xpol.py", "g826.py"),
    "read": ("ingest.py", "colnames.py", "colplan.py", "timestamps.py", "normalise.py", "store.py", "hops.py",
             "gauge.py"),
    "analysis": ("reference.py", "steps.py", "events.py", "features.py", "classify.py", "fading_stats.py",
                 "crosspol.py", "outage.py", "findings.py", "prediction.py"),
    "report": ("tables.py", "views.py", "style.py", "pdf.py", "network.py"),
    "sim": ("spec.py", "physics.py", "aggregation.py", "simulate.py", "log_shapes.py", "scenarios"),
    "commands": ("ingest.py", "predict.py", "analyze.py", "simulate.py", "batch.py"),
}

_SENTENCE_END = re.compile(r"(?<!\be\.g)(?<!\bi\.e)(?<!\.)\.(?!\.)(?=\s+[A-Z`(\"*]|\s*$)")
MAX_CHARS = 110  # a longer first sentence is cut at a word boundary and ends in " ..."


def summary(path: Path) -> str:
    """First sentence of the module docstring of ``path`` (a .py file or a package folder), on one line."""
    source = path / "__init__.py" if path.is_dir() else path
    if not source.exists():
        return "(no __init__.py)"
    doc = ast.get_docstring(ast.parse(source.read_text(encoding="utf-8"), filename=str(source)))
    if not doc:
        return "(no docstring)"
    paragraph = " ".join(doc.strip().split("\n\n", 1)[0].split())
    match = _SENTENCE_END.search(paragraph)
    sentence = paragraph[:match.end()] if match else paragraph
    if len(sentence) > MAX_CHARS:
        sentence = sentence[:MAX_CHARS - 4].rsplit(" ", 1)[0].rstrip(",;:") + " ..."
    return sentence


def _children(folder: Path, order: tuple[str, ...]) -> list[Path]:
    entries = [p for p in folder.iterdir()
               if (p.suffix == ".py" and p.name != "__init__.py") or (p.is_dir() and (p / "__init__.py").exists())]
    names = {p.name: p for p in entries}
    known = [names[n] for n in order if n in names]
    rest = sorted((p for p in entries if p.name not in order), key=lambda p: (p.name.startswith("_"), p.name))
    return known + rest


def _lines(folder: Path, order: tuple[str, ...], depth: int) -> list[tuple[str, str]]:
    rows = []
    for child in _children(folder, order):
        label = "  " * depth + child.name + ("/" if child.is_dir() else "")
        rows.append((label, summary(child)))
        if child.is_dir():
            rows += _lines(child, PACKAGE_ORDER.get(child.name, ()), depth + 1)
    return rows


def block(root: Path = ROOT) -> str:
    """The fenced architecture block, markers included."""
    pkg = root / "diag"
    rows = [("diag/", summary(pkg))]
    rows += _lines(pkg, tuple(n for n in TOP_ORDER if n != "__init__.py"), 1)
    if (root / "dashboard.py").exists():
        rows.append(("dashboard.py", summary(root / "dashboard.py")))
    width = max(len(label) for label, _ in rows) + 2
    body = "\n".join(f"{label:<{width}}{text}".rstrip() for label, text in rows)
    return f"{BEGIN}\n```\n{body}\n```\n{END}"


def current(text: str) -> str | None:
    """The block now in ``text`` (markers included), or None when the markers are missing."""
    start, stop = text.find(BEGIN), text.find(END)
    if start < 0 or stop < start:
        return None
    return text[start:stop + len(END)]


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    mode = parser.add_mutually_exclusive_group()
    mode.add_argument("--check", action="store_true", help="exit 1 when DEVELOPERS.md is stale")
    mode.add_argument("--write", action="store_true", help="rewrite the block in DEVELOPERS.md")
    args = parser.parse_args(argv)
    fresh = block()
    if not (args.check or args.write):
        sys.stdout.write(fresh + "\n")
        return 0
    text = DEVELOPERS.read_text(encoding="utf-8")
    old = current(text)
    if old is None:
        sys.stderr.write(f"DEVELOPERS.md: markers {BEGIN!r} ... {END!r} not found\n")
        return 1
    if args.check:
        if old != fresh:
            sys.stderr.write("DEVELOPERS.md: the architecture block is stale; run "
                             ".venv/bin/python docs/architecture.py --write\n")
            return 1
        return 0
    if old != fresh:
        DEVELOPERS.write_text(text.replace(old, fresh), encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
