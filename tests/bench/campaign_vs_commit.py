"""Wall time of a fixed NEAT campaign: the working tree against an earlier commit.

Run with:

    .venv/bin/python tests/bench/campaign_vs_commit.py --baseline REF [--repeats N]
        [--workers W] [--write PATH]

(defaults: 3 repeats, 2 workers). A standalone script, not a pytest test.

What is measured: the wall seconds of one campaign, three ``neuroyard run`` calls (the
console script's entry point of that side) in sequence into one fresh store, all with the reference NEAT evolver, campaign
seed 1, ``--workers W`` and ``--quiet``: XOR 100 runs (the highest ``xor-vN`` id of that
side), single pole with velocities 20 runs (``pole1-markov-v1``), double pole with
velocities 50 runs (``pole2-markov-v1``). The time includes process start, the loading of
the cached numba kernels and the store writes, as a user of the command line meets them.
The solved runs of each campaign (from ``report --format json``) are shown as a sanity
figure.

Target: the working tree at most 10% slower than the baseline commit, i.e. the median of
the pair-by-pair ratios current/baseline at most 1.10 (from the project's issue on fault
containment).

How: REF is checked out in a detached git worktree in a temporary folder and installed,
not editable, into a private folder that the baseline side puts on PYTHONPATH; the current
side is the editable working tree. Before anything is timed, each side reports where it
imports the harness (``neuroyard``; ``neuroyard.harness`` before 0.2), ``neuroyard.tasks`` and
``neuroyard.reference`` from, and the
script stops unless that is its own source. One warm-up campaign per side (not counted)
builds numba's kernel cache of each install; then campaigns alternate current, baseline,
current, baseline, ... for N pairs. Medians and ratios are measured side by side in one run.
The JSON that ``--write`` writes names files relative to the repository
(``COMMIT:path`` for a side installed from a commit), never by where they lie on this
machine.

Exit status: 0 when the median ratio is within the target, 1 when it is not, 2 when a step
fails (one line on stderr saying which), 130 when interrupted (Ctrl-C or SIGTERM). On an
error or an interrupt the script ends the commands it started with their worker processes
and removes the worktree and every temporary file.
"""

from __future__ import annotations

import argparse
import json
import os
import platform
import re
import signal
import statistics
import subprocess
import sys
import tempfile
import time
from collections.abc import Sequence
from contextlib import suppress
from dataclasses import dataclass, replace
from datetime import UTC, datetime
from pathlib import Path
from types import FrameType
from typing import Any

REPO = Path(__file__).resolve().parents[2]
TARGET = 1.10  # current/baseline, median of the pairs (issue on fault containment)
EVOLVER = "neat"
SEED = 1
XOR_RUNS = 100
POLE_RUNS = (("pole1-markov-v1", 20), ("pole2-markov-v1", 50))
PACKAGES = ("harness", "tasks", "reference")
XOR_ID = re.compile(r"xor-v(\d+)")


class BenchError(Exception):
    """A step of the comparison failed; the message says which step and why, in one line."""


@dataclass(frozen=True)
class Side:
    """One side of the comparison.

    ``env`` is the environment of every subprocess of this side, ``source`` the folder that
    holds the ``harness``, ``tasks`` and ``reference`` packages it must import, and
    ``tasks`` the campaign as (task id, runs) in the order they are run.
    """

    name: str
    env: dict[str, str]
    source: Path
    tasks: tuple[tuple[str, int], ...] = ()

    @property
    def total_runs(self) -> int:
        """Runs in one campaign of this side."""
        return sum(runs for _, runs in self.tasks)


def _last_line(text: str) -> str:
    lines = [line for line in text.strip().splitlines() if line.strip()]
    return lines[-1].strip() if lines else "no output"


def _run(command: Sequence[str], what: str, **kwargs: Any) -> str:
    """Run ``command`` and return its stdout; a non-zero exit raises ``BenchError``.

    The command runs in a process group of its own: on an interrupt or any other exception
    here the whole group is killed, so no worker process of a campaign outlives the script.
    """
    with subprocess.Popen(
        command,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        start_new_session=True,
        **kwargs,
    ) as process:
        try:
            stdout, stderr = process.communicate()
        except BaseException:
            with suppress(ProcessLookupError):
                os.killpg(process.pid, signal.SIGKILL)
            raise
    if process.returncode != 0:
        raise BenchError(f"{what}: exited with status {process.returncode}: {_last_line(stderr)}")
    return stdout


def git(*args: str) -> str:
    """Output of ``git -C REPO ARGS``, stripped."""
    return _run(["git", "-C", str(REPO), *args], f"git {' '.join(args)}").strip()


# Runs the ``neuroyard`` console script's entry point of the side that comes first on the
# path (the baseline's install through PYTHONPATH, else the working tree), wherever that
# version keeps its command line.
ENTRY = (
    "import sys; from importlib.metadata import entry_points; "
    "sys.exit(entry_points(group='console_scripts')['neuroyard'].load()())"
)


def cli(side: Side, *args: str, cwd: Path) -> str:
    """Stdout of ``neuroyard ARGS`` run as ``side`` in ``cwd``."""
    command = [sys.executable, "-c", ENTRY, *args]
    return _run(command, f"{side.name} side: neuroyard {' '.join(args)}", env=side.env, cwd=cwd)


def environment(pythonpath: Path | None) -> dict[str, str]:
    """This process's environment with PYTHONPATH set to ``pythonpath``, or without one."""
    env = {k: v for k, v in os.environ.items() if k != "PYTHONPATH"}
    if pythonpath is not None:
        env["PYTHONPATH"] = str(pythonpath)
    return env


def check_imports(side: Side, cwd: Path) -> Path:
    """Where ``side`` imports the harness from, in a subprocess with its
    environment and working folder; raises ``BenchError`` unless every neuroyard package
    comes from ``side.source``."""
    # the harness is the package ``neuroyard`` itself from 0.2 on, ``neuroyard.harness`` before
    probe = (
        "import json, importlib.util, neuroyard.tasks, neuroyard.reference\n"
        "old = importlib.util.find_spec('neuroyard.harness') is not None\n"
        "harness = importlib.import_module('neuroyard.harness' if old else 'neuroyard')\n"
        "print(json.dumps({'harness': harness.__file__, 'tasks': neuroyard.tasks.__file__, "
        "'reference': neuroyard.reference.__file__}))"
    )
    files = json.loads(
        _run(
            [sys.executable, "-c", probe], f"{side.name} side: import check", env=side.env, cwd=cwd
        )
    )
    for package in PACKAGES:
        expected = [side.source / package / "__init__.py"]
        if package == "harness":  # an install from 0.2 on: the harness is neuroyard itself
            expected.append(side.source / "__init__.py")
        if Path(files[package]).resolve() not in [e.resolve() for e in expected]:
            raise BenchError(
                f"{side.name} side imports its {package} package from {files[package]}, "
                f"not from {expected[0]}"
            )
    return Path(files["harness"])


def campaign_tasks(side: Side, cwd: Path) -> tuple[tuple[str, int], ...]:
    """The campaign of ``side``: its highest ``xor-vN`` task with the XOR runs, then the
    pole tasks; the XOR id is read from the side's own ``tasks --format json``."""
    ids = [task["id"] for task in json.loads(cli(side, "tasks", "--format", "json", cwd=cwd))]
    xor = {int(m.group(1)): task for task in ids if (m := XOR_ID.fullmatch(task))}
    if not xor:
        raise BenchError(f"{side.name} side: no xor-vN task among {', '.join(ids)}")
    return ((xor[max(xor)], XOR_RUNS), *POLE_RUNS)


def run_campaign(side: Side, store: Path, workers: int, cwd: Path) -> float:
    """Run the campaign of ``side`` into the new store file ``store``; wall seconds of the
    three ``run`` calls together."""
    start = time.perf_counter()
    for task, runs in side.tasks:
        cli(
            side,
            "run",
            "--evolver",
            EVOLVER,
            "--task",
            task,
            "--runs",
            str(runs),
            "--seed",
            str(SEED),
            "--workers",
            str(workers),
            "--quiet",
            "--store",
            str(store),
            cwd=cwd,
        )
    return time.perf_counter() - start


def solved_runs(side: Side, store: Path, cwd: Path) -> int:
    """Solved runs in ``store``: the sum of ``solved`` over the rows of the JSON report."""
    rows = json.loads(cli(side, "report", "--store", str(store), "--format", "json", cwd=cwd))
    return sum(row["solved"] for row in rows)


def install_commit(commit: str, folder: Path) -> Path:
    """Install ``commit``, not editable, into ``folder/site`` and return that folder.

    The commit is checked out in a detached worktree ``folder/worktree`` that is removed with
    ``git worktree remove --force`` once installed, also on an error or interrupt. Build
    isolation stays on: the project's build needs a newer setuptools than a development
    venv may hold, and ``--no-build-isolation`` then fails.
    """
    worktree, site = folder / "worktree", folder / "site"
    git("worktree", "add", "--detach", str(worktree), commit)
    try:
        _run(
            [sys.executable, "-m", "pip", "install", "--quiet", "--no-deps"]
            + ["--target", str(site), str(worktree)],
            f"pip install of {commit[:12]}",
            env=environment(None),
        )
    finally:
        git("worktree", "remove", "--force", str(worktree))
    return site


def recorded_import(side: Side, harness: Path, commit: str | None) -> str:
    """Where ``side`` imports the harness from, as the JSON records it: relative to
    the side's source folder, which has the repository's layout (``harness/__init__.py``),
    and for a side installed from a commit prefixed with ``COMMIT:`` as in git's notation
    for a file of a commit. No machine-local path (the repository's location, the temporary
    install folder) goes into the record."""
    relative = harness.resolve().relative_to(side.source.resolve()).as_posix()
    return relative if commit is None else f"{commit}:{relative}"


def recorded_command(argv: Sequence[str]) -> list[str]:
    """The command line as the JSON records it: the script's file name, and every argument
    that is an absolute path inside the repository made relative to it (an absolute path
    elsewhere is reduced to its file name)."""
    out = [Path(argv[0]).name]
    for arg in argv[1:]:
        path = Path(arg)
        if path.is_absolute():
            resolved = path.resolve()
            inside = resolved.is_relative_to(REPO.resolve())
            arg = resolved.relative_to(REPO.resolve()).as_posix() if inside else path.name
        out.append(arg)
    return out


def prepare(side: Side, cwd: Path) -> tuple[Side, Path]:
    """``side`` with its campaign, and where it imports the harness from, after
    checking that it imports every neuroyard package from ``side.source``."""
    harness = check_imports(side, cwd)
    return replace(side, tasks=campaign_tasks(side, cwd)), harness


def _seconds(times: Sequence[float]) -> str:
    return (
        f"median {statistics.median(times):.1f} s, min {min(times):.1f} s, max {max(times):.1f} s"
    )


def time_pairs(
    sides: Sequence[Side], repeats: int, workers: int, tmp: Path
) -> tuple[dict[str, float], dict[str, list[float]], dict[str, list[int]]]:
    """One warm-up campaign per side, then ``repeats`` rounds of one campaign per side in
    the order of ``sides``, each into a new store under ``tmp``. Returns the warm-up seconds,
    the timed seconds and the solved runs, by side name."""
    stores = tmp / "stores"
    stores.mkdir()
    warmup: dict[str, float] = {}
    times: dict[str, list[float]] = {side.name: [] for side in sides}
    solved: dict[str, list[int]] = {side.name: [] for side in sides}
    for rep in range(-1, repeats):
        label = "warm-up" if rep < 0 else f"pair {rep + 1}"
        for side in sides:
            store = stores / f"{side.name}-{rep + 1}.db"
            seconds = run_campaign(side, store, workers, tmp)
            count = solved_runs(side, store, tmp)
            print(
                f"{label:8}  {side.name:8} {seconds:7.1f} s, "
                f"{count} of {side.total_runs} runs solved",
                flush=True,
            )
            if rep < 0:
                warmup[side.name] = seconds
            else:
                times[side.name].append(seconds)
                solved[side.name].append(count)
    return warmup, times, solved


def resolve(ref: str) -> str:
    """The full hash of the commit ``ref`` names."""
    return git("rev-parse", "--verify", f"{ref}^{{commit}}")


def compare(args: argparse.Namespace, tmp: Path) -> dict[str, Any]:
    """Warm up, then time ``args.repeats`` pairs of campaigns; the figures as a dict.

    The baseline side is ``args.baseline`` installed from a worktree; the current side is
    the editable working tree, or ``args.current`` installed the same way when given.
    """
    described: dict[str, dict[str, Any]] = {}
    sides, imports = [], {}
    for name, ref in (("current", args.current), ("baseline", args.baseline)):
        if ref is None:
            described[name] = {"head": resolve("HEAD"), "dirty": bool(git("status", "--porcelain"))}
            side = Side(name, environment(None), REPO)
        else:
            described[name] = {"ref": ref, "commit": resolve(ref)}
            site = install_commit(described[name]["commit"], tmp / name)
            side = Side(name, environment(site), site / "neuroyard")
        side, harness = prepare(side, tmp)
        sides.append(side)
        imports[name] = recorded_import(side, harness, described[name].get("commit"))
        print(f"{name:8}  imports the harness from {harness}")
        print(f"{'':8}  campaign {', '.join(f'{t} x{n}' for t, n in side.tasks)}", flush=True)

    warmup, times, solved = time_pairs(sides, args.repeats, args.workers, tmp)
    ratios = [c / b for c, b in zip(times["current"], times["baseline"], strict=True)]
    return {
        "measured": "wall seconds of one campaign (three neuroyard run calls), warm-up excluded",
        "command": recorded_command(sys.argv),
        "campaign": {
            "evolver": EVOLVER,
            "seed": SEED,
            "workers": args.workers,
            "tasks": {side.name: [list(t) for t in side.tasks] for side in sides},
        },
        **described,
        "imports": imports,
        "warmup_seconds": warmup,
        "seconds": times,
        "median_seconds": {name: statistics.median(t) for name, t in times.items()},
        "min_seconds": {name: min(t) for name, t in times.items()},
        "max_seconds": {name: max(t) for name, t in times.items()},
        "solved": solved,
        "runs_per_campaign": {side.name: side.total_runs for side in sides},
        "ratios": ratios,
        "median_ratio": statistics.median(ratios),
        "target": TARGET,
        "cores": os.cpu_count(),
        "python": platform.python_version(),
        "date": datetime.now(UTC).isoformat(timespec="seconds"),
    }


def _described(side: dict[str, Any]) -> str:
    if "ref" in side:
        return f"{side['ref']} = {side['commit'][:9]}"
    return f"working tree, HEAD {side['head'][:9]}{', dirty' if side['dirty'] else ''}"


def summary(result: dict[str, Any]) -> list[str]:
    """The closing lines: per side the time figures and solved runs, then the ratio."""
    lines = [
        f"{name:8} ({_described(result[name])}): {_seconds(t)}; solved "
        f"{', '.join(map(str, result['solved'][name]))} of {result['runs_per_campaign'][name]}"
        for name, t in result["seconds"].items()
    ]
    ratios = result["ratios"]
    lines.append(f"ratios current/baseline by pair: {', '.join(f'{r:.3f}' for r in ratios)}")
    within = "within" if result["median_ratio"] <= result["target"] else "over"
    lines.append(
        f"current / baseline = {result['median_ratio']:.3f} "
        f"(median of {len(ratios)} pair{'s' if len(ratios) != 1 else ''}; "
        f"target <= {result['target']:.2f}: {within} the target)"
    )
    return lines


def _positive(text: str) -> int:
    value = int(text)
    if value < 1:
        raise argparse.ArgumentTypeError(f"must be at least 1, got {value}")
    return value


def parse_args(argv: Sequence[str] | None) -> argparse.Namespace:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--baseline", required=True, metavar="REF", help="git commit to compare with")
    p.add_argument("--repeats", type=_positive, default=3, help="timed pairs (default 3)")
    p.add_argument("--workers", type=_positive, default=2, help="worker processes (default 2)")
    p.add_argument("--write", type=Path, metavar="PATH", help="also write the figures as JSON")
    # A commit instead of the working tree on the current side, for a working tree that
    # cannot run at the moment or to compare two commits; not shown in --help.
    p.add_argument("--current", metavar="REF", help=argparse.SUPPRESS)
    return p.parse_args(argv)


def _interrupt(signum: int, frame: FrameType | None) -> None:
    raise KeyboardInterrupt  # SIGTERM cleans up like Ctrl-C


def main(argv: Sequence[str] | None = None) -> int:
    """Compare, print the figures, write them when asked; the exit status of the module
    docstring."""
    args = parse_args(argv)
    signal.signal(signal.SIGTERM, _interrupt)
    try:
        with tempfile.TemporaryDirectory(prefix="neuroyard-bench-") as tmp:
            result = compare(args, Path(tmp))
    except BenchError as exc:
        print(f"campaign_vs_commit: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("campaign_vs_commit: interrupted; temporary files removed", file=sys.stderr)
        return 130
    print("\n".join(summary(result)))
    if args.write:
        try:
            args.write.write_text(json.dumps(result, indent=2) + "\n")
        except OSError as exc:
            print(
                f"campaign_vs_commit: error: --write {args.write}: {exc.strerror}", file=sys.stderr
            )
            return 2
    return 0 if result["median_ratio"] <= TARGET else 1


if __name__ == "__main__":
    sys.exit(main())
