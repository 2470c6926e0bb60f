"""CMA-ES on the weights of a network of fixed structure: a reference evolver beside NEAT.

The covariance matrix adaptation evolution strategy (reference/SOURCES.md: hansen2001)
samples each generation a population of weight vectors from a multivariate normal
distribution and moves its mean, step size and covariance towards the fittest samples.
Igel applied it to neuroevolution on pole balancing (reference/SOURCES.md: igel2003).
The strategy itself is the ``cma`` library's (``cma.CMAEvolutionStrategy``); this module
maps it onto the harness's ask/tell contract:

* ``ask()`` returns cma's population, one network per sample, in cma's order;
* ``tell()`` passes the fitnesses on, negated (cma minimises, the harness maximises);
* a batch cut by the budget (``tell`` gets a prefix) is not passed on: cma's update ranks
  a whole population, and the run ends with that batch in any case;
* when one of cma's termination criteria holds (``es.stop()``: the step size or the
  fitness range has collapsed, the covariance is ill-conditioned, ...), the next ``ask``
  starts a new strategy (``restart``), with a population ``restart_population_factor``
  times larger (reference/SOURCES.md: auger2005b), until the harness's budget ends.

Every random number comes from ``numpy.random.default_rng(seed)``, passed to cma as its
normal sampler (cma's ``randn`` option): cma's own ``seed`` option would seed numpy's
global generator, which other code in the same process (two runs in the threads of one
worker) would share. The same seed gives the same run.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import numpy as np

from neuroyard.core.activations import NAMES
from neuroyard.core.errors import NeuroyardError, SettingError
from neuroyard.core.evolver import Evaluation, Problem
from neuroyard.core.network import Network, check
from neuroyard.core.options import Option, OptionTable

from .weight_template import WeightTemplate, from_network, layered

if TYPE_CHECKING:  # for annotations only: cma loads matplotlib and scipy.stats (~2 s), which
    import cma  # listing the evolvers (neuroyard evolvers) need not pay: see _strategy

OWNER = "evolver cmaes"
# Options that shape a layered topology, and so mean nothing beside a network file.
TOPOLOGY_OPTIONS = ("hidden_layers", "activation", "recurrent", "bias")


class CmaEs:
    """CMA-ES (the cma library) on a fixed topology: layers from options or a network file.

    Options: see :attr:`options`; a bad one raises a :class:`SettingError` naming it."""

    options = OptionTable(
        OWNER,
        (
            Option(
                "hidden_layers", [],
                "widths of the hidden layers, inputs side first; [] connects the inputs to "
                "the outputs directly (XOR needs a hidden layer, e.g. [2])",
                source="ours: the smallest search space",
            ),
            Option(
                "activation", "neat_sigmoid", "activation of hidden and output nodes",
                source="ours: the sigmoid of the NEAT paper, as rwg", choices=tuple(NAMES),
            ),
            Option(
                "recurrent", None,
                "recurrent topology (each hidden layer, or the output layer when there is "
                "none, fully connected to itself); none: recurrent exactly when the task "
                "needs memory",
                source="ours", kind=bool,
            ),
            Option(
                "bias", True, "a bias node (value 1) feeding every hidden and output node",
                source="common practice",
            ),
            Option(
                "network", None,
                "path of a network JSON file: its structure is kept, its enabled "
                "connections' weights are searched and start at the file's values "
                "(instead of hidden_layers, activation, recurrent and bias)",
                source="ours", kind=str,
            ),
            Option(
                "network_sha256", None,
                "SHA-256 of the network file, filled in from it: the configuration's hash, "
                "and so the run key, covers the file's content, and a stored run whose file "
                "has changed since is refused",
                source="ours", kind=str, digest_of="network",
            ),
            Option(
                "population_size", None,
                "samples per generation; none: cma's default 4 + floor(3 ln n) for n weights",
                source="from memory: Hansen & Ostermeier 2001, and the cma library's default "
                "(reference/SOURCES.md: hansen2001; CMA-ES)",
                kind=int,
                low=2,
            ),
            Option(
                "initial_step_size", 2.0,
                "cma's sigma0: the standard deviation of the first samples around the start",
                source="tuned: of 0.5, 1 and 2, 2 solved the most runs of xor-v2 with "
                "hidden_layers [2] and of the pole tasks (20 runs each; reference/README.md, CMA-ES)",
                above=0.0,
            ),
            Option(
                "initial_spread", 0.0,
                "the start point is the template's weights (0, or the network file's) plus "
                "uniform noise in [-spread, +spread] drawn from the run's seed; 0: no noise",
                source="ours", low=0.0,
            ),
            Option(
                "restart", True,
                "start a new strategy when one of cma's termination criteria holds",
                source="common practice",
            ),
            Option(
                "restart_population_factor", 2.0,
                "each restart multiplies the population by this (1: restarts of the same size)",
                source="from memory: Auger & Hansen 2005 double it "
                "(reference/SOURCES.md: auger2005b; CMA-ES)",
                low=1.0,
            ),
        ),
    )  # fmt: skip

    def __init__(self, **options: Any) -> None:
        values = self.options.resolve(options)
        values["hidden_layers"] = _layer_widths(values["hidden_layers"])
        self.values = values
        self.file_network: Network | None = None
        if values["network"] is not None:
            clash = [name for name in TOPOLOGY_OPTIONS if name in options]
            if clash:
                raise SettingError(
                    f"{OWNER}: option {clash[0]!r} cannot be given with 'network' "
                    "(the network file fixes the topology)"
                )
            self.file_network = _read_network(values["network"])
            if from_network(self.file_network).n_weights == 0:
                raise SettingError(
                    f"{OWNER}: option 'network': {values['network']} has no enabled "
                    "connection whose weight could be searched"
                )

    def start(self, problem: Problem, seed: int) -> None:
        """Build the topology for ``problem`` and the first strategy."""
        self.template = self._template(problem)
        self.rng = np.random.default_rng(seed)
        self.restarts = 0
        self.batch: list[np.ndarray] = []
        self.generation_best = -math.inf
        self.es = self._strategy(self.values["population_size"])
        self.first_population: int = self.es.popsize  # cma's default when none was given

    def _template(self, problem: Problem) -> WeightTemplate:
        if self.file_network is not None:
            where = f"{OWNER}: network file {self.values['network']}"
            check(self.file_network, problem.inputs, problem.outputs, where)
            return from_network(self.file_network)
        recurrent = self.values["recurrent"]
        return layered(
            problem.inputs,
            problem.outputs,
            self.values["hidden_layers"],
            problem.needs_memory if recurrent is None else recurrent,
            self.values["activation"],
            self.values["bias"],
        )

    def _strategy(self, population: int | None) -> cma.CMAEvolutionStrategy:
        """A new strategy from the start point (with this run's noise) and ``population``
        (None: cma's default)."""
        import cma  # on use: see the imports at the top

        spread = self.values["initial_spread"]
        x0 = self.template.start + self.rng.uniform(-spread, spread, self.template.n_weights)
        rng = self.rng
        options: dict[str, Any] = {
            "randn": lambda rows, cols: rng.standard_normal((rows, cols)),
            "seed": math.nan,  # leave numpy's global generator alone
            "verbose": -9,  # no output, no files
            "verb_disp": 0,
            "verb_log": 0,
        }
        if population is not None:
            options["popsize"] = population
        return cma.CMAEvolutionStrategy(x0, self.values["initial_step_size"], options)

    def settings(self) -> dict[str, object]:
        """The effective configuration: ``population_size`` as started (cma's default
        computed), ``recurrent`` as decided for the task (or the file's mode); with a
        network file also its SHA-256 (``network_sha256``, None without one)."""
        return {
            **self.values,
            "population_size": self.first_population,
            "recurrent": self.template.base.mode == "recurrent",
        }

    def ask(self) -> list[Network]:
        """cma's next population as networks (after a restart, when one was due)."""
        if self.values["restart"] and self.es.stop():
            self.restarts += 1
            factor = self.values["restart_population_factor"] ** self.restarts
            self.es = self._strategy(round(self.first_population * factor))
        self.batch = self.es.ask()
        return [self.template.network(w) for w in self.batch]

    def tell(self, evaluations: Sequence[Evaluation]) -> None:
        """Pass the fitnesses of the last population to cma (negated); a prefix cut by the
        budget only updates the generation's best."""
        fitness = [e.fitness for e in evaluations]
        if len(fitness) > len(self.batch):
            raise ValueError(f"tell() got {len(fitness)} results for {len(self.batch)} networks")
        self.generation_best = max(fitness)
        if len(fitness) == len(self.batch):
            self.es.tell(self.batch, [-f for f in fitness])

    def stats(self) -> dict[str, float]:
        """Step size ``sigma``, ``condition_number`` of the covariance (largest over smallest
        eigenvalue, as cma computes it), ``generation_best`` fitness, the ``population_size``
        of the current strategy and the ``restarts`` made so far."""
        return {
            "sigma": float(self.es.sigma),
            "condition_number": float(self.es.sm.condition_number),
            "generation_best": float(self.generation_best),
            "population_size": float(self.es.popsize),
            "restarts": float(self.restarts),
        }


def _layer_widths(value: list[Any]) -> list[int]:
    """``hidden_layers`` checked: whole numbers of at least 1."""
    for width in value:
        if isinstance(width, bool) or not isinstance(width, int) or width < 1:
            raise SettingError(
                f"{OWNER}: option 'hidden_layers' must be a list of whole numbers >= 1, "
                f"got {value!r}"
            )
    return list(value)


def _read_network(path: str) -> Network:
    """The network in file ``path`` (:meth:`Network.from_file`: UTF-8, at most 64 MiB); a
    :class:`SettingError` naming the option and the file when it cannot be read or is not a
    valid network."""
    try:
        return Network.from_file(path)
    except NeuroyardError as exc:
        raise SettingError(f"{OWNER}: option 'network': {exc}") from None
