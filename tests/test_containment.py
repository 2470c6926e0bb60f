"""The command line under stress: Ctrl-C, stores that cannot be written, two coordinators on
one store, internal errors, strict JSON, the in-process mode.

The checks are on the behaviour harness/README.md documents (one line and exit 2 for an error
the user can cause, one line naming a crash log and exit 3 for an internal error, exit 130 for
Ctrl-C) and on SQLite's own integrity check.
"""

from __future__ import annotations

import json
import os
import re
import signal
import sqlite3
import stat
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import pytest

from neuroyard.cli.main import main
from neuroyard.reports import report
from neuroyard.tasks.logic import Xor

NEUROYARD = [sys.executable, "-m", "neuroyard.cli.main"]


def strict(text: str):
    """Parse JSON as a strict parser does: NaN and Infinity are errors."""

    def refuse(token):
        raise ValueError(f"not strict JSON: {token}")

    return json.loads(text, parse_constant=refuse)


def run_cli(capsys, *argv):
    capsys.readouterr()
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def small_campaign(store, *extra):
    return ["run", "--evolver", "rwg", "--task", "xor-v2", "--runs", "3", "--budget", "300",
            "--store", str(store), "--quiet", *extra]  # fmt: skip


def session_processes(sid: int) -> list[str]:
    """Processes of session ``sid`` still running (zombies, which are done, left out: an
    orphan's is reaped by the machine's init process, which some containers lack)."""
    out = subprocess.run(["ps", "-eo", "sid=,stat=,args="], capture_output=True, text=True)
    rows = [line.split(None, 2) for line in out.stdout.splitlines()]
    return [row[2] for row in rows if row[0] == str(sid) and not row[1].startswith("Z")]


@pytest.mark.parametrize("workers", [1, 2])
def test_one_ctrl_c_stops_cleanly(tmp_path, workers):
    # a terminal sends SIGINT to the whole foreground process group; so does this test
    store = tmp_path / "ctrl-c.db"
    cmd = [*NEUROYARD, "run", "--evolver", "neat", "--task", "pole2-nonmarkov-v1", "--runs",
           "4", "--store", str(store), "--workers", str(workers)]  # fmt: skip
    # a terminal's foreground job takes Ctrl-C; a suite started in the background of a
    # non-interactive shell inherits SIGINT ignored, which the child must not inherit here
    proc = subprocess.Popen(cmd, start_new_session=True, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True,
                            preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))  # fmt: skip
    deadline = time.time() + 60
    while time.time() < deadline and len(session_processes(proc.pid)) < 1 + workers:
        time.sleep(0.1)  # until the workers have started
    time.sleep(1.0)
    os.killpg(proc.pid, signal.SIGINT)
    _, err = proc.communicate(timeout=30)
    assert proc.returncode == 130
    assert err.strip().splitlines()[-1:] == [
        "neuroyard: interrupted; finished runs are kept in the store"
    ]
    assert "Traceback" not in err
    time.sleep(0.5)
    assert session_processes(proc.pid) == []  # the workers were ended too
    db = sqlite3.connect(store)
    assert db.execute("PRAGMA integrity_check").fetchone() == ("ok",)
    assert db.execute("SELECT count(*) FROM claims").fetchone() == (0,)


def test_two_coordinators_on_one_store_split_the_campaign(tmp_path):
    store = tmp_path / "shared.db"
    # 48 short runs (about 6 s of work) outlast the start-up skew of the two processes
    # (each takes about 2 s to start; with 16 runs one coordinator once did them all)
    cmd = [*NEUROYARD, "run", "--evolver", "hill-climber", "--task", "pole1-markov-v1",
           "--runs", "48", "--budget", "3000", "--store", str(store)]  # fmt: skip
    procs = [subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
             for _ in range(2)]  # fmt: skip
    outs = [p.communicate(timeout=300) for p in procs]
    assert [p.returncode for p in procs] == [0, 0], [e for _, e in outs]
    done = [int(re.search(r"^(\d+) runs done", out, re.M).group(1)) for out, _ in outs]
    assert sum(done) == 48 and min(done) > 0  # both worked, no run twice
    db = sqlite3.connect(store)
    rows = db.execute("SELECT count(*), count(DISTINCT run_key) FROM runs").fetchone()
    assert rows == (48, 48)
    assert db.execute("SELECT count(*) FROM claims").fetchone() == (0,)
    assert db.execute("PRAGMA integrity_check").fetchone() == ("ok",)


@pytest.fixture
def shared_folder():
    """A folder another user can reach (pytest's own temporary folders are private)."""
    folder = Path(tempfile.mkdtemp(prefix="neuroyard-ro-"))
    folder.chmod(0o777)
    yield folder
    for path in sorted(folder.rglob("*"), reverse=True):
        path.chmod(0o700)
    subprocess.run(["rm", "-rf", str(folder)], check=True)


def as_unprivileged(argv: list[str], cwd: Path) -> subprocess.CompletedProcess:
    """Run the command line as a user without write access; root (who may write anything)
    runs it as the user 'nobody' through setpriv (util-linux)."""
    cache = cwd / "numba-cache"
    cache.mkdir(exist_ok=True)
    cache.chmod(0o777)
    env = {**os.environ, "NUMBA_CACHE_DIR": str(cache), "HOME": str(cwd)}
    prefix = []
    if os.geteuid() == 0:
        prefix = ["setpriv", "--reuid=65534", "--regid=65534", "--clear-groups", "--"]
    return subprocess.run([*prefix, *NEUROYARD, *argv], capture_output=True, text=True,
                          cwd=cwd, env=env, timeout=120)  # fmt: skip


def test_a_read_only_store_is_reported_and_run_refuses_it(shared_folder, capsys):
    probe = as_unprivileged(["tasks"], shared_folder)
    if probe.returncode != 0:  # e.g. the interpreter lies in a folder only root may enter
        pytest.skip(f"cannot run neuroyard as an unprivileged user here: {probe.stderr[-200:]}")
    data = shared_folder / "data"
    data.mkdir()
    store = data / "runs.db"
    assert run_cli(capsys, *small_campaign(store))[0] == 0
    store.chmod(0o444)  # a read-only file in a writable folder
    report_run = as_unprivileged(["report", "--store", str(store)], shared_folder)
    assert report_run.returncode == 0, report_run.stderr
    assert "rwg" in report_run.stdout
    export_run = as_unprivileged(["export", "--store", str(store), "--format", "jsonl"],
                                 shared_folder)  # fmt: skip
    assert export_run.returncode == 0 and len(export_run.stdout.splitlines()) == 3
    refused = as_unprivileged(small_campaign(store), shared_folder)
    assert refused.returncode == 2
    assert refused.stderr == (
        f"neuroyard: error: results store {store}: cannot write it: the file is read-only\n"
    )
    # a writable store in a read-only folder (SQLite needs the folder for its journal)
    store.chmod(0o666)
    data.chmod(0o555)
    assert as_unprivileged(["report", "--store", str(store)], shared_folder).returncode == 0
    refused = as_unprivileged(small_campaign(store), shared_folder)
    assert refused.returncode == 2
    assert refused.stderr == (
        f"neuroyard: error: results store {store}: cannot write to it: its folder {data} is "
        "read-only\n"
    )
    # a new store in a read-only folder
    new = data / "new.db"
    refused = as_unprivileged(small_campaign(new), shared_folder)
    assert refused.returncode == 2
    assert refused.stderr == (
        f"neuroyard: error: results store {new}: cannot create it: its folder {data} is read-only\n"
    )
    assert not new.exists()
    data.chmod(0o755)
    assert sqlite3.connect(store).execute("SELECT count(*) FROM runs").fetchone() == (3,)
    assert stat.S_IMODE(store.stat().st_mode) == 0o666  # nothing rewrote the file


def test_an_internal_error_gives_one_line_a_crash_log_and_status_3(tmp_path, monkeypatch, capsys):
    monkeypatch.setenv("NEUROYARD_CRASH_DIR", str(tmp_path / "crashes"))
    store = tmp_path / "r.db"
    assert run_cli(capsys, *small_campaign(store))[0] == 0

    def broken(records):
        raise KeyError("a bug in the report")

    monkeypatch.setattr(report, "build", broken)
    code, _, err = run_cli(capsys, "report", "--store", str(store))
    assert code == 3 and err.count("\n") == 1
    match = re.fullmatch(
        r"neuroyard: internal error: KeyError: 'a bug in the report' \(traceback in (.+)\)\n", err
    )
    assert match, err
    log = Path(match.group(1)).read_text()
    assert "Traceback" in log and "a bug in the report" in log


def test_a_harness_fault_in_a_run_is_logged_not_stored_and_retried_on_resume(
    tmp_path, monkeypatch, capsys
):
    monkeypatch.setenv("NEUROYARD_CRASH_DIR", str(tmp_path / "crashes"))
    store = tmp_path / "r.db"
    evaluate = Xor.evaluate_batch

    def broken(self, batch):
        raise ZeroDivisionError("a bug in the task")

    monkeypatch.setattr(Xor, "evaluate_batch", broken)
    code, _, err = run_cli(capsys, *small_campaign(store, "--in-process"))
    assert code == 3 and err.count("\n") == 1
    assert err.startswith(
        "neuroyard: internal error: 3 run(s) stopped on an internal error and were not stored"
    )
    log = Path(re.search(r"traceback in (.+)\)", err).group(1)).read_text()
    assert "ZeroDivisionError: a bug in the task" in log
    monkeypatch.setattr(Xor, "evaluate_batch", evaluate)
    assert run_cli(capsys, *small_campaign(store, "--in-process"))[0] == 0
    assert sqlite3.connect(store).execute("SELECT count(*) FROM runs").fetchone() == (3,)


def test_the_in_process_mode_gives_the_records_of_the_workers(tmp_path, capsys):
    exports = []
    for name, extra in (("a.db", ["--in-process"]), ("b.db", ["--workers", "2"])):
        store = tmp_path / name
        assert run_cli(capsys, *small_campaign(store, *extra))[0] == 0
        _, out, _ = run_cli(capsys, "export", "--store", str(store), "--format", "jsonl")
        lines = [strict(line) for line in out.splitlines()]
        # the evolver ran in this process in one, in a process of its own in the other
        assert {r["isolated"] for r in lines} == {name == "b.db"}
        exports.append([{k: v for k, v in r.items() if k not in ("timing", "host", "isolated")}
                        for r in lines])  # fmt: skip
    assert exports[0] == exports[1]


def test_every_json_output_parses_strictly(tmp_path, capsys):
    store = tmp_path / "r.db"
    # an unsolved group: its ERT is infinite, written as null with a note
    assert run_cli(capsys, *small_campaign(store))[0] == 0
    code, out, _ = run_cli(capsys, "report", "--store", str(store), "--format", "json")
    (row,) = strict(out)
    assert code == 0 and row["solved"] == 0
    assert row["ert"] is None and row["non_finite_numbers"] == {"ert": "inf"}
    code, out, _ = run_cli(capsys, "tasks", "--format", "json")
    assert code == 0 and strict(out)
    code, out, _ = run_cli(capsys, "export", "--store", str(store), "--format", "jsonl")
    assert code == 0 and all(strict(line) for line in out.splitlines())


def test_a_full_disk_before_the_campaign_is_one_line_and_status_2(tmp_path, monkeypatch, capsys):
    import shutil

    from neuroyard.records import store as store_module

    usage = shutil.disk_usage(tmp_path)
    monkeypatch.setattr(store_module.shutil, "disk_usage", lambda path: usage._replace(free=4096))
    path = tmp_path / "full.db"
    code, _, err = run_cli(capsys, *small_campaign(path))
    assert code == 2
    assert err == (
        f"neuroyard: error: results store {path}: cannot write it: the disk is full "
        "(4,096 bytes free)\n"
    )


def test_a_disk_that_fills_during_the_campaign_keeps_the_stored_runs(tmp_path):
    # SQLite's page limit gives the same error as a full disk (SQLITE_FULL)
    from neuroyard.core.errors import StoreError
    from neuroyard.core.evolver_registry import EvolverSpec
    from neuroyard.execution.campaign import CampaignPlan, TaskChoice, execute
    from neuroyard.records.store import ResultStore

    plan = CampaignPlan([EvolverSpec("rwg", {"batch_size": 10})], [TaskChoice("xor-v2")], 40,
                        1, 200)  # fmt: skip
    path = tmp_path / "filling.db"
    with ResultStore(path) as store:
        pages = store.db.execute("PRAGMA page_count").fetchone()[0]
        store.db.execute(f"PRAGMA max_page_count = {pages + 40}")
        with pytest.raises(StoreError, match=r"filling.db: cannot write it: the disk is full"):
            execute(plan, store, progress=False)
        kept = len(list(store.records()))
    assert 0 < kept < 40
    db = sqlite3.connect(path)
    assert db.execute("PRAGMA integrity_check").fetchone() == ("ok",)
    assert db.execute("SELECT count(*) FROM runs").fetchone() == (kept,)
    with ResultStore(path) as store:  # with room again, the campaign resumes
        result = execute(plan, store, progress=False)
        assert (result.done, result.skipped) == (40 - kept, kept)
