"""The README and its guides: the evolver example prints what the README shows, the README
fits on a screen, and the guides it sends readers to exist and are wrapped.

The expected output is taken from the README itself (README.md, "An evolver of your own"):
the ``text`` block right after the example's ``python`` block is what a reader is told the
example prints. The example runs as a reader runs it: a script of its own, in a fresh
working directory, with the interpreter neuroyard is installed in.
"""

from __future__ import annotations

import re
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
README = REPO / "README.md"
GUIDES = ("harness/README.md", "tasks/README.md", "reference/README.md", "results/README.md")
MOST_BYTES = 12_000  # issue 34: a README that fits on a screen, at most 12 KB
WIDTH = 100  # the guides' prose is wrapped at about 100 columns

# the first python block, then (after prose only) the first text block: the example and
# the output the README says it prints
EXAMPLE = re.compile(r"^```python\n(?P<code>.*?)^```\n(?P<between>(?:(?!```).)*?)^```text\n"
                     r"(?P<output>.*?)^```$", re.S | re.M)  # fmt: skip


def _example() -> tuple[str, str]:
    """(the example's code, the output the README shows for it)."""
    found = EXAMPLE.search(README.read_text())
    assert found, "README.md: no python block followed by a text block"
    return found["code"], found["output"]


def _run(script: Path, cwd: Path) -> str:
    done = subprocess.run(
        [sys.executable, str(script)], cwd=cwd, capture_output=True, text=True, timeout=300
    )
    assert done.returncode == 0, done.stderr[-2000:]
    return done.stdout


def test_the_evolver_example_prints_what_the_readme_shows(tmp_path: Path) -> None:
    code, shown = _example()
    assert "import neuroyard" in code and "neuroyard.run(" in code  # the public API
    for method in ("def start(", "def ask(", "def tell("):
        assert method in code, method
    script = tmp_path / "example.py"
    script.write_text(code)
    work = tmp_path / "work"
    work.mkdir()
    assert _run(script, work) == shown  # source: the README's text block
    # the README: run again, it prints the same lines (the runs are found in the store)
    assert _run(script, work) == shown


def test_the_readme_fits_in_12_kb() -> None:
    assert len(README.read_bytes()) <= MOST_BYTES


@pytest.mark.parametrize("guide", GUIDES)
def test_each_guide_exists_and_the_readme_links_it(guide: str) -> None:
    assert (REPO / guide).is_file(), guide
    assert f"]({guide})" in README.read_text(), f"README.md does not link {guide}"


@pytest.mark.parametrize("name", ["README.md", *GUIDES])
def test_prose_is_wrapped(name: str) -> None:
    """Lines of prose are at most WIDTH columns; code blocks and table rows are left whole."""
    long_lines = []
    in_code = False
    for number, line in enumerate((REPO / name).read_text().splitlines(), 1):
        if line.startswith("```"):
            in_code = not in_code
        elif not in_code and not line.startswith("|") and len(line) > WIDTH:
            long_lines.append(f"{name}:{number}: {len(line)} columns")
    assert long_lines == []


@pytest.mark.parametrize("name", ["README.md", *GUIDES])
def test_relative_links_reach_a_file_and_a_heading(name: str) -> None:
    """Every relative link names a file of the repository and, after ``#``, one of its
    headings (as GitHub makes anchors: lower case, punctuation dropped, spaces to hyphens)."""
    path = REPO / name
    broken = []
    for target in re.findall(r"\]\(([^)\s]+)\)", path.read_text()):
        if "://" in target:
            continue
        file, _, anchor = target.partition("#")
        linked = (path.parent / file).resolve() if file else path
        if not linked.exists():
            broken.append(target)
        elif anchor and linked.suffix == ".md":
            headings = re.findall(r"^#+ (.+?)\s*$", linked.read_text(), re.M)
            anchors = {re.sub(r"[^\w\- ]", "", h.lower()).replace(" ", "-") for h in headings}
            if anchor not in anchors:
                broken.append(target)
    assert broken == []
