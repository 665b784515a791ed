"""The repository stands alone: no tracked file cites a document or a path outside it.

The design notes live in docs/; a docstring or test that points at a file the repository does not
hold leaves the next reader with a dead reference. Tracked files are those git knows (``git ls-files``);
outside a git checkout (an unpacked source archive) every file under the project root is read, except
caches, virtual environments and build output.
"""

from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent

# Written in pieces so that this file does not match itself.
FORBIDDEN = {
    "a design file that is not in the repository": re.compile(re.escape("DESIGN" + ".md")),
    "a list of check values that is not in the repository": re.compile(re.escape("REFERENCE" + "-VALUES")),
    # any absolute path of two parts or more, except the system's own folders that every machine has
    "an absolute path of one machine": re.compile(r"(?<![\w.~:/\\-])/(?!(?:tmp|dev|proc|sys|usr|etc|bin)/)"
                                                  r"[A-Za-z][\w.-]*/[\w.-]+"),
    "a folder beside the repository": re.compile(re.escape(".." + "/shared")),
}

_SKIPPED_PARTS = {".git", "__pycache__", ".pytest_cache", ".hypothesis", "build", "dist", ".venv", "venv",
                  "contin-demo"}


def tracked_files() -> list[Path]:
    """The files git tracks under the project root, or (without git) every plain file under it."""
    try:
        listed = subprocess.run(["git", "ls-files", "-z"], cwd=ROOT, capture_output=True, check=True, timeout=30)
        names = [name for name in listed.stdout.decode("utf-8").split("\0") if name]
        if names:
            return sorted(ROOT / name for name in names)
    except (OSError, subprocess.SubprocessError):
        pass
    return sorted(path for path in ROOT.rglob("*") if path.is_file()
                  and not _SKIPPED_PARTS.intersection(path.relative_to(ROOT).parts)
                  and not any(part.endswith(".egg-info") for part in path.parts))


def offences(files: list[Path]) -> list[str]:
    """``file:line: what`` for every forbidden reference in the text files among ``files``."""
    found = []
    for path in files:
        try:
            text = path.read_text(encoding="utf-8")
        except (UnicodeDecodeError, FileNotFoundError, IsADirectoryError):
            continue  # binary files (pictures) and files deleted in the work tree hold no citation
        for number, line in enumerate(text.splitlines(), start=1):
            for what, pattern in FORBIDDEN.items():
                if pattern.search(line):
                    found.append(f"{path.relative_to(ROOT)}:{number}: {what}: {line.strip()[:100]}")
    return found


def test_the_file_list_covers_the_project():
    names = {path.relative_to(ROOT).as_posix() for path in tracked_files()}
    assert {"README.md", "DEVELOPERS.md", "pyproject.toml", "contin/base/_output.py", "docs/README.md",
            "docs/contracts.md", "tests/test_repository_stands_alone.py"} <= names


def test_no_tracked_file_points_outside_the_repository():
    found = offences(tracked_files())
    assert not found, "cite the source itself or a file under docs/ instead:\n" + "\n".join(found)


@pytest.mark.parametrize("line", [
    "see " + "DESIGN" + ".md for the contract",
    "(" + "REFERENCE" + "-VALUES.md)",
    "open /" + "home/someone/notes.txt",
    "in /" + "Users/someone/project/x.py",
    "cp ../" + "shared/file .",
])
def test_each_kind_of_outside_reference_is_caught(tmp_path, monkeypatch, line):
    monkeypatch.setattr(sys.modules[__name__], "ROOT", tmp_path)
    (tmp_path / "note.md").write_text(f"first line\n{line}\n", encoding="utf-8")
    (found,) = offences([tmp_path / "note.md"])
    assert found.startswith("note.md:2: ")


def test_ordinary_paths_are_not_taken_for_outside_references(tmp_path, monkeypatch):
    monkeypatch.setattr(sys.modules[__name__], "ROOT", tmp_path)
    (tmp_path / "note.md").write_text("docs/contracts.md, ../docs/README.md, the network/work split, "
                                      "~/projects/x, /tmp/contin-x.toml, /proc/self/status, #!/usr/bin/env bash, https://example.org/a/b "
                                      "and plugins/thermo/curves/_pure.py\n", encoding="utf-8")
    assert offences([tmp_path / "note.md"]) == []
