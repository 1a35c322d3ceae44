"""The project's documentation: every docs/ page that code, tests, data or docs point to exists."""

from __future__ import annotations

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
DOCS = ROOT / "docs"
#: Pages linked before they are written (none).
PENDING: set = set()

CITED = re.compile(r"docs/(?:methods/)?[a-z0-9-]+\.md")
LINK = re.compile(r"\]\(([^)#:]+\.md)(?:#[^)]*)?\)")


def _sources():
    for folder in ("trackplan", "tests", "bench", "climate_samples", "examples"):
        for p in (ROOT / folder).rglob("*"):
            if p.is_file() and p.suffix in {".py", ".csv", ".toml", ".md"}:
                yield p
    yield ROOT / "README.md"
    yield ROOT / "DEVELOPERS.md"


def test_docs_cited_from_the_code_exist():
    cited = {}
    for p in _sources():
        for ref in CITED.findall(p.read_text(encoding="utf-8")):
            cited.setdefault(ref, p.relative_to(ROOT).as_posix())
    assert "docs/methods/rail-temperature.md" in cited  # the scan finds the citations
    missing = {ref: where for ref, where in cited.items() if not (ROOT / ref).is_file() and ref not in PENDING}
    assert not missing, missing


def test_links_between_pages_resolve():
    pages = sorted(DOCS.rglob("*.md"))
    assert len(pages) >= 10
    broken, seen = [], 0
    for page in pages + [ROOT / "README.md"]:
        for target in LINK.findall(page.read_text(encoding="utf-8")):
            seen += 1
            path = (page.parent / target).resolve()
            rel = path.relative_to(ROOT).as_posix() if path.is_relative_to(ROOT) else str(path)
            if not path.is_file() and rel not in PENDING:
                broken.append(f"{page.relative_to(ROOT)} -> {target}")
    assert seen > 20  # the pattern finds the links
    assert not broken, broken


def test_index_lists_every_method_page():
    index = (DOCS / "README.md").read_text(encoding="utf-8")
    pages = {p.name for p in (DOCS / "methods").glob("*.md")} | {Path(p).name for p in PENDING}
    assert all(f"methods/{name}" in index for name in pages), pages
