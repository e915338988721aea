"""docs/methods.md: numbered sections, and every citation of it in the code and tests names one of them."""

from __future__ import annotations

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
METHODS = ROOT / "docs" / "methods.md"
HEADING = re.compile(r"^## (\d+)\. \S", re.M)
# "docs/methods.md §8", "docs/methods.md §§8-11", "docs/methods.md §§14, 16"
CITATION = re.compile(r"methods\.md,? ?(§§?) ?(\d+(?:\s*[-–,]\s*\d+)*)")


def _sections() -> list[int]:
    return [int(n) for n in HEADING.findall(METHODS.read_text(encoding="utf-8"))]


def _sources():
    for folder in ("workbench", "tests"):
        for path in sorted((ROOT / folder).rglob("*.py")):
            if path.resolve() != Path(__file__).resolve():  # this file spells the patterns out
                yield path, path.read_text(encoding="utf-8")
    for path in sorted((ROOT / "docs").glob("*.md")):
        if path != METHODS:
            yield path, path.read_text(encoding="utf-8")
    for name in ("README.md", "DEVELOPERS.md"):
        yield ROOT / name, (ROOT / name).read_text(encoding="utf-8")


def _cited(numbers: str) -> list[int]:
    out = []
    for part in re.split(r"\s*,\s*", numbers):
        ends = [int(x) for x in re.split(r"\s*[-–]\s*", part)]
        out += list(range(ends[0], ends[-1] + 1))
    return out


class TestMethodsDocument:
    def test_sections_numbered_in_order(self):
        """The sections are ## 1. … ## N. with no gap or repeat (tests cite them by number)."""
        s = _sections()
        assert s == list(range(1, len(s) + 1)) and len(s) >= 19

    def test_every_citation_names_a_section(self):
        """Every 'docs/methods.md §N' in the package, the tests and the docs names an existing section."""
        known = set(_sections())
        bad, count = [], 0
        for path, text in _sources():
            for m in CITATION.finditer(text):
                count += 1
                for n in _cited(m.group(2)):
                    if n not in known:
                        line = text.count("\n", 0, m.start()) + 1
                        bad.append(f"{path.relative_to(ROOT)}:{line}: §{n}")
        assert count > 50, "the citations were not found (has the citation form changed?)"
        assert bad == []

    def test_only_the_repository_copy_is_cited(self):
        """'methods.md' is always cited as docs/methods.md, never a file outside the repository."""
        bad = []
        for path, text in _sources():
            for m in re.finditer(r"methods\.md", text):
                if text[max(0, m.start() - 5):m.start()] != "docs/":
                    bad.append(f"{path.relative_to(ROOT)}:{text.count(chr(10), 0, m.start()) + 1}")
        assert bad == []

    def test_citation_parser(self):
        """§8, §§8-11 and §§14, 16 are read as the sections they name."""
        got = [_cited(m.group(2)) for m in CITATION.finditer(
            "docs/methods.md §8; docs/methods.md §§8-11; docs/methods.md §§14, 16")]
        assert got == [[8], [8, 9, 10, 11], [14, 16]]
