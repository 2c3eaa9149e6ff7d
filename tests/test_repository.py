"""The repository stands alone: every document it cites is in it (common practice, no source)."""

from __future__ import annotations

import re
import subprocess
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

# A cited document: a Markdown/reStructuredText file name, or anything under a docs/ folder.
CITED = re.compile(
    r"(?<![\w/.-])((?:\.\./)?(?:[\w.-]+/)*[\w.-]+\.(?:md|rst))\b|(?<![\w.-])(docs/[\w./-]+)"
)


def tracked_files() -> list[Path]:
    """The files git tracks (the repository a user clones)."""
    try:
        out = subprocess.run(
            ["git", "ls-files", "-z"], cwd=ROOT, capture_output=True, check=True, text=True
        ).stdout
    except (OSError, subprocess.CalledProcessError):
        pytest.skip("not a git checkout: the repository's file list is unknown")
    return [ROOT / name for name in out.split("\0") if name]


def test_every_cited_document_is_in_the_repository() -> None:
    files = tracked_files()
    names = {p.name for p in files} | {str(p.relative_to(ROOT)) for p in files}
    missing = []
    for path in files:
        if path.suffix in {".png", ".pdf", ".npy", ".parquet", ".lock"} or not path.is_file():
            continue
        try:
            text = path.read_text(encoding="utf-8")
        except UnicodeDecodeError:
            continue
        for lineno, line in enumerate(text.splitlines(), 1):
            for match in CITED.finditer(line):
                cited = match.group(1) or match.group(2)
                target = cited.rstrip(".")
                if target.startswith("../") or (
                    target not in names and Path(target).name not in names
                ):
                    missing.append(f"{path.relative_to(ROOT)}:{lineno}: {cited}")
    assert not missing, "documents cited but not in the repository:\n" + "\n".join(missing)
