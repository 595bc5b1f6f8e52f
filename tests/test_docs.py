"""The physics notes ship with the package and every reference to them resolves.

Code and tests cite sections of docs/physics.md and docs/checks.md by their headings
(``docs/physics.md, "Flux freezing"``); each cited heading must exist, the README must link
both notes, and the numbers docs/physics.md quotes from a simulation must be the ones the
simulation's test holds.
"""

from __future__ import annotations

import re
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DOCS = {"physics": ROOT / "docs" / "physics.md", "checks": ROOT / "docs" / "checks.md"}
CITE = re.compile(r'docs/(physics|checks)\.md(?:,\s*|\s*\(\s*|\s+)((?:"[^"\n]+"(?:,\s*)?)+)')


def headings(path: Path) -> set[str]:
    return {line.lstrip("#").strip() for line in path.read_text().splitlines()
            if line.startswith("#")}


def citations() -> list[tuple[str, str, str]]:
    """(file, note, heading) for every quoted heading after a docs/*.md reference."""
    out = []
    files = [*sorted((ROOT / "infer").rglob("*.py")), *sorted((ROOT / "tests").glob("*.py")),
             ROOT / "README.md", ROOT / "DEVELOPERS.md"]
    for path in files:
        # join comment and docstring continuation lines, so a citation may wrap
        text = re.sub(r"\n\s*#?\s*", " ", path.read_text())
        for m in CITE.finditer(text):
            for name in re.findall(r'"([^"]+)"', m.group(2)):
                out.append((path.name, m.group(1), name))
    return out


def test_notes_exist_and_the_readme_links_them():
    readme = (ROOT / "README.md").read_text()
    for path in DOCS.values():
        assert path.is_file(), path
        assert f"docs/{path.name}" in readme, path.name


def test_every_cited_section_exists():
    found = citations()
    assert len(found) > 20                       # the pattern does find the citations
    known = {note: headings(path) for note, path in DOCS.items()}
    missing = [c for c in found if c[2] not in known[c[1]]]
    assert missing == []


def test_no_reference_to_notes_outside_the_package():
    # the design notes of the project's own workspace are not shipped: nothing may point there
    here = Path(__file__).resolve()
    for path in [*(ROOT / "infer").rglob("*.py"), *(ROOT / "tests").glob("*.py"),
                 ROOT / "README.md", ROOT / "DEVELOPERS.md", *DOCS.values()]:
        if path.resolve() == here:
            continue
        text = path.read_text()
        assert "shared/design" not in text, path
        assert "architecture.md" not in text, path
        if path not in DOCS.values():        # the two notes link each other by file name
            assert "physics note" not in text, path
            assert not re.search(r"(?<!docs/)\b(physics|checks)\.md", text), path


def test_documented_spanning_tree_bias_matches_its_test():
    sys.path.insert(0, str(ROOT / "tests"))
    from test_spacing_bias import DOCUMENTED

    text = DOCS["physics"].read_text()
    for kind, label in (("square", "square"), ("hex", "hexagonal")):
        row = " | ".join(f"{DOCUMENTED[kind][f]:.3f}" for f in (0.1, 0.2, 0.3))
        assert f"| {label}, 25 | {row} |" in text, (kind, row)


def test_reference_list_holds_published_citations():
    # every entry of the reference list reads "Authors year, journal ..." (a published citation)
    text = DOCS["physics"].read_text()
    refs = text.split("## References", 1)[1].split("\n## ", 1)[0]
    entries = [line[2:] for line in refs.splitlines() if line.startswith("* ")]
    assert entries and all(re.search(r"\b(19|20)\d\d\b", e) for e in entries), entries
