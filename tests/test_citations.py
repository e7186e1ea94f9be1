"""Every citation points into the repository.

Code, rule files, docs and tests cite documents: ``docs/physics.md §1.4``,
``docs/physics.md, worked example E1``, ``docs/reliability.md F11``, ``README.md``.
This test scans the repository's text files and fails, with file:line, on

* a document name (``NAME.md`` with an upper-case name, or any ``docs/....md``) that
  does not exist in the repository;
* a ``docs/physics.md §n`` section, or a ``worked example En``, that docs/physics.md
  does not define;
* a ``docs/reliability.md X`` row (or ``§n``) that docs/reliability.md does not define.

The small self-checks at the end make sure the scanner itself flags the citations it
exists for, so that the main test cannot pass by matching nothing.
"""

from __future__ import annotations

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
SCANNED_DIRS = ("specguard", "rules", "docs", "tests", "benchmarks", "examples")
SCANNED_FILES = ("README.md", "DEVELOPERS.md", "CHANGELOG.md")
TEXT_SUFFIXES = {".py", ".md", ".yaml", ".yml", ".json", ".sarif", ".txt", ".toml", ".cfg", ".ini", ".html"}
SKIPPED_PARTS = {"__pycache__", ".git", ".hypothesis", ".pytest_cache"}
SKIPPED_FILES = {Path(__file__).resolve()}  # its self-check strings are bad on purpose

PHYSICS = "docs/physics.md"
RELIABILITY = "docs/reliability.md"

# A document file: an upper-case name such as PHYSICS.md or README.md (optionally with a
# path in front), or any markdown file under docs/.
DOC_NAME = re.compile(r"(?<![\w/.-])((?:\.{1,2}/)*(?:[\w.-]+/)*(?:[A-Z][A-Z0-9_-]*\.md|docs/[\w./-]*?\.md))(?![\w-])")
SECTION = r"§\d+(?:\.\d+)*"
SECTION_ITEM = rf"{SECTION}(?:\s*[-–]\s*\d+(?:\.\d+)*)?"
SECTION_LIST = re.compile(
    rf"({SECTION_ITEM}(?:(?:,\s*|\s+and\s+|\s+or\s+)(?:§?\d+(?:\.\d+)*(?:\s*[-–]\s*\d+(?:\.\d+)*)?))*)"
)
PHYSICS_CITATION = re.compile(re.escape(PHYSICS) + r",?\s+(?:section\s+)?(" + SECTION_LIST.pattern[1:-1] + r")")
WORKED_EXAMPLE = re.compile(re.escape(PHYSICS) + r",?\s+worked examples?\s+(E\d+(?:(?:,\s*|\s+and\s+)E\d+)*)")
ROW_ID = r"(?:FI\d{2}|[A-I]\d{2}|G\d{1,2}|" + SECTION + r")"
RELIABILITY_CITATION = re.compile(
    re.escape(RELIABILITY) + r",?\s+(" + ROW_ID + r"(?:(?:,\s*|\s+and\s+|\s*/\s*|\s*[-–]\s*)" + ROW_ID + r")*)(?![\w])"
)


def _headings(path: Path) -> list[str]:
    return [line for line in path.read_text(encoding="utf-8").splitlines() if line.startswith("#")]


def physics_sections() -> set[str]:
    found = set()
    for line in _headings(ROOT / PHYSICS):
        m = re.match(r"#+\s+§(\d+(?:\.\d+)*)\b", line)
        if m:
            found.add(m.group(1))
    return found


def physics_examples() -> set[str]:
    found = set()
    for line in _headings(ROOT / PHYSICS):
        m = re.match(r"#+\s+(E\d+)\b", line)
        if m:
            found.add(m.group(1))
    return found


def reliability_ids() -> set[str]:
    text = (ROOT / RELIABILITY).read_text(encoding="utf-8")
    ids = set(re.findall(r"^- \*\*((?:FI|[A-Z])\d+)\*\*", text, flags=re.MULTILINE))
    for line in _headings(ROOT / RELIABILITY):
        m = re.match(r"#+\s+(§\d+(?:\.\d+)*)\b", line)
        if m:
            ids.add(m.group(1))
    return ids


def _section_numbers(listing: str) -> list[str]:
    """'§1.2-1.4, §2.1 and 4.5' -> ['1.2', '1.4', '2.1', '4.5']."""
    return re.findall(r"\d+(?:\.\d+)*", listing)


def problems_in_text(text: str, where: str, sections, examples, rows) -> list[str]:
    """Bad citations in one text, each as 'where:line: message'."""
    out = []
    for number, line in enumerate(text.splitlines(), start=1):
        for m in DOC_NAME.finditer(line):
            name = m.group(1)
            target = name
            while target.startswith(("./", "../")):
                target = target.split("/", 1)[1]
            if not (ROOT / target).is_file() or name.startswith("../"):
                out.append(f"{where}:{number}: cites {name}, which is not a file of the repository")
        for m in PHYSICS_CITATION.finditer(line):
            for section in _section_numbers(m.group(1)):
                if section not in sections:
                    out.append(f"{where}:{number}: {PHYSICS} has no §{section}")
        for m in WORKED_EXAMPLE.finditer(line):
            for label in re.findall(r"E\d+", m.group(1)):
                if label not in examples:
                    out.append(f"{where}:{number}: {PHYSICS} has no worked example {label}")
        for m in RELIABILITY_CITATION.finditer(line):
            for row in re.findall(ROW_ID, m.group(1)):
                if row not in rows:
                    out.append(f"{where}:{number}: {RELIABILITY} has no row {row}")
    return out


def scanned_files() -> list[Path]:
    files = [ROOT / name for name in SCANNED_FILES if (ROOT / name).is_file()]
    for top in SCANNED_DIRS:
        base = ROOT / top
        if not base.is_dir():
            continue
        for path in sorted(base.rglob("*")):
            if not path.is_file() or path.resolve() in SKIPPED_FILES:
                continue
            if SKIPPED_PARTS & set(path.relative_to(ROOT).parts):
                continue
            if path.suffix in TEXT_SUFFIXES:
                files.append(path)
    return files


def _check(text: str) -> list[str]:
    return problems_in_text(text, "<string>", physics_sections(), physics_examples(), reliability_ids())


def test_every_citation_points_into_the_repository():
    sections, examples, rows = physics_sections(), physics_examples(), reliability_ids()
    problems = []
    for path in scanned_files():
        try:
            text = path.read_text(encoding="utf-8")
        except UnicodeDecodeError:
            continue
        problems += problems_in_text(text, path.relative_to(ROOT).as_posix(), sections, examples, rows)
    assert not problems, "bad citations:\n" + "\n".join(problems)


def test_the_references_define_what_the_tests_cite():
    sections = physics_sections()
    assert {"0.1", "1.4", "2.3", "6.2", "7.9", "8", "9.2", "11"} <= sections
    assert {"E1", "E2", "E4", "E5", "E8", "E10", "E12", "E14"} <= physics_examples()
    rows = reliability_ids()
    assert {"A01", "B10", "F11", "G17", "H11", "I11", "FI01", "FI24", "G1", "G20", "§7.1"} <= rows


# ---------------------------------------------------------------- self-checks


def test_self_check_outside_notes_are_flagged():
    assert _check("Source: PHYSICS.md §1.4 [D].")
    assert _check("# RELIABILITY.md F11: one policy at both layers")
    assert _check('"source": "../shared/RELIABILITY.md H11"')
    assert _check("see DESIGN.md and ECOSYSTEM.md section 6")


def test_self_check_missing_docs_sections_and_rows_are_flagged():
    assert _check("Source: derived here (docs/physics.md §99).")
    assert _check("docs/physics.md §1.2-1.99")
    assert _check("docs/physics.md §2.3, §4.5 and §4.77")
    assert _check("docs/physics.md, worked example E99")
    assert _check("docs/reliability.md F99")
    assert _check("docs/reliability.md FI01, FI99")
    assert _check("see docs/nowhere.md")


def test_self_check_good_citations_pass():
    assert not _check("Source: derived here (docs/physics.md §1.4); Rashid, 3rd ed., ch. 5.")
    assert not _check("docs/physics.md §1.2-1.4, §2.1 and §7.9")
    assert not _check("# docs/physics.md, worked example E14")
    assert not _check('"source": "docs/reliability.md I02 (not a regular file)"')
    assert not _check("(docs/reliability.md FI07, FI08; G10); docs/reliability.md §7.1")
    assert not _check("README.md, DEVELOPERS.md, CHANGELOG.md and docs/rules.md")


def test_self_check_reports_file_and_line():
    problems = problems_in_text("ok\nPHYSICS.md §1.4\n", "x.py", {"1.4"}, set(), set())
    assert problems and problems[0].startswith("x.py:2: ")
