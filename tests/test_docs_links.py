"""The README stays short and every relative link of the Markdown pages leads somewhere.

Cheap checks run with the suite; the Sphinx build in ``.ci/run`` (warnings as errors) checks the
cross-references of the documentation site itself.
"""

import re
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
README_MAX_LINES = 260

LINK = re.compile(r"!?\[(?:[^\[\]]|\[[^\]]*\])*\]\(([^()\s]+)(?:\s+\"[^\"]*\")?\)")


def _pages():
    pages = [ROOT / "README.md", ROOT / "DEVELOPERS.md", ROOT / "CHANGELOG.md"]
    pages += sorted(p for p in (ROOT / "docs").rglob("*.md") if "_build" not in p.parts)
    return [p for p in pages if p.exists()]


def _prose(text):
    """The text outside fenced code blocks and inline code spans."""
    text = re.sub(r"^(```|~~~).*?^\1[^\n]*$", "", text, flags=re.M | re.S)
    return re.sub(r"`[^`\n]*`", "", text)


def _slug(heading):
    """GitHub's anchor of a heading (the rule MyST's heading anchors follow too; common practice)."""
    s = heading.strip().lower()
    s = re.sub(r"[^\w\- ]", "", s)
    return s.replace(" ", "-")


def _anchors(path):
    text = re.sub(r"^(```|~~~).*?^\1[^\n]*$", "", path.read_text(encoding="utf-8"), flags=re.M | re.S)
    return {_slug(m.group(1)) for m in re.finditer(r"^#{1,6}\s+(.*?)\s*#*\s*$", text, flags=re.M)}


def _links(path):
    for m in LINK.finditer(_prose(path.read_text(encoding="utf-8"))):
        target = m.group(1)
        if re.match(r"^[a-z][a-z0-9+.-]*:", target, flags=re.I):   # http:, https:, mailto: ...
            continue
        yield target


def test_readme_is_short():
    n = len((ROOT / "README.md").read_text(encoding="utf-8").splitlines())
    assert n <= README_MAX_LINES, f"README.md has {n} lines; move detail into docs/ (at most {README_MAX_LINES})"


def test_the_link_finder_sees_links_images_and_anchors():
    text = "see [a](docs/x.md#part) and ![pic](docs/p.png), not `[b](c.md)`\n```\n[d](e.md)\n```\n"
    targets = [m.group(1) for m in LINK.finditer(_prose(text))]
    assert targets == ["docs/x.md#part", "docs/p.png"]
    assert _slug("What `check` does: effective lengths, code verdicts") == "what-check-does-effective-lengths-code-verdicts"


@pytest.mark.parametrize("page", _pages(), ids=lambda p: str(p.relative_to(ROOT)))
def test_relative_links_point_to_existing_files_and_headings(page):
    bad = []
    for target in _links(page):
        file_part, _, anchor = target.partition("#")
        dest = (page.parent / file_part).resolve() if file_part else page
        if not dest.exists():
            bad.append(f"{target}: no file {dest.relative_to(ROOT) if dest.is_relative_to(ROOT) else dest}")
            continue
        if anchor and dest.suffix == ".md" and anchor not in _anchors(dest):
            bad.append(f"{target}: no heading with anchor '{anchor}' in {dest.name}")
    assert not bad, f"{page.relative_to(ROOT)}: broken links:\n" + "\n".join(bad)
