"""A campaign written the way a researcher works in a notebook, one cell after another.

The evolver is defined right here: it is neither installed nor registered. The cells run
when the script runs (``python campaign.py STORE``), as a notebook's would; the command
line side of its test (tests/test_notebook_campaign.py) imports the class alone from this
file as ``campaign:InlineEvolver`` (the guard below keeps the cells out of that import),
and the campaign names the class that way, so both sides make the same runs. At the end
the script prints, as JSON, what its cells found, for the test to check.
"""

# %% An evolver of our own: a (1 + lambda) hill climber on the weights of one fixed network
import json
import sys

import numpy as np

import neuroyard


class InlineEvolver:
    """Mutates every weight of the best network so far with Gaussian noise; ``batch``
    mutants a generation; a hidden layer of ``hidden`` tanh nodes."""

    options = neuroyard.OptionTable(
        "evolver InlineEvolver",
        [
            neuroyard.Option("batch", 10, "mutants a generation", low=1, source="ours"),
            neuroyard.Option("sigma", 0.5, "mutation step", above=0.0, source="ours"),
            neuroyard.Option("hidden", 3, "hidden nodes", low=1, source="ours"),
        ],
    )

    def __init__(self, **given):
        self.config = self.options.resolve(given)  # options arrive as keyword arguments

    def settings(self):
        return dict(self.config)

    def start(self, problem, seed):
        self.rng = np.random.default_rng(seed)
        n_in, n_hidden, n_out = problem.inputs, self.config["hidden"], problem.outputs
        self.nodes = (
            *(neuroyard.Node(i, "input") for i in range(n_in)),
            neuroyard.Node(n_in, "bias"),
            *(neuroyard.Node(n_in + 1 + h, "hidden", "tanh") for h in range(n_hidden)),
            *(neuroyard.Node(n_in + 1 + n_hidden + o, "output", "sigmoid") for o in range(n_out)),
        )
        sources = range(n_in + 1)
        hidden = range(n_in + 1, n_in + 1 + n_hidden)
        outputs = range(n_in + 1 + n_hidden, n_in + 1 + n_hidden + n_out)
        self.ends = [(s, h) for s in sources for h in hidden]
        self.ends += [(h, o) for h in (*hidden, n_in) for o in outputs]
        self.best = self.rng.normal(size=len(self.ends))
        self.best_fitness = -np.inf

    def network(self, weights):
        links = (
            neuroyard.Connection(s, t, float(w))
            for (s, t), w in zip(self.ends, weights, strict=True)
        )
        return neuroyard.Network(self.nodes, tuple(links))

    def ask(self):
        noise = self.rng.normal(
            scale=self.config["sigma"], size=(self.config["batch"], len(self.ends))
        )
        self.batch = self.best + noise
        return [self.network(w) for w in self.batch]

    def tell(self, evaluations):
        fitness = [e.fitness for e in evaluations]
        k = int(np.argmax(fitness))
        if fitness[k] > self.best_fitness:
            self.best, self.best_fitness = self.batch[k], fitness[k]

    def stats(self):
        return {"best_so_far": float(self.best_fitness)}


# %% Run it beside the registered random-weight guessing on two tasks
if __name__ == "__main__":
    store = sys.argv[1]
    results = neuroyard.run(
        ["rwg", {"campaign:InlineEvolver": InlineEvolver}],
        ["xor-v2", "parity-v2"],
        runs=3,
        seed=5,
        budget=600,
        store=store,
        workers=2,
        params={"campaign:InlineEvolver:batch": 12, "rwg:batch_size": 30},
        progress=False,
    )

    # %% One row per run, one row per generation
    runs = results.runs_table()
    generations = results.generations_table()
    mine = generations[generations["evolver"] == "campaign:InlineEvolver"]

    # %% Is the hill climber better than guessing?
    comparison = neuroyard.compare("rwg", "campaign:InlineEvolver", store=store)

    # %% What the cells found
    print(
        json.dumps(
            {
                "done": results.done,
                "runs": len(runs),
                "run_columns": list(runs.columns),
                "evolvers": sorted(runs["evolver"].unique()),
                "tasks": sorted(runs["task"].unique()),
                "generations": len(generations),
                "logged_generations": int(runs["generations"].sum()),
                "stat_is_best_so_far": bool(
                    (mine["stat.best_so_far"] >= mine["best_fitness"] - 1e-12).all()
                ),
                "compared_tasks": [t.task for t in comparison.tasks],
                "verdicts": [r.verdict for t in comparison.tasks for r in t.rows],
            }
        )
    )
