"""The sources cited by the tests live in the repository: every ``docs/references.md §N`` cited under tests/ (and in
the library's comments) is a section heading of docs/references.md, and no test cites a file outside the checkout."""

from __future__ import annotations

import re
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
REFERENCES = REPO / "docs" / "references.md"
CITATION = re.compile(r"docs/references\.md §(\d+)")
HEADING = re.compile(r"^## (\d+)\. \S", re.MULTILINE)


def _sources() -> list[Path]:
    return sorted([*(REPO / "tests").rglob("*.py"), *(REPO / "massmodel").rglob("*.py")])


def test_every_cited_section_exists() -> None:
    sections = [int(n) for n in HEADING.findall(REFERENCES.read_text(encoding="utf-8"))]
    assert sections == list(range(1, len(sections) + 1))  # numbered 1, 2, ... without gaps or repeats
    cited: dict[int, list[str]] = {}
    for path in _sources():
        for n in CITATION.findall(path.read_text(encoding="utf-8")):
            cited.setdefault(int(n), []).append(path.relative_to(REPO).as_posix())
    assert len(cited) >= 8  # the tests do cite it
    missing = {n: files for n, files in cited.items() if n not in sections}
    assert missing == {}, f"sections cited but not in docs/references.md: {missing}"


def test_no_citation_points_outside_the_checkout() -> None:
    outside = re.compile(r"REFERENCES(\.md)? §|/work/|/root/|\.\./shared/")
    hits = [f"{path.relative_to(REPO)}:{i}" for path in _sources() if path.name != "test_references.py"
            for i, line in enumerate(path.read_text(encoding="utf-8").splitlines(), 1) if outside.search(line)]
    assert hits == []


def test_flags_are_explained() -> None:
    text = REFERENCES.read_text(encoding="utf-8")
    for flag in ("**R**", "**R2**", "**V**", "**M**", "**CP**"):
        assert flag in text
