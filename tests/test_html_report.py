"""The HTML report in a real browser: headless Chromium (Debian's ``chromium`` package,
which ``.ci/run`` installs) opens the page offline and reports what it rendered.

The browser proves the images loaded: a probe script, appended to a copy of the page,
runs after the page's ``load`` event and writes into the DOM how many ``<img>`` elements
are complete with a non-zero natural width, and each natural width; Chromium's
``--dump-dom`` prints the DOM after that. Each width must equal the width in the header of
the PNG embedded in that image's ``data:`` URI (the PNG specification, IHDR chunk), so every
embedded image was decoded. The same probe counts the ``<b>`` elements and takes the page's
visible text (``innerText``), which shows whether markup in names came out as text.

The tests that open a page are marked ``needs_tool("chromium")`` (:mod:`external_tools`):
skipped where Chromium is missing, failed instead under ``NEUROYARD_REQUIRE_TOOLS=1`` (CI).
"""

from __future__ import annotations

import base64
import html
import importlib
import json
import re
import shutil
import struct
import subprocess
import sys
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pytest
from scipy.stats import ecdf

from neuroyard.cli.main import main
from neuroyard.records.runs import GenerationLog, RunRecord
from neuroyard.reports import plots
from neuroyard.tasks import registry

HERE = Path(__file__).parent
RESULTS = HERE.parent / "results"
PROBE = """<script>
window.addEventListener("load", () => {
  const images = Array.from(document.images);
  const probe = document.createElement("pre");
  probe.id = "probe";
  probe.textContent = JSON.stringify({
    images: images.length,
    loaded: images.filter((i) => i.complete && i.naturalWidth > 0).length,
    widths: images.map((i) => i.naturalWidth),
    bold: document.getElementsByTagName("b").length,
    text: document.body.innerText,
  });
  document.body.appendChild(probe);
});
</script>"""


def in_browser(page: Path, tmp_path: Path) -> dict:
    """What Chromium rendered of ``page`` (see the module docstring), offline; the test
    calling it is marked ``needs_tool("chromium")``."""
    probed = tmp_path / f"probed-{page.name}"
    source = page.read_text(encoding="utf-8")
    assert source.count("</body>") == 1
    probed.write_text(source.replace("</body>", PROBE + "</body>"), encoding="utf-8")
    out = subprocess.run(
        [
            "chromium",
            "--headless",
            "--disable-gpu",
            "--no-sandbox",
            "--host-resolver-rules=MAP * ~NOTFOUND",  # offline: no name resolves
            f"--user-data-dir={tmp_path / 'chromium-profile'}",
            "--virtual-time-budget=10000",
            "--dump-dom",
            probed.as_uri(),
        ],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert out.returncode == 0, out.stderr[-2000:]
    found = re.search(r'<pre id="probe">(.*?)</pre>', out.stdout, re.DOTALL)
    assert found, out.stdout[-2000:]
    return json.loads(html.unescape(found.group(1)))


class _Resources(HTMLParser):
    """Every tag and every URL-valued attribute of a page (Python's HTML parser)."""

    def __init__(self) -> None:
        super().__init__()
        self.tags: list[str] = []
        self.urls: list[tuple[str, str]] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        self.urls += [(tag, v or "") for k, v in attrs if k in ("src", "href", "srcset", "poster")]


def png_width(data_uri: str) -> int:
    """The width in the IHDR chunk of a base64 PNG data URI (PNG specification, 11.2.2)."""
    raw = base64.b64decode(data_uri.removeprefix("data:image/png;base64,"), validate=True)
    assert raw[:8] == b"\x89PNG\r\n\x1a\n" and raw[12:16] == b"IHDR"
    return struct.unpack(">I", raw[16:20])[0]


def check_page(page: Path, tmp_path: Path) -> tuple[dict, str]:
    """The page is self-contained and every image in it loads in Chromium."""
    source = page.read_text(encoding="utf-8")
    parsed = _Resources()
    parsed.feed(source)
    images = [url for tag, url in parsed.urls if tag == "img"]
    assert images and all(url.startswith("data:image/png;base64,") for url in images)
    assert all(url.startswith(("data:", "#")) for _, url in parsed.urls), parsed.urls
    assert not {"script", "link", "iframe", "object", "embed"} & set(parsed.tags)
    assert "url(" not in source and "@import" not in source
    widths = [png_width(url) for url in images]
    assert all(w == round(plots.WIDTH_INCHES * plots.DPI) for w in widths)
    assert all(len(url) < 200_000 for url in images)  # small images (100 dpi)
    seen = in_browser(page, tmp_path)
    assert seen["images"] == len(images)
    assert seen["loaded"] == len(images)
    assert seen["widths"] == widths
    return seen, source


@pytest.mark.needs_tool("chromium")
def test_the_html_report_of_a_campaign_renders_every_image(tmp_path, monkeypatch, capsys):
    # a small campaign added to a copy of the committed DPNV study (task metric, logs)
    store = tmp_path / "study.db"
    shutil.copyfile(RESULTS / "pole" / "dpnv.sqlite", store)
    common = ["--task", "xor-v2", "--runs", "3", "--budget", "3000", "--store", str(store)]
    for argv in (["--evolver", "hill-climber"], ["--evolver", "rwg"]):
        assert main(["run", *argv, *common, "--quiet"]) == 0
    page = tmp_path / "report.html"
    assert main(["report", "--store", str(store), "--format", "html", "-o", str(page)]) == 0
    assert capsys.readouterr().out == ""  # written to the file, not to stdout
    seen, source = check_page(page, tmp_path)
    # per task: runtime distribution, fitness curves and sizes; DPNV also generalization
    assert seen["images"] == 7
    text = seen["text"]
    for heading in ("Runs: outcome of every run", "Task metrics", "Published figures"):
        assert heading in text
    assert "Settings the runs were measured under" in text and "327,500" in text
    assert "where the evaluations of a run ended" not in source  # no maze, no maze picture


@pytest.mark.needs_tool("chromium")
def test_the_html_report_of_maze_runs_shows_one_run_picture_per_maze(tmp_path, capsys):
    store = tmp_path / "mazes.db"
    for task, evolver, budget in (("maze-open-v1", "neat-novelty", "600"),
                                  ("maze-hard-v3", "rwg", "200")):  # fmt: skip
        argv = ["run", "--task", task, "--evolver", evolver, "--runs", "2", "--budget", budget]
        assert main([*argv, "--store", str(store), "--quiet"]) == 0
    page = tmp_path / "mazes.html"
    assert main(["report", "--store", str(store), "--format", "html", "-o", str(page)]) == 0
    capsys.readouterr()
    seen, source = check_page(page, tmp_path)
    alts = re.findall(r'alt="where the evaluations of a run ended[^"]*, ([^",]+)"', source)
    assert alts == ["maze-open-v1", "maze-hard-v3"]
    assert "The run shown is the first solved run" in seen["text"]


@pytest.mark.needs_tool("chromium")
def test_markup_in_names_settings_and_reasons_is_shown_as_text(tmp_path, monkeypatch, capsys):
    monkeypatch.syspath_prepend(str(HERE))
    markup = importlib.import_module("markup_plugins")
    monkeypatch.setitem(registry._REGISTRY, markup.LabelledXor.id, markup.LabelledXor)
    store = tmp_path / "markup.db"
    name = f"markup_plugins:{markup.MARKUP}"
    for evolver in (name, "markup_plugins:Breaks"):
        argv = ["run", "--evolver", evolver, "--task", "markup-v1", "--runs", "3"]
        argv += ["--budget", "3000", "--setting", f"label={markup.MARKUP}", "--in-process"]
        assert main([*argv, "--store", str(store), "--quiet"]) == 0
    page = tmp_path / "markup.html"
    assert main(["report", "--store", str(store), "--format", "html", "-o", str(page)]) == 0
    capsys.readouterr()
    seen, source = check_page(page, tmp_path)
    assert "<b>" not in source and "&lt;b&gt;x&lt;/b&gt;&amp;" in source
    assert seen["bold"] == 0  # no element was made of the markup
    text = seen["text"]
    assert name in text  # the evolver's name, in the tables and the settings
    assert f"label = {markup.MARKUP}" in text  # the task setting
    assert f"cannot ask {markup.MARKUP}" in text  # the failure reason


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


def test_the_other_formats_do_not_load_matplotlib(tmp_path):
    store = tmp_path / "s.db"
    shutil.copyfile(RESULTS / "neat_xor" / "xor.db", store)
    code = (
        "import sys\n"
        "from neuroyard.cli.main import main\n"
        f"assert main(['report', '--store', {str(store)!r}, '-o', {str(tmp_path / 'r')!r}]) == 0\n"
        "assert 'matplotlib' not in sys.modules, 'matplotlib was loaded'\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert out.returncode == 0, out.stderr


def _run(i: int, solved: bool, log: list[tuple[int, float]]) -> RunRecord:
    """A synthetic run with the given (evaluations, best fitness) generations (not data)."""
    return RunRecord(
        evolver="e",
        config={},
        config_hash="0" * 12,
        task="xor-v2",
        task_settings={},
        run_index=i,
        campaign_seed=1,
        seed=i,
        task_seed=i,
        budget=1000,
        status="solved" if solved else "unsolved",
        evaluations=log[-1][0],
        log=[GenerationLog(g, e, f, f, 0, 0) for g, (e, f) in enumerate(log)],
    )


RUNS = [
    _run(0, True, [(100, 1.0), (200, 3.0), (300, 16.0)]),
    _run(1, False, [(100, 2.0), (200, 1.0), (300, 2.5), (1000, 9.0)]),
    _run(2, True, [(150, 0.5), (450, 16.0)]),
    _run(3, False, [(100, 4.0), (1000, 4.0)]),
]


def test_solved_fraction_is_the_ecdf_of_solved_runs_scaled_by_the_success_rate():
    x, y = plots.solved_fraction(RUNS)
    assert x.tolist() == [300.0, 450.0]
    # scipy's empirical CDF of the solved runs, times the share of runs that solved
    reference = ecdf([300.0, 450.0]).cdf.evaluate(x) * 2 / 4
    assert np.allclose(y, reference) and y[-1] == 0.5  # it ends at the success rate


def test_best_fitness_quartiles_follow_each_runs_best_so_far():
    grid = np.array([50.0, 100.0, 250.0, 450.0, 1000.0])
    low, median, high = plots.best_fitness_quartiles(RUNS, grid)
    # by hand: each run's best fitness so far at each grid point (NaN before its first
    # generation; a run that ended keeps its last value), then numpy's percentiles
    by_hand = np.array(
        [
            [np.nan, 1.0, 3.0, 16.0, 16.0],
            [np.nan, 2.0, 2.0, 2.5, 9.0],
            [np.nan, np.nan, 0.5, 16.0, 16.0],
            [np.nan, 4.0, 4.0, 4.0, 4.0],
        ]
    )
    assert np.isnan([low[0], median[0], high[0]]).all()  # no run has a value yet
    for k in range(1, grid.size):
        column = by_hand[:, k][~np.isnan(by_hand[:, k])]
        assert [low[k], median[k], high[k]] == pytest.approx(np.percentile(column, [25, 50, 75]))


@pytest.mark.needs_tool("chromium")
def test_the_html_comparison_renders_every_image_and_escapes_names(tmp_path, monkeypatch, capsys):
    monkeypatch.syspath_prepend(str(HERE))
    markup = importlib.import_module("markup_plugins")
    name = f"markup_plugins:{markup.MARKUP}"
    store = tmp_path / "pair.db"
    common = ["--task", "xor-v2", "--runs", "3", "--budget", "3000", "--store", str(store)]
    for evolver in ("hill-climber", name):
        assert main(["run", "--evolver", evolver, *common, "--in-process", "--quiet"]) == 0
    capsys.readouterr()
    page = tmp_path / "compare.html"
    argv = ["compare", "--store", str(store), "--a", "hill-climber", "--b", name]
    assert main([*argv, "--format", "html", "-o", str(page)]) == 0, capsys.readouterr().err
    seen, source = check_page(page, tmp_path)
    assert seen["images"] >= 2  # runtime distribution and fitness curves of xor-v2 at least
    assert "<b>" not in source and "&lt;b&gt;x&lt;/b&gt;&amp;" in source
    assert seen["bold"] == 0 and name in seen["text"]
    assert "success rate" in seen["text"] and "runs needed" in seen["text"]


# What a reader sees of the report polish of issue 34: long names break only after their
# separators, a Gymnasium task is named by its environment id, a footnote is printed once.

LONG_NAME = (
    "plugins_for_tests.an_evolver_module_whose_name_is_long_enough_to_wrap:"
    "AnEvolverClassWithALongName_and_some_more_words_to_be_sure"
)
# after the page's load event: the text of each line box of every element holding the name
LINE_BOXES = """<script>
window.addEventListener("load", () => {
  const lines = (element) => {
    const out = [""];
    let top = null;
    const walker = document.createTreeWalker(element, NodeFilter.SHOW_TEXT);
    while (walker.nextNode()) {
      const node = walker.currentNode;
      for (let i = 0; i < node.length; i++) {
        const range = document.createRange();
        range.setStart(node, i);
        range.setEnd(node, i + 1);
        const box = range.getClientRects()[0];
        if (box && top !== null && box.top > top + 1) out.push("");
        if (box) top = box.top;
        out[out.length - 1] += node.data[i];
      }
    }
    return out;
  };
  const holders = Array.from(document.querySelectorAll("td, h3"))
    .filter((e) => e.textContent.includes("NAME_START"));
  const pre = document.createElement("pre");
  pre.textContent = "LINE_BOXES " + JSON.stringify(holders.map(lines));
  document.body.appendChild(pre);
});
</script>"""


@pytest.mark.needs_tool("chromium")
def test_long_names_break_only_after_their_separators_in_the_browser(tmp_path):
    import dataclasses

    from neuroyard.reports import renderers, report
    from neuroyard.reports.wrapping import SEPARATORS

    records = [dataclasses.replace(r, evolver=LONG_NAME) for r in RUNS]
    page = tmp_path / "long.html"
    page.write_text(renderers.render(report.build(records), "html"), encoding="utf-8")
    check_page(page, tmp_path)
    measured = tmp_path / "measured.html"
    probe = LINE_BOXES.replace("NAME_START", LONG_NAME[:20])
    measured.write_text(page.read_text().replace("</body>", probe + "</body>"), encoding="utf-8")
    found = re.search(r"LINE_BOXES (\[.*\])", in_browser(measured, tmp_path)["text"])
    assert found
    holders = json.loads(found.group(1))
    # its cells in the three tables of the summary
    assert len(holders) == 3 and all("".join(lines) == LONG_NAME for lines in holders)
    assert any(len(lines) > 1 for lines in holders)  # the name was too long for a line
    for lines in holders:
        for line in lines[:-1]:
            assert line.endswith(" ") or line[-1] in SEPARATORS, lines


@pytest.mark.needs_tool("chromium")
def test_a_gymnasium_task_and_its_footnotes_as_the_browser_shows_them(tmp_path, capsys):
    store = tmp_path / "cartpole.sqlite"
    shutil.copyfile(RESULTS / "gym" / "cartpole.sqlite", store)
    page = tmp_path / "cartpole.html"
    assert main(["report", "--store", str(store), "--format", "html", "-o", str(page)]) == 0
    text = check_page(page, tmp_path)[0]["text"]
    assert "gym-env-v1" not in text and "Task gym:CartPole-v1" in text
    assert "task gym:CartPole-v1" in text  # the heading of its settings
    # the source of the published threshold, cited by both evolvers' tables, once
    assert text.count("registration of CartPole-v1 in gymnasium/envs/__init__.py") == 1
    assert "see above for [" in text
