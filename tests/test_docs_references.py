"""The repository stands on its own: every docs page the code cites exists (with the cited section),
and nothing cites notes that live outside the repository."""

from __future__ import annotations

import re
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
SCANNED = ["app", "models", "tests", "bench", "migrations", "docs", "README.md", "DEVELOPERS.md", "Makefile"]
CITE = re.compile(r"docs/([\w-]+\.md)(?:\s+§\s?(\d+(?:\.\d+)?))?")
# team notes that were never part of the repository
OUTSIDE = re.compile(r"\.\./shared|reference/(physics|formats|ecosystem)\.md|\bDESIGN\.md|\bSTYLE\.md|\becosystem\.md")


def _files() -> list[Path]:
    out: list[Path] = []
    for name in SCANNED:
        p = ROOT / name
        if p.is_file():
            out.append(p)
        elif p.is_dir():
            out += [f for f in p.rglob("*") if f.is_file() and f.suffix in {".py", ".md", ".toml", ".txt", ".html", ".js", ".css"}]
    return [f for f in out if f.resolve() != Path(__file__).resolve()]


def _headings(page: Path) -> set[str]:
    """Section numbers of a page: '## 1. Title' -> '1', '### 1.2 Title' -> '1.2'."""
    found = set()
    for line in page.read_text(encoding="utf-8").splitlines():
        m = re.match(r"#{2,4}\s+(\d+(?:\.\d+)?)\.?\s", line)
        if m:
            found.add(m.group(1))
    return found


def test_cited_docs_pages_and_sections_exist() -> None:
    missing = []
    for f in _files():
        for n, line in enumerate(f.read_text(encoding="utf-8", errors="replace").splitlines(), 1):
            for page, section in CITE.findall(line):
                target = ROOT / "docs" / page
                where = f"{f.relative_to(ROOT)}:{n}"
                if not target.is_file():
                    missing.append(f"{where}: docs/{page} does not exist")
                elif section and section not in _headings(target):
                    missing.append(f"{where}: docs/{page} has no section {section}")
    assert not missing, "\n".join(missing)


@pytest.mark.parametrize("path", [p for p in _files()], ids=lambda p: str(p.relative_to(ROOT)))
def test_nothing_cites_notes_outside_the_repository(path: Path) -> None:
    hits = [f"{n}: {line.strip()}" for n, line in enumerate(path.read_text(encoding="utf-8", errors="replace").splitlines(), 1)
            if OUTSIDE.search(line)]
    assert not hits, f"{path.relative_to(ROOT)} cites notes outside the repository:\n" + "\n".join(hits)
