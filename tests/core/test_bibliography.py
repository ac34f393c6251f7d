"""The bibliography: one entry per source, every cited key known, the docs generated from it.

The citation form, ``[KEY place]``, is the one of :mod:`geo_corrosion.bibliography`; these are
the project's own consistency checks (common practice, no source).
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from geo_corrosion import bibliography as B

REPO = Path(__file__).resolve().parents[2]
#: Where the repository's text is searched for citations (and for stray sheet references).
CITING = ("geo_corrosion", "docs", "sample_sites", "tests", "README.md", "DEVELOPERS.md")
SHIPPED = ("geo_corrosion", "docs", "sample_sites", "README.md", "DEVELOPERS.md")
SUFFIXES = {".py", ".md", ".toml", ".txt", ".html", ".cfg"}
#: The reference sheet outside the repository must never be cited: its file name, its section
#: and check-id forms, and the relative path to it.  Spelt in pieces so this file, which is
#: not shipped, does not cite it either.
_SHEET = "REFER" + "ENCE"
STRAY = re.compile(rf"{_SHEET}\.md|{_SHEET} §|{_SHEET} HCP|\.\./shared")
#: A citation whose key opens a bracket that the line does not close.
SPLIT = re.compile(r"\[[A-Z][A-Za-z]+(?:-[A-Za-z0-9.]*[A-Za-z0-9])+[ ,;][^\]]*$")


def _files(roots: tuple[str, ...]) -> list[Path]:
    out: list[Path] = []
    for name in roots:
        p = REPO / name
        if p.is_file():
            out.append(p)
        elif p.is_dir():
            out += sorted(f for f in p.rglob("*") if f.is_file() and f.suffix in SUFFIXES
                          and "__pycache__" not in f.parts)
    return out


def _text(path: Path) -> str:
    return path.read_text(encoding="utf-8")


def test_docs_bibliography_is_generated_from_the_module() -> None:
    """docs/bibliography.md is bibliography_markdown(), character for character."""
    # docs/bibliography.md is bibliography_markdown(); regenerate it with
    # python -c "from geo_corrosion.bibliography import bibliography_markdown as m; \
    #   open('docs/bibliography.md', 'w').write(m())"
    assert _text(REPO / "docs" / "bibliography.md") == B.bibliography_markdown()


def test_methods_lists_the_assumptions_to_confirm() -> None:
    """docs/methods.md §9 lists ASSUMPTIONS_TO_CONFIRM, in order."""
    text = _text(REPO / "docs" / "methods.md")
    head = "## 9. Assumptions to confirm\n"
    assert head in text
    section = text.split(head, 1)[1].split("\n## ", 1)[0]
    bullets = "\n".join(line for line in section.splitlines() if line.startswith("- ")) + "\n"
    assert bullets == B.assumptions_markdown()


def test_every_cited_key_is_in_the_bibliography() -> None:
    """Every key cited in the repository's text is a key of SOURCES."""
    seen: dict[str, str] = {}
    for path in _files(CITING):
        for key in B.cited_keys(_text(path)):
            seen.setdefault(key, str(path.relative_to(REPO)))
    unknown = {k: where for k, where in seen.items() if k not in B.SOURCES}
    assert not unknown, f"keys cited but not in geo_corrosion.bibliography.SOURCES: {unknown}"
    # the bibliography is used: the central sources are cited somewhere
    assert {"ASTM-C876-22a", "RILEM-TC154-2003", "ICRI-310.1R-2008", "Stern-Geary-1957",
            "Andrade-Alonso-2004"} <= set(seen)


def test_citations_are_not_split_across_lines() -> None:
    """No citation opens a bracket that its line does not close."""
    # a key and its place stay on one line, so the citations above are all found
    split = [f"{p.relative_to(REPO)}:{n}" for p in _files(CITING)
             for n, line in enumerate(_text(p).splitlines(), start=1) if SPLIT.search(line)]
    assert not split, split


def test_each_source_is_listed_once() -> None:
    """One entry per source: no key or (title, year) twice; every entry complete."""
    assert len(B._ALL) == len(B.SOURCES)  # no key given twice
    assert all(k == s.key for k, s in B.SOURCES.items())
    titles: dict[tuple[str, int | None], str] = {}
    for s in B.SOURCES.values():
        t = (re.sub(r"\W+", " ", s.title).strip().lower(), s.year)
        assert t not in titles, f"{s.key} repeats {titles[t]}"
        titles[t] = s.key
    # only the editions of one standard share a title (ASTM C876-15 and C876-22a)
    by_title: dict[str, list[str]] = {}
    for (title, _year), key in titles.items():
        by_title.setdefault(title, []).append(key)
    shared = [keys for keys in by_title.values() if len(keys) > 1]
    assert shared == [["ASTM-C876-15", "ASTM-C876-22a"]]
    for s in B.SOURCES.values():
        assert s.authors and s.title and s.designation and s.short, s.key
        assert B._KEY_RE.fullmatch(s.key) and any(c.isdigit() for c in s.key), s.key


def test_nothing_shipped_cites_the_reference_sheet() -> None:
    """Nothing shipped names the reference sheet outside the repository."""
    hits = [f"{p.relative_to(REPO)}:{n}: {line.strip()[:80]}" for p in _files(SHIPPED)
            for n, line in enumerate(_text(p).splitlines(), start=1) if STRAY.search(line)]
    assert not hits, hits


def test_assumptions_name_known_sources_and_every_from_memory_key() -> None:
    """The assumptions cite known keys, and every "from memory" key is among them."""
    assert B.ASSUMPTIONS_TO_CONFIRM
    listed = set(B.cited_keys(" ".join(B.ASSUMPTIONS_TO_CONFIRM)))
    assert listed <= set(B.SOURCES)
    # every key cited anywhere "from memory" (the words follow the place of that citation,
    # inside the brackets) has its value listed to be confirmed
    missing = {}
    for path in _files(CITING):
        for m in B.CITATION_RE.finditer(_text(path)):
            for part in m.group(1).split(";"):
                if "from memory" in part:
                    for key in B.cited_keys(f"[{part}]"):
                        if key not in listed:
                            missing.setdefault(key, str(path.relative_to(REPO)))
    assert not missing, missing


def test_cite() -> None:
    """cite() writes the reader's form and refuses an unknown key; cited_keys() finds keys."""
    assert B.cite("ASTM-C876-22a", "§5.1.1.2") == "ASTM C876-22a, §5.1.1.2"
    assert B.cite("Stern-Geary-1957") == "Stern & Geary (1957)"
    with pytest.raises(KeyError, match="unknown bibliography key"):
        B.cite("ASTM-C876-2")
    assert B.cited_keys("x[0] [condition.combined] [ASTM-G3 §4.1; Cressie-1985]") == [
        "ASTM-G3", "Cressie-1985"]
