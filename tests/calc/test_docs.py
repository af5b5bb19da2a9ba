"""The documents stay true to the code: every cited section exists, every command and method is described.

Checks (project rules, common practice, no outside source):

* no file of the repository cites a document outside it (the old methods brief) as a source;
* every ``docs/methods.md §N.M`` citation, in any file, and every ``§N.M`` cross-reference inside
  docs/methods.md names a section heading that exists;
* (that every command, ΔT method, setting and ``CUPCAL_*`` variable is described: tests/test_docs_complete.py).
"""

from __future__ import annotations

import os
import re
from functools import lru_cache
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
METHODS_MD = ROOT / "docs" / "methods.md"

#: Directories that are not part of the repository's own text.
SKIP_DIRS = {
    ".git",
    ".venv",
    "venv",
    "node_modules",
    "__pycache__",
    ".pytest_cache",
    ".mypy_cache",
    ".ruff_cache",
    "build",
    "dist",
    "instance",
    ".eggs",
}
MAX_BYTES = 2_000_000

# Spelled in two pieces so that this file does not cite the outside brief itself.
_OUTSIDE = "SCI" + "ENCE"
OUTSIDE_CITATION = re.compile(r"\b" + _OUTSIDE + r"\b")

_REF = r"\d+(?:\.\d+)?(?:\([ivx]+\))?"
#: ``docs/methods.md §2.3``, ``§6.1, §6.3 and §6.4``, ``§2.1–2.2``, ``§2.3(ii)``, across a line break.
CITATION = re.compile(
    r"docs/methods\.md\s*(§\s?" + _REF + r"(?:\s*(?:,|and|or)\s*§\s?" + _REF + r"|\s*[–-]\s*§?\s?" + _REF + r")*)"
)
SECTION_MARK = re.compile(r"§\s?(" + _REF + r")")
NUMBER = re.compile(r"\d+(?:\.\d+)?")
HEADING = re.compile(r"^#{2,3} (\d+(?:\.\d+)?) \S", re.MULTILINE)


@lru_cache(maxsize=1)
def repository_texts() -> tuple[tuple[str, str], ...]:
    """Return (relative path, text) of every text file of the repository."""
    out = []
    for dirpath, dirnames, filenames in os.walk(ROOT):
        dirnames[:] = [d for d in dirnames if d not in SKIP_DIRS and not d.endswith(".egg-info")]
        for name in filenames:
            path = Path(dirpath) / name
            try:
                if path.stat().st_size > MAX_BYTES:
                    continue
                data = path.read_bytes()
            except OSError:
                continue
            if b"\0" in data[:8192]:
                continue  # binary
            try:
                text = data.decode("utf-8")
            except UnicodeDecodeError:
                continue
            out.append((str(path.relative_to(ROOT)), text))
    return tuple(out)


@lru_cache(maxsize=1)
def sections() -> frozenset[str]:
    """Return the section numbers of docs/methods.md ("2", "2.3", …)."""
    return frozenset(HEADING.findall(METHODS_MD.read_text(encoding="utf-8")))


def _line(text: str, pos: int) -> int:
    return text.count("\n", 0, pos) + 1


def cited_sections(text: str) -> list[tuple[int, str]]:
    """Return (line, section) of every ``docs/methods.md §…`` citation in ``text``."""
    found = []
    for m in CITATION.finditer(text):
        for ref in SECTION_MARK.sub(lambda s: s.group(1), m.group(1)).replace("–", ",").split(","):
            for number in NUMBER.findall(ref):
                found.append((_line(text, m.start()), number))
    return found


def test_the_walk_sees_the_repository():
    # guards the checks below against silently walking nothing
    paths = {p for p, _ in repository_texts()}
    assert {"README.md", "docs/methods.md", "calc/deltat/base.py", "tests/calc/test_docs.py"} <= paths
    assert not any(p.startswith((".git/", ".venv/")) for p in paths)


def test_no_file_cites_the_outside_brief():
    bad = [
        f"{path}:{_line(text, m.start())}" for path, text in repository_texts() for m in OUTSIDE_CITATION.finditer(text)
    ]
    assert bad == [], "cite docs/methods.md instead of the brief outside the repository: " + ", ".join(bad)


def test_methods_document_has_the_agreed_numbering():
    # Citations in code and tests use these numbers; they must not drift (new sections are added at the end).
    expected = {
        "1",
        "1.1",
        "1.2",
        "2",
        "2.0",
        "2.1",
        "2.2",
        "2.3",
        "2.4",
        "2.5",
        "2.6",
        "3",
        "3.1",
        "3.2",
        "3.3",
        "4",
        "4.1",
        "4.2",
        "4.3",
        "4.4",
        "4.5",
        "4.6",
        "5",
        "5.1",
        "5.2",
        "5.3",
        "5.4",
        "5.5",
        "6",
        "6.1",
        "6.2",
        "6.3",
        "6.4",
        "7",
        "7.1",
        "7.2",
        "8",
        "8.1",
        "8.2",
        "8.3",
        "8.4",
        "8.5",
        "8.6",
        "8.7",
        "8.8",
        "8.9",
        "8.10",
        "9",
        "9.1",
        "9.2",
        "9.3",
        "9.4",
    }
    assert sections() == expected
    assert "## References" in METHODS_MD.read_text(encoding="utf-8")


def test_every_citation_names_an_existing_section():
    known = sections()
    citations = [(path, line, number) for path, text in repository_texts() for line, number in cited_sections(text)]
    assert len(citations) >= 50  # the code and tests cite the document throughout
    bad = [f"{path}:{line} §{number}" for path, line, number in citations if number not in known]
    assert bad == [], "citations of sections that docs/methods.md does not have: " + ", ".join(bad)


def test_cross_references_inside_the_methods_document_exist():
    text = METHODS_MD.read_text(encoding="utf-8")
    known = sections()
    bad = [
        f"line {_line(text, m.start())}: §{m.group(1)}"
        for m in SECTION_MARK.finditer(text)
        if NUMBER.match(m.group(1)).group(0) not in known  # type: ignore[union-attr]
    ]
    assert bad == []


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("see docs/methods.md §2.3.", ["2.3"]),
        ("(docs/methods.md §6.1, §6.3 and §6.4; ISO)", ["6.1", "6.3", "6.4"]),
        ("docs/methods.md §2.1–2.2; 5 minutes", ["2.1", "2.2"]),
        ("T_mix of docs/methods.md §2.3(ii); the", ["2.3"]),
        ("docs/methods.md\n§3.3 and §4.5, and", ["3.3", "4.5"]),
        ("docs/methods.md §5.2 for 2, 3, 4", ["5.2"]),
        ("docs/methods.md" + " §9.9", ["9.9"]),  # split so that this file cites no missing section
    ],
)
def test_citation_pattern(text: str, expected: list[str]) -> None:
    assert [n for _, n in cited_sections(text)] == expected
