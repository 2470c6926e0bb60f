"""Pictures of maze runs: a valid PNG of the stated size, the drawn data equal to the
episode and the sample they come from, ``neuroyard replay`` of a stored maze run, and the
choice of the run the HTML report shows."""

from __future__ import annotations

import base64
import io
import re
import struct

import matplotlib.image
import numpy as np
import pytest

from neuroyard.cli.main import main
from neuroyard.core.batch import compile_network
from neuroyard.core.network import Connection, Network, Node, dumps, from_dict
from neuroyard.records.runs import RunRecord
from neuroyard.records.store import ResultStore
from neuroyard.reports.run_picture import representative, run_picture
from neuroyard.tasks import make
from neuroyard.tasks.maze import shipped_maze
from neuroyard.tasks.maze.picture import DPI, HEIGHT_INCHES, WIDTH_INCHES, figure, png

SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification, 5.2 (from memory)
SIZE = (round(WIDTH_INCHES * DPI), round(HEIGHT_INCHES * DPI))


def png_size(data: bytes) -> tuple[int, int]:
    """(width, height) from the IHDR chunk, the first after the signature (PNG
    specification, 11.2.2; from memory)."""
    assert data[:8] == SIGNATURE and data[12:16] == b"IHDR"
    return struct.unpack(">II", data[16:24])


def wandering_network() -> Network:
    """Turns with what the rangefinder ahead reads and drives forward: a path with bends."""
    nodes = [Node(k, "input") for k in range(10)]
    nodes += [Node(10, "output", "sigmoid", 0.3), Node(11, "output", "sigmoid", 2.0)]
    return Network(tuple(nodes), (Connection(2, 10, 1.5), Connection(4, 10, -2.0)), "feedforward")


def artist(fig, gid: str):
    (found,) = fig.findobj(lambda a: a.get_gid() == gid)
    return found


def test_the_picture_is_a_png_of_the_stated_size_and_the_same_every_time():
    task = make("maze-hard-v3")
    positions = [[30.0, 140.0], [45.5, 20.25], [100.0, 170.0]]
    scene = task.scene(wandering_network(), positions, "a label")
    data = png(scene)
    assert png_size(data) == SIZE
    # decoded by matplotlib's PNG reader: rows x columns x RGBA
    pixels = matplotlib.image.imread(io.BytesIO(data), format="png")
    assert pixels.shape == (SIZE[1], SIZE[0], 4)
    assert pixels[..., :3].std() > 0  # something is drawn, not a blank canvas
    assert png(scene) == data  # deterministic


def test_the_drawn_data_are_the_episode_the_positions_and_the_maze():
    task = make("maze-medium-v1")
    network = wandering_network()
    positions = np.array([[30.0, 140.0], [45.5, 20.25], [100.0, 170.0]])
    fig = figure(task.scene(network, positions.tolist()))
    compiled = compile_network(network, 10, 2)
    episode = task.trajectory(compiled)
    drawn = artist(fig, "trajectory").get_xydata()
    assert drawn.shape == (task.maze.steps + 1, 2)
    assert np.array_equal(drawn, episode)
    # the path ends where an evaluation of the same network ends (its behaviour)
    assert tuple(drawn[-1]) == pytest.approx(task.evaluate(compiled).behaviour, abs=1e-12)
    assert np.array_equal(artist(fig, "positions").get_offsets(), positions)
    walls = np.array(artist(fig, "walls").get_segments()).reshape(-1, 4)
    assert np.array_equal(walls, task.maze.walls)  # the file's walls and the four sides
    assert artist(fig, "goal-radius").get_radius() == 5.0  # lehman2011, sec. 6 (VERIFIED)
    assert tuple(artist(fig, "goal").get_xydata()[0]) == task.maze.goal
    assert tuple(artist(fig, "start").get_xydata()[0]) == task.maze.start[:2]
    assert "deception" in fig.axes[0].get_title()
    # fewer steps asked: the first of them only
    short = artist(figure(task.scene(network, [], steps=50)), "trajectory").get_xydata()
    assert np.array_equal(short, episode[:51])


def test_no_network_and_no_positions_draw_the_maze_alone():
    fig = figure(make("maze-open-v1").scene(None, []))
    assert not fig.findobj(lambda a: a.get_gid() in ("trajectory", "positions"))


def run_campaign(capsys, task: str, store, evolver="rwg", budget="200") -> None:
    argv = ["run", "--task", task, "--evolver", evolver, "--runs", "2", "--budget", budget]
    assert main([*argv, "--store", str(store), "--quiet"]) == 0, capsys.readouterr().err
    capsys.readouterr()


def test_replay_of_a_stored_maze_run_draws_its_final_positions(tmp_path, capsys):
    store = tmp_path / "runs.db"
    run_campaign(capsys, "maze-hard-v3", store)
    with ResultStore(store, write=False) as s:
        record = next(r for r in s.records(with_log=False) if r.run_index == 1)
    out = tmp_path / "run.png"
    argv = ["replay", "--store", str(store), "--task", "maze-hard-v3", "--run", "1"]
    assert main([*argv, "--out", str(out)]) == 0
    printed = capsys.readouterr().out
    assert printed.count("\n") == 1 and printed.startswith(f"{out}: ")
    assert f"{len(record.behaviours)} final positions" in printed
    # the distance printed is the one the run's success test measured
    assert f"ends {record.success_details['final_distance']:.1f} units from the goal" in printed
    assert png_size(out.read_bytes()) == SIZE
    # the file holds the picture of that record: its sample and its best network
    task = make("maze-hard-v3", **record.task_settings)
    label = f"rwg, run 1 ({record.status})"
    scene = task.scene(from_dict(record.best_network), record.behaviours, label)
    assert out.read_bytes() == png(scene)

    # a network file on a maze task: its episode alone
    network = tmp_path / "net.json"
    network.write_text(dumps(wandering_network()))
    argv = ["replay", "--network", str(network), "--task", "maze-hard-v3", "--steps", "100"]
    assert main([*argv, "--out", str(out)]) == 0
    ending = r": the network ends \S+ units from the goal after 100 of 400 steps\n"
    assert re.fullmatch(re.escape(str(out)) + ending, capsys.readouterr().out)
    assert png_size(out.read_bytes()) == SIZE


def test_replay_names_the_configuration_where_a_store_holds_several(tmp_path, capsys):
    """Two evolvers' runs of one task in a store: replay refuses to guess whose run 0 to
    draw, in one line listing both, and --evolver picks one (compare's EVOLVER[@HASH])."""
    store = tmp_path / "runs.db"
    run_campaign(capsys, "maze-hard-v3", store)
    run_campaign(capsys, "maze-hard-v3", store, evolver="hill-climber")
    out = tmp_path / "run.png"
    argv = ["replay", "--store", str(store), "--task", "maze-hard-v3", "--out", str(out)]
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "runs of 2 configurations" in err
    assert "hill-climber [" in err and "rwg [" in err and "--evolver" in err
    assert not out.exists()
    assert main([*argv, "--evolver", "hill-climber"]) == 0
    assert "final positions" in capsys.readouterr().out
    with ResultStore(store, write=False) as s:
        record = next(
            r for r in s.records(with_log=False) if r.evolver == "hill-climber" and r.run_index == 0
        )
    task = make("maze-hard-v3", **record.task_settings)
    label = f"hill-climber, run 0 ({record.status})"
    assert out.read_bytes() == png(
        task.scene(from_dict(record.best_network), record.behaviours, label)
    )
    assert main([*argv, "--evolver", "neat"]) == 2
    assert "no configuration matches 'neat'" in capsys.readouterr().err


def test_replay_of_a_user_maze_run_by_its_file(tmp_path, capsys):
    maze = tmp_path / "mine.toml"
    maze.write_text(shipped_maze("medium").read_text())
    store = tmp_path / "runs.db"
    run_campaign(capsys, f"maze:{maze}", store)
    out = tmp_path / "run.png"
    argv = ["replay", "--store", str(store), "--task", f"maze:{maze}", "--run", "0"]
    assert main([*argv, "--out", str(out)]) == 0
    assert "final positions" in capsys.readouterr().out
    assert png_size(out.read_bytes()) == SIZE
    other = tmp_path / "other.toml"
    argv = ["replay", "--store", str(store), "--task", f"maze:{other}", "--run", "0"]
    assert main([*argv, "--out", str(out)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and f"with file = {other}" in err


def record(run: int, status: str, fitness: float | None, network: bool = True) -> RunRecord:
    """A synthetic record (not data) for the choice of the run shown."""
    return RunRecord(
        evolver="e", config={}, config_hash="0" * 12, task="maze-open-v1", task_settings={},
        run_index=run, campaign_seed=1, seed=run, task_seed=run, budget=100, status=status,
        best_fitness=fitness, best_network={"nodes": []} if network else None,
    )  # fmt: skip


def test_the_run_shown_is_the_first_solved_else_the_fittest():
    a = [record(1, "unsolved", 200.0), record(0, "unsolved", 250.0)]
    b = [record(0, "solved", 270.0), record(1, "solved", 280.0)]
    assert representative({"a": a, "b": b}) == ("b", b[0])  # the first solved, in table order
    c = [record(0, "failed", None), record(1, "unsolved", 250.0), record(2, "unsolved", 100.0)]
    assert representative({"a": a, "c": c}) == ("a", a[1])  # the highest; the first of equals
    assert representative({"d": [record(0, "solved", 270.0, network=False)]}) is None


def test_the_report_picture_is_the_representative_runs_and_other_tasks_have_none(tmp_path, capsys):
    store = tmp_path / "runs.db"
    run_campaign(capsys, "maze-hard-v3", store)
    run_campaign(capsys, "xor-v2", store)
    page = tmp_path / "report.html"
    assert main(["report", "--store", str(store), "--format", "html", "-o", str(page)]) == 0
    source = page.read_text(encoding="utf-8")
    pictures = re.findall(r'<img src="data:image/png;base64,([^"]+)" alt="where the evaluations '
                          r'of a run ended and its best network&#39;s path, ([^"]+)">',
                          source)  # fmt: skip
    assert [task for _, task in pictures] == ["maze-hard-v3"]  # none for xor-v2
    with ResultStore(store, write=False) as s:
        runs = [r for r in s.records(with_log=False) if r.task == "maze-hard-v3"]
    expected = run_picture({"rwg": runs})
    assert expected is not None
    assert base64.b64decode(pictures[0][0]) == expected[0]
    # no run solved (random guessing in 200 evaluations on the hard maze), so the run
    # shown is the one whose best network ended nearest to the goal
    assert not any(r.solved for r in runs)
    chosen = min(runs, key=lambda r: r.success_details["final_distance"])
    assert f"rwg, run {chosen.run_index} (unsolved)" in expected[1]
    assert f"ends {chosen.success_details['final_distance']:.1f} units" in expected[1]
    assert "first solved run" in source
