"""``neuroyard report -o FILE``: the report goes to FILE, whatever its format; a file that
cannot be written is a one-line error (exit 2)."""

from __future__ import annotations

import shutil
from pathlib import Path

from neuroyard.harness.cli.main import main

HERE = Path(__file__).parent
RESULTS = HERE.parent / "results"


def test_an_output_file_that_cannot_be_written_is_one_line(tmp_path, capsys):
    store = tmp_path / "s.db"
    shutil.copyfile(RESULTS / "neat_xor" / "xor.db", store)
    for target, reason in (
        (tmp_path / "missing" / "r.txt", "No such file or directory"),
        (tmp_path, "Is a directory"),
        (store, "is the results store"),
    ):
        assert main(["report", "--store", str(store), "-o", str(target)]) == 2
        err = capsys.readouterr().err
        assert err.count("\n") == 1 and f"report output {target}: " in err and reason in err
    text = tmp_path / "r.md"
    assert main(["report", "--store", str(store), "--format", "markdown", "-o", str(text)]) == 0
    assert text.read_text(encoding="utf-8").startswith("### Runs: outcome of every run")
