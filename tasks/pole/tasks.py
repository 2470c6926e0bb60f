"""The pole balancing tasks: one or two poles, with or without velocity inputs.

| id                  | poles | network sees                       | fitness                 |
|---------------------|-------|------------------------------------|-------------------------|
| pole1-markov-v1     | 1     | x, x_dot, theta, theta_dot         | steps balanced          |
| pole1-nonmarkov-v1  | 1     | x, theta                           | steps balanced          |
| pole2-markov-v1     | 2     | x, x_dot, th1, th1_dot, th2, th2_dot | steps balanced (DPV)  |
| pole2-nonmarkov-v1  | 2     | x, th1, th2                        | damped fitness (DPNV)   |

Every episode starts with all state variables 0 except the long pole at ``start_angle``.
Success: the network balances ``success_steps`` (100,000) steps from that start; for
DPNV it must also pass the 625-start generalization test (:mod:`.generalization`).

Defaults and their sources: two poles
(reference/SOURCES.md: wieland1991, gomez1999, stanley2002; constants; inputs; success),
one pole (reference/SOURCES.md: barto1983; single pole). Where the sources differ, the
choice is marked ``from memory`` and explained beside the setting below.
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any, ClassVar

import numpy as np

from neuroyard.core.compiled import CompiledNetwork
from neuroyard.core.errors import TaskError
from neuroyard.core.evolver import Evaluation
from neuroyard.core.network import Network
from neuroyard.core.options import Option
from neuroyard.reference.published import protocol as protocol_table

from ..base import Metric, SuccessCheck, Task, TaskSpec
from ..registry import register
from .episodes import FORCE_MAPPINGS, JIGGLE_WINDOW, EpisodeRules, balance, count_balanced
from .generalization import generalization_starts, protocol
from .physics import INTEGRATORS, WIELAND_1991, Physics, make_physics
from .replay import replay

NEAT_2002 = (
    "Stanley, K. O. & Miikkulainen, R. (2002). Evolving neural networks through augmenting "
    "topologies. Evolutionary Computation 10(2):99-127, sec. 4.4 "
    "(reference/SOURCES.md: stanley2002; DPV table; DPNV table)"
)
GRUAU_1996 = (
    "Gruau, F., Whitley, D. & Pyeatt, L. (1996). A comparison between cellular encoding and "
    "direct encoding for genetic neural networks. Genetic Programming 1996 (damped fitness, "
    "625-start generalization test; "
    "reference/SOURCES.md: gruau1996; damped fitness; generalization test)"
)
BARTO_1983 = (
    "Barto, A. G., Sutton, R. S. & Anderson, C. W. (1983). Neuronlike adaptive elements that "
    "can solve difficult learning control problems. IEEE SMC 13(5) (single pole; "
    "reference/SOURCES.md: barto1983; single pole)"
)

# Published constants (values, sources and provenance in reference/figures/pole.toml).
_DAMPED = protocol_table("pole", "damped_fitness")
DAMPED_STEP_WEIGHT = _DAMPED["step_weight"]
DAMPED_JIGGLE_WEIGHT = _DAMPED["jiggle_weight"]
DAMPED_JIGGLE_NUMERATOR = _DAMPED["jiggle_numerator"]


def _option(table: str, name: str, help: str, unit: str = "", **rule: Any) -> Option:
    """A task setting whose default is published: value, source and provenance come from
    the protocol table ``table`` of ``reference/figures/pole.toml``."""
    values = protocol_table("pole", table)
    source = f"{values['source']} ({values['provenance']})"
    return Option(name, values[name], help, unit, source, **rule)


POSITIVE = {"above": 0.0}
COMMON_OPTIONS = (
    _option("task_defaults", "tau", "integration time step", "s", **POSITIVE),
    _option(
        "task_defaults", "integrator", "integration method of the equations of motion",
        choices=tuple(INTEGRATORS),
    ),
    # the highs of substeps and the steps are ours: a bound on one evaluation's work, far
    # above the published values (2 substeps, 100,000 steps)
    _option("task_defaults", "substeps", "integration steps per network action", low=1,
            high=1_000),
    _option(
        "task_defaults", "start_angle",
        "long pole angle at the start of every episode (must lie inside the failure angle)",
        "rad",
    ),
    _option("task_defaults", "track_limit", "half-length of the track", "m", **POSITIVE),
    _option(
        "task_defaults", "force_mapping", "how the network output becomes the force",
        choices=tuple(FORCE_MAPPINGS),
    ),
    _option("task_defaults", "max_force", "largest force on the cart", "N", **POSITIVE),
    _option("task_defaults", "cart_mass", "mass of the cart", "kg", **POSITIVE),
    _option("task_defaults", "gravity", "gravitational acceleration", "m/s^2", **POSITIVE),
    _option("task_defaults", "cart_friction", "friction coefficient of cart on track", low=0.0),
    _option("task_defaults", "pole_friction", "friction coefficient of each pole hinge", low=0.0),
    _option("task_defaults", "long_pole_mass", "mass of the long pole", "kg", **POSITIVE),
    _option(
        "task_defaults", "long_pole_half_length", "half-length of the long pole", "m", **POSITIVE
    ),
    _option("task_defaults", "scale_x", "divisor of the cart position input", "m", **POSITIVE),
    _option(
        "task_defaults", "scale_velocity", "divisor of the cart velocity input", "m/s", **POSITIVE
    ),
    _option("task_defaults", "scale_angle", "divisor of the pole angle inputs", "rad", **POSITIVE),
    _option(
        "task_defaults", "scale_angular_velocity_1",
        "divisor of the long pole angular velocity input", "rad/s", **POSITIVE,
    ),
    _option(
        "task_defaults", "episode_steps", "control steps of one evaluation episode (its cap)",
        low=1, high=10_000_000,
    ),
    _option(
        "task_defaults", "success_steps", "control steps the success test must balance", low=1,
        high=10_000_000,
    ),
)  # fmt: skip
TWO_POLE_OPTIONS = (
    _option("task_defaults_two_poles", "short_pole_mass", "mass of the short pole", "kg", **POSITIVE),
    _option(
        "task_defaults_two_poles", "short_pole_half_length", "half-length of the short pole",
        "m", **POSITIVE,
    ),
    _option(
        "task_defaults_two_poles", "scale_angular_velocity_2",
        "divisor of the short pole angular velocity input", "rad/s", **POSITIVE,
    ),
    _option(
        "task_defaults_two_poles", "failure_angle",
        "a pole further from upright than this ends the episode", "rad", **POSITIVE,
    ),
)  # fmt: skip
ONE_POLE_OPTIONS = (
    _option(
        "task_defaults_one_pole", "failure_angle",
        "the pole further from upright than this ends the episode", "rad", **POSITIVE,
    ),
)  # fmt: skip
DAMPED_OPTIONS = (
    _option(
        "damped_fitness", "episode_steps", "control steps of one evaluation episode (its cap)",
        low=1, high=10_000_000,
    ),
    Option(
        "damped_fitness", True, "fitness is the damped fitness instead of steps balanced",
        source=GRUAU_1996,
    ),
    Option(
        "generalization_test", True, "the success test also runs the 625-start test",
        source=GRUAU_1996,
    ),
)  # fmt: skip


GENERALIZATION = Metric(
    "generalization",
    "generalization score of the solution: of the 625 published starts, those from which it "
    "balances the test length (Gruau et al. 1996)",
    unit="starts of 625",
)


def _merged(*groups: tuple[Option, ...]) -> tuple[Option, ...]:
    """Options of several groups in order; a later option replaces one of the same name."""
    by_name: dict[str, Option] = {}
    for group in groups:
        for option in group:
            by_name[option.name] = option
    return tuple(by_name.values())


# What each state variable is, for the spec's list of inputs (see physics.py for the signs).
STATE_NAMES = (
    "x, cart position (m, + to the right)",
    "x_dot, cart velocity (m/s)",
    "theta_1, long pole angle from upright (rad, + leaning to +x)",
    "theta_dot_1, long pole angular velocity (rad/s)",
    "theta_2, short pole angle from upright (rad, + leaning to +x)",
    "theta_dot_2, short pole angular velocity (rad/s)",
)
SCALE_SETTINGS = (
    "scale_x",
    "scale_velocity",
    "scale_angle",
    "scale_angular_velocity_1",
    "scale_angle",
    "scale_angular_velocity_2",
)
OUTPUT_RULES = {
    "linear": (
        "force F = {f:g} * clip(2 * out - 1, -1, 1) N (out = 0.5: no force); an output "
        "above 1 or below 0 saturates, out = +inf gives +{f:g} N, -inf and NaN give "
        "-{f:g} N (NaN compares false), so every output maps to a finite force"
    ),
    "bang-bang": (
        "force F = +{f:g} N if out > 0.5 else -{f:g} N; NaN gives -{f:g} N (NaN compares false)"
    ),
}


class PoleBalancing(Task):
    """A cart-pole task; subclasses fix the number of poles and what the network sees."""

    n_poles: ClassVar[int]
    velocities: ClassVar[bool]
    budget: ClassVar[int] = 100_000  # default evaluation budget of the spec

    def __init__(self, seed: int = 0, /, **settings: Any) -> None:
        super().__init__(seed, **settings)
        self.physics = self._physics()
        self.rules = self._rules()
        self.start = np.zeros(2 + 2 * self.n_poles, dtype=np.float64)
        self.start[2] = self.settings["start_angle"]

    def check_settings(self) -> None:
        s = self.settings
        if not abs(s["start_angle"]) < s["failure_angle"]:
            raise TaskError(
                f"task {self.id}: setting 'start_angle' {s['start_angle']} must lie inside "
                f"the failure angle {s['failure_angle']}"
            )
        if s.get("damped_fitness", False) and s["start_angle"] == 0.0:
            raise TaskError(
                f"task {self.id}: the damped fitness needs a nonzero 'start_angle' "
                "(a cart at rest with upright poles would make the jiggle sum 0)"
            )

    def _physics(self) -> Physics:
        s = self.settings
        masses = [s["long_pole_mass"]]
        half_lengths = [s["long_pole_half_length"]]
        if self.n_poles == 2:
            masses.append(s["short_pole_mass"])
            half_lengths.append(s["short_pole_half_length"])
        return make_physics(
            masses=tuple(masses),
            half_lengths=tuple(half_lengths),
            cart_mass=s["cart_mass"],
            gravity=s["gravity"],
            cart_friction=s["cart_friction"],
            pole_friction=s["pole_friction"],
            tau=s["tau"],
            integrator=s["integrator"],
        )

    def _rules(self) -> EpisodeRules:
        s = self.settings
        index = [0, 1, 2, 3]
        scale = [s["scale_x"], s["scale_velocity"], s["scale_angle"], s["scale_angular_velocity_1"]]
        if self.n_poles == 2:
            index += [4, 5]
            scale += [s["scale_angle"], s["scale_angular_velocity_2"]]
        if not self.velocities:  # keep positions and angles (even state indices)
            scale = [d for k, d in zip(index, scale, strict=True) if k % 2 == 0]
            index = [k for k in index if k % 2 == 0]
        return EpisodeRules(
            obs_index=np.array(index, dtype=np.uint32),
            obs_scale=np.array(scale, dtype=np.float64),
            force_mapping=FORCE_MAPPINGS[s["force_mapping"]],
            max_force=s["max_force"],
            substeps=s["substeps"],
            track_limit=s["track_limit"],
            failure_angle=s["failure_angle"],
        )

    @property
    def damped(self) -> bool:
        return bool(self.settings.get("damped_fitness", False))

    def run(self, net: CompiledNetwork, steps: int, record: np.ndarray | None = None) -> int:
        """Steps balanced from the standard start, at most ``steps``; optionally record states."""
        if record is None:
            record = np.empty((0, self.start.shape[0]), dtype=np.float64)
        balanced, _ = balance(net, self.physics, self.rules, self.start, steps, record)
        return int(balanced)

    def evaluate(self, net: CompiledNetwork) -> Evaluation:
        """Fitness: steps balanced in one episode of ``episode_steps``, or the damped fitness."""
        cap = self.settings["episode_steps"]
        no_record = np.empty((0, self.start.shape[0]), dtype=np.float64)
        steps, jiggle = balance(net, self.physics, self.rules, self.start, cap, no_record)
        return Evaluation(self.episode_fitness(int(steps), float(jiggle)))

    def episode_fitness(self, steps: int, jiggle: float) -> float:
        """The fitness of an episode that balanced ``steps`` steps with jiggle sum
        ``jiggle`` (as :func:`~.episodes.balance` returns them): the steps balanced, or the
        damped fitness over ``episode_steps``; NaN when the damped formula has no value."""
        if not self.damped:
            return float(steps)
        if steps < JIGGLE_WINDOW:
            anti_wiggle = 0.0
        elif jiggle > 0.0:
            anti_wiggle = DAMPED_JIGGLE_NUMERATOR / jiggle
        else:  # a cart and pole exactly at rest for 100 steps: the formula has no value
            return math.nan
        cap = self.settings["episode_steps"]
        return DAMPED_STEP_WEIGHT * steps / cap + DAMPED_JIGGLE_WEIGHT * anti_wiggle

    def success_test(self, net: CompiledNetwork, evaluation: Evaluation) -> SuccessCheck:
        """Balance ``success_steps`` from the standard start (plus generalization for DPNV).

        When the evaluation episode already covered the horizon (undamped fitness and
        ``episode_steps >= success_steps``) its step count is reused and no episode is run.
        Episodes run here are counted in ``SuccessCheck.evaluations``.
        """
        horizon = self.settings["success_steps"]
        episodes = 0
        if not self.damped and self.settings["episode_steps"] >= horizon:
            balanced = min(int(evaluation.fitness), horizon)
        else:
            balanced = self.run(net, horizon)
            episodes += 1
        details: dict[str, Any] = {"balanced_steps": balanced}
        solved = balanced >= horizon
        if solved and self.settings.get("generalization_test", False):
            score = self.generalization_score(net)
            episodes += len(self.generalization_starts)
            details["generalization"] = score
            solved = score >= protocol().pass_count
        return SuccessCheck(solved=solved, evaluations=episodes, details=details)

    @property
    def generalization_starts(self) -> np.ndarray:
        return generalization_starts(self.n_poles)

    def generalization_score(self, net: CompiledNetwork) -> int:
        """Number of the 625 published starts from which ``net`` balances the test length."""
        steps = protocol().episode_steps
        starts = self.generalization_starts
        return int(count_balanced(net, self.physics, self.rules, starts, steps))

    def replay(self, network: Network, steps: int, out: Path) -> str:
        """Plot cart position and pole angles while ``network`` balances (PNG at ``out``)."""
        return replay(self, network, steps, out)

    def observations(self) -> tuple[str, ...]:
        """The inputs in input-node order, each with its divisor (see :meth:`_rules`)."""
        out = []
        for k, scale in zip(self.rules.obs_index, self.rules.obs_scale, strict=True):
            setting = SCALE_SETTINGS[k]
            out.append(f"{STATE_NAMES[k]} divided by {scale:.6g} (setting {setting})")
        return tuple(out)

    @property
    def spec(self) -> TaskSpec:
        n_inputs = int(self.rules.obs_index.shape[0])
        if self.damped:
            fitness = (
                f"damped fitness 0.1 t/{self.settings['episode_steps']} + 0.9 * 0.75 / "
                "(sum of |x|+|x_dot|+|th1|+|th1_dot| over the last 100 steps; 0 when t < 100), "
                "t = steps balanced (Gruau et al. 1996)"
            )
            fitness += (
                "; at least 0 with no upper bound; a cart and pole exactly at rest for the "
                "last 100 steps (jiggle sum 0) has no value and counts as the worst fitness"
            )
            max_fitness = None
        else:
            fitness = f"steps balanced, at most {self.settings['episode_steps']}"
            max_fitness = float(self.settings["episode_steps"])
        success = f"balances {self.settings['success_steps']} steps from the standard start"
        if self.settings.get("generalization_test", False):
            success += (
                f" and at least {protocol().pass_count} of the 625 generalization starts for "
                f"{protocol().episode_steps} steps"
            )
        sources = (WIELAND_1991, NEAT_2002) + ((GRUAU_1996,) if self.damped else ())
        if self.n_poles == 1:
            sources = (BARTO_1983,) + sources
        return TaskSpec(
            id=self.id,
            inputs=n_inputs,
            outputs=1,
            fitness=fitness,
            success=success,
            default_budget=self.budget,
            sources=sources,
            max_fitness=max_fitness,
            min_fitness=0.0,
            needs_memory=not self.velocities,
            settings=dict(self.settings),
            observations=self.observations(),
            actions=(
                "the force on the cart, held for the control step of "
                f"{self.settings['substeps']} x {self.settings['tau']:g} s",
            ),
            output_rule=OUTPUT_RULES[self.settings["force_mapping"]].format(
                f=self.settings["max_force"]
            ),
            metrics=(GENERALIZATION,) if self.settings.get("generalization_test", False) else (),
        )


@register
class SinglePoleMarkov(PoleBalancing):
    id = "pole1-markov-v1"
    n_poles = 1
    velocities = True
    options = _merged(COMMON_OPTIONS, ONE_POLE_OPTIONS)


@register
class SinglePoleNonMarkov(PoleBalancing):
    id = "pole1-nonmarkov-v1"
    n_poles = 1
    velocities = False
    options = _merged(COMMON_OPTIONS, ONE_POLE_OPTIONS)


@register
class DoublePoleMarkov(PoleBalancing):
    """DPV: Stanley & Miikkulainen 2002 sec. 4.4; success within 100,000 evaluations."""

    id = "pole2-markov-v1"
    n_poles = 2
    velocities = True
    options = _merged(COMMON_OPTIONS, TWO_POLE_OPTIONS)


@register
class DoublePoleNonMarkov(PoleBalancing):
    """DPNV: damped fitness over 1,000-step episodes and the 625-start generalization test."""

    id = "pole2-nonmarkov-v1"
    n_poles = 2
    velocities = False
    budget = 1_000_000
    options = _merged(COMMON_OPTIONS, TWO_POLE_OPTIONS, DAMPED_OPTIONS)
