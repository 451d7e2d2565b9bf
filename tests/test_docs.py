"""The documentation stays short, true to the tree, and self-contained.

No outside source is needed: these are the project's own documentation rules (DEVELOPERS.md, "Run, test, lint").
"""
from __future__ import annotations

import importlib.util
import re
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
README = ROOT / "README.md"
DEVELOPERS = ROOT / "DEVELOPERS.md"
DOCS = sorted((ROOT / "docs").glob("*.md"))
MARKDOWN = [README, DEVELOPERS, *DOCS]


def _architecture():
    spec = importlib.util.spec_from_file_location("docs_architecture", ROOT / "docs" / "architecture.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _first_paragraph(text: str) -> str:
    paragraphs = [p for p in re.split(r"\n\s*\n", text) if p.strip() and not p.lstrip().startswith("#")]
    return " ".join(paragraphs[0].split())


def test_readme_is_at_most_12_kb():
    assert README.stat().st_size <= 12 * 1024, f"README.md is {README.stat().st_size} bytes"


def test_readme_first_paragraph_states_the_job():
    first = _first_paragraph(README.read_text(encoding="utf-8")).lower()
    for phrase in ("maintenance engineer", "microwave", "faded", "cause", "outage"):
        assert phrase in first, phrase


def test_readme_quick_start_has_two_commands_and_the_ci_test_command():
    text = README.read_text(encoding="utf-8")
    section = text.split("## Quick start", 1)[1].split("\n## ", 1)[0]
    blocks = re.findall(r"```bash\n(.*?)```", section, flags=re.S)
    assert len(blocks) == 2
    assert all(len(b.strip().splitlines()) == 1 for b in blocks)
    assert "-m diag analyze demo_logs/logs --links demo_logs/links.csv" in blocks[0]
    assert blocks[1].strip() == ".venv/bin/python -m pytest -q"
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert "\n.venv/bin/python -m pytest -q\n" in ci   # CI runs exactly the README's test command


def test_architecture_block_matches_the_tree():
    arch = _architecture()
    assert arch.current(DEVELOPERS.read_text(encoding="utf-8")) == arch.block(), \
        "DEVELOPERS.md is stale: run .venv/bin/python docs/architecture.py --write"
    assert arch.main(["--check"]) == 0


def test_architecture_lists_every_module():
    block = _architecture().block()
    listed = len(re.findall(r"^\s*\S+\.py\s", block, flags=re.M)) + len(re.findall(r"^\s+\S+/\s", block, flags=re.M))
    modules = [p for p in (ROOT / "diag").rglob("*.py") if "__pycache__" not in p.parts]
    packages = [p for p in modules if p.name == "__init__.py" and p.parent != ROOT / "diag"]
    plain = [p for p in modules if p.name != "__init__.py"]
    assert listed == len(plain) + len(packages) + 1   # + dashboard.py


def test_architecture_summary_is_the_first_sentence(tmp_path):
    module = tmp_path / "m.py"
    module.write_text('"""Reads logs, e.g. CSV ... and more.  Second sentence."""\n', encoding="utf-8")
    assert _architecture().summary(module) == "Reads logs, e.g. CSV ... and more."


_LINK = re.compile(r"\[[^\]]*\]\(([^)\s]+)\)")


@pytest.mark.parametrize("doc", MARKDOWN, ids=lambda p: str(p.relative_to(ROOT)))
def test_relative_links_point_to_existing_files(doc):
    broken = []
    for target in _LINK.findall(doc.read_text(encoding="utf-8")):
        if re.match(r"[a-z]+:", target) or target.startswith("#"):
            continue
        path = (doc.parent / target.split("#", 1)[0]).resolve()
        if not path.exists():
            broken.append(target)
    assert not broken, broken


def _sections(name: str) -> set[str]:
    text = (ROOT / "docs" / f"{name}.md").read_text(encoding="utf-8")
    return set(re.findall(r"^#{2,3} §(\d+(?:\.\d+)?)\b", text, flags=re.M))


# benchmark outputs (git-ignored; the validation runs leave gigabytes of simulated logs there) are no sources
_GENERATED = ROOT / "bench" / "output"


def _text_files():
    for folder in ("diag", "tests", "bench", "docs"):
        for path in (ROOT / folder).rglob("*"):
            if (path.suffix in (".py", ".md", ".csv", ".toml") and "__pycache__" not in path.parts
                    and not path.is_relative_to(_GENERATED)):
                yield path
    yield from (README, DEVELOPERS, ROOT / "dashboard.py")


def test_section_citations_name_existing_sections():
    assert {"1", "2", "3.1", "3.2", "3.3", "5", "7", "9", "10"} <= _sections("references")
    cited = re.compile(r"\b(references|method|usage|validation|speed)(?:\.md\)?|\.md)?,? §(\d+(?:\.\d+)?)", flags=re.I)
    sections = {name: _sections(name) for name in ("references", "method", "usage", "validation", "speed")}
    missing = []
    for path in _text_files():
        for name, number in cited.findall(path.read_text(encoding="utf-8", errors="replace")):
            if number not in sections[name.lower()]:
                missing.append(f"{path.relative_to(ROOT)}: {name} §{number}")
    assert not missing, missing


# a path or file outside the repository (the old shared sheets) cited as a source
_OUTSIDE = re.compile(r"\.\./shared|/work/|shared/(?:REFERENCES|CONTRACT|STYLE|realdata)|\bREFERENCES(?:\.md)?\b"
                      r"|\bCONTRACT\.md|\bSTYLE\.md|reference sheet")


def _outside_citations(paths) -> list[str]:
    found = []
    for path in paths:
        for number, line in enumerate(path.read_text(encoding="utf-8", errors="replace").splitlines(), 1):
            if _OUTSIDE.search(line):
                found.append(f"{path.relative_to(ROOT)}:{number}: {line.strip()[:100]}")
    return found


def test_docs_cite_nothing_outside_the_repository():
    assert not _outside_citations([*MARKDOWN, ROOT / "docs" / "architecture.py"])


def test_code_and_tests_cite_nothing_outside_the_repository():
    own = Path(__file__).resolve()
    paths = [p for p in _text_files() if p.resolve() != own and p.parent.name != "docs" and p not in MARKDOWN]
    assert not _outside_citations(paths)


def test_nothing_points_at_readme_sections_that_moved():
    stale = re.compile(r"README section|reported in the README|README figures|README table")
    own = Path(__file__).resolve()
    found = [f"{p.relative_to(ROOT)}" for p in _text_files()
             if p.resolve() != own and stale.search(p.read_text(encoding="utf-8", errors="replace"))]
    assert not found, found
