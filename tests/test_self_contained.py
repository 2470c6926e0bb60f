"""The project is self-contained in what it cites.

Rule: no file of the project cites a path outside the repository, and every citation of
the project's bibliography names an entry (or a section) that exists in it. The files
checked are those tracked by git, as the repository holds them; binary files (stores,
images) are skipped.
"""

from __future__ import annotations

import re
import subprocess
from functools import cache
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
SOURCES = REPO / "reference" / "SOURCES.md"
GUIDE_FOLDERS = ("harness", "tasks", "reference", "results")  # each has a README.md guide

# Names of things outside the repository. The patterns are written so that this file does
# not match them itself (a character class or an escaped dot breaks the literal text).
OUTSIDE = {
    "the former bibliography file outside the repository": re.compile(r"LITERATUR[E]\.md"),
    "a path into a folder beside the repository": re.compile(r"\.\./share[d]"),
    "the machine's work folder": re.compile(r"/wor[k]/"),
}

# An absolute POSIX path of two or more components: a slash that does not follow a word
# character, a dot, a colon, a slash, a tilde or a hyphen (so relative paths such as
# ../published.py, URLs, "m/s" and "1/(1+x)" are not matched), then name/name.
ABSOLUTE = re.compile(r"(?<![\w.:/~-])/[\w.-]+(?:/[\w.-]+)+")
# A Windows path with a drive letter.
DRIVE = re.compile(r"(?<![\w])[A-Za-z]:\\[\w.-]")
# Absolute paths that name no machine-local file: interfaces of the operating system (the
# kernel's files the code reads, the env of a shebang line) and a folder that exists
# nowhere, used to test an error message. A path under ~ is not absolute: the crash-log
# folder of the command line defaults to one in the user's home.
ALLOWED_PREFIXES = ("/proc/", "/dev/", "/nonexistent/", "/usr/bin/env/")

# A citation: "SOURCES.md: " then keys and/or section titles separated by "; ", on one
# line, up to a closing parenthesis, a quote, a backtick or the end of the line.
CITATION = re.compile(r"SOURCES\.md: ([^)\"`\n]+)")
KEY = re.compile(r"[a-z]+\d{4}[a-z]?")
ENTRY = re.compile(r"^### \[([a-z]+\d{4}[a-z]?)\] ", re.MULTILINE)
HEADING = re.compile(r"^#+ (.+?)\s*$", re.MULTILINE)


@cache
def tracked_text_files() -> dict[str, str]:
    """Relative path -> text of every file tracked by git that is not binary."""
    if not (REPO / ".git").exists():
        pytest.skip("not a git checkout: no list of tracked files")
    listing = subprocess.run(
        ["git", "-C", str(REPO), "ls-files", "-z"], capture_output=True, check=True
    ).stdout.decode()
    out = {}
    for name in filter(None, listing.split("\0")):
        path = REPO / name
        if not path.is_file():  # deleted in the working tree, not yet committed
            continue
        data = path.read_bytes()
        if b"\0" in data:
            continue
        try:
            out[name] = data.decode("utf-8")
        except UnicodeDecodeError:
            continue
    return out


# An image embedded in a page (its base64 text may hold slashes that look like paths).
DATA_URI = re.compile(r"data:[\w/+.-]+;base64,[A-Za-z0-9+/=]+")


def outside_references(text: str) -> list[str]:
    """What in ``text`` names a place outside the repository (empty when nothing does);
    embedded images (``data:`` URIs) are not read."""
    text = DATA_URI.sub("data:", text)
    found = [f"{what}: {m.group(0)}" for what, p in OUTSIDE.items() for m in p.finditer(text)]
    for line_no, line in enumerate(text.splitlines(), 1):
        for m in ABSOLUTE.finditer(line):
            if not (m.group(0) + "/").startswith(ALLOWED_PREFIXES):
                found.append(f"absolute path on line {line_no}: {m.group(0)}")
        found += [f"drive path on line {line_no}: {m.group(0)}" for m in DRIVE.finditer(line)]
    return found


def _path(*parts: str) -> str:
    """An absolute path built from its parts, so that this file holds none literally."""
    return "/" + "/".join(parts)


def test_the_patterns_tell_outside_paths_from_others():
    """The check below finds machine-local paths and names outside the repository, and lets
    relative paths, URLs, units, formulas and operating-system interfaces pass."""
    outside = [
        "see " + _path("work", "main", "harness", "__init__.py"),
        f'"baseline": "{_path("tmp", "neuroyard-bench-x", "site", "harness", "__init__.py")}"',
        "(" + ".." + "/shared " + "LITERATURE" + ".md sec. 2.1)",
        "the notes in " + _path("work") + "/ are",
        f"open('{_path('home', 'someone', 'notes.txt')}')",
        "C:" + "\\Users\\someone\\data.db",
    ]
    for text in outside:
        assert outside_references(text), text
    inside = [
        "#!/usr/bin/env bash",
        "see https://example.org/a/b and reference/figures/pole.toml",
        "Tags: see ../published.py; x / 2.4 m; 1/(1+e^(-4.9x)); 10 m/s",
        'open("/proc/self/status")',
        "results store /nonexistent/x.db: no such file",
        "harness/__init__.py and ~/.local/state/neuroyard/crashes",
        '<img src="data:image/png;base64,iVBOR+/ab/cd/ef==">',
    ]
    for text in inside:
        assert outside_references(text) == [], text


def test_no_tracked_file_names_a_path_outside_the_repository():
    """Rule: no file of the project cites a path outside the repository (no former
    bibliography file beside it, no work folder, no absolute machine-local path)."""
    files = tracked_text_files()
    assert "reference/SOURCES.md" in files and "README.md" in files
    problems = {name: found for name, text in files.items() if (found := outside_references(text))}
    assert problems == {}


def test_the_readme_and_its_guides_name_no_path_outside_the_repository():
    """The same rule for the README and the guides it links, read from the working tree, so
    that a guide is held to it before it is first committed."""
    names = ["README.md", *(f"{folder}/README.md" for folder in GUIDE_FOLDERS)]
    problems = {
        name: found for name in names if (found := outside_references((REPO / name).read_text()))
    }
    assert problems == {}


def test_every_cited_key_and_section_exists_in_the_bibliography():
    """Rule: every citation of the bibliography in a tracked file (its path, a colon, keys
    separated by commas, section titles each after a semicolon) names keys defined there
    (headings ``### [key] ...``) and sections it has."""
    sources = SOURCES.read_text()
    keys = ENTRY.findall(sources)
    assert keys, "reference/SOURCES.md defines no entry"
    assert len(keys) == len(set(keys)), "a key is defined twice"
    titles = {h.lower() for h in HEADING.findall(sources)}
    cited: dict[str, list[str]] = {}
    unknown = []
    for name, text in tracked_text_files().items():
        for line_no, line in enumerate(text.splitlines(), 1):
            for m in CITATION.finditer(line):
                for part in m.group(1).strip().split("; "):
                    items = part.split(", ")
                    if all(KEY.fullmatch(item) for item in items):
                        cited.setdefault(name, []).extend(items)
                        unknown += [f"{name}:{line_no}: key {k}" for k in items if k not in keys]
                    elif part.lower() not in titles:
                        unknown.append(f"{name}:{line_no}: section {part!r}")
    assert unknown == []
    # the figure files and the NEAT defaults cite the bibliography by key
    for name in ("reference/figures/pole.toml", "reference/neat/defaults.toml"):
        assert cited.get(name), name
