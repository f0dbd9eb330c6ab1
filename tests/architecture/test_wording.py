"""The repository's words: links that resolve, sources that are real, no check that cannot fail.

Read with the standard library only; nothing is run. Each rule fails on a planted example
(``test_the_checks_catch_planted_examples``) so that none of them passes vacuously.
"""

from __future__ import annotations

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
TEXT_FILES = sorted([ROOT / "README.md", ROOT / "DEVELOPERS.md", *ROOT.glob("docs/*.md"),
                     *ROOT.glob("tests/**/*.py"), *ROOT.glob("benchmarks/*.py"),
                     *ROOT.glob("trainopt/**/*.py")])
THIS = Path(__file__).resolve()

ISSUE_WORDS = re.compile(r"\bissue'?s? targets?\b|\btargets? of (the|an) issue\b|"
                         r"\b(as )?issue \d+ (lists|requires|asks)\b|\bTargets of issue\b",
                         re.IGNORECASE)
"""Work is described by design targets, not by a tracker's issue."""

PLACEHOLDER_CITATION = re.compile(r"\beq\.\s*[\w.]*-x\b|\beq\.\s*\?+|\[citation needed\]",
                                  re.IGNORECASE)
"""An equation reference with a placeholder number."""

CANNOT_FAIL = re.compile(r"assert\s+[\w\[\]\"'.]*seconds[\w\"'\]]*\s*>=\s*0\s*$", re.MULTILINE)
"""A timing can never be negative: asserting it is not a check."""

MD_LINK = re.compile(r"\]\(([^)#\s]+\.md)(#[^)]*)?\)|\(([A-Z][A-Za-z_]*\.md)\)")


def broken_links(path: Path, text: str) -> list[str]:
    """Markdown files a text links to that do not exist (relative to it or to the root)."""
    bad = []
    for match in MD_LINK.finditer(text):
        target = match.group(1) or match.group(3)
        if target.startswith(("http://", "https://")):
            continue
        if not ((path.parent / target).exists() or (ROOT / target).exists()):
            bad.append(f"{_rel(path)}: {target}")
    return bad


def _rel(path: Path) -> Path:
    return path.relative_to(ROOT) if path.is_relative_to(ROOT) else path


def offences(path: Path, text: str) -> list[str]:
    """Every broken link, issue wording, placeholder citation and cannot-fail check."""
    found = broken_links(path, text) if path.suffix == ".md" else []
    rel = _rel(path)
    for rule, pattern in (("issue wording", ISSUE_WORDS),
                          ("placeholder citation", PLACEHOLDER_CITATION),
                          ("check that cannot fail", CANNOT_FAIL)):
        found += [f"{rel}: {rule}: {m.group(0).strip()}" for m in pattern.finditer(text)]
    return found


def test_the_repository_words():
    bad = []
    for path in TEXT_FILES:
        if path.resolve() != THIS:
            bad += offences(path, path.read_text(encoding="utf-8"))
    assert bad == []


def test_the_checks_catch_planted_examples(tmp_path):
    planted = tmp_path / "planted.md"
    text = ("Against the issue's targets: met. See [the design](NOWHERE.md) and (DESIGN.md).\n"
            "(ASME PTC 10-1997 eq. 5.1T-x)\n")
    planted.write_text(text)
    found = offences(planted, text)
    assert len(found) == 4, found
    code = '    assert solver["solve_seconds"] >= 0\n'
    assert len(offences(tmp_path / "t.py", code)) == 1
