"""Activation functions of the network format.

Each activation has a name (used in the JSON form), a small integer code (used by the
compiled kernels) and one definition, written twice: once for numba (``apply``) and once
in plain Python (``reference``, used by tests). Both use the same branch structure so they
agree to rounding.

| name          | f(x)                                   |
|---------------|----------------------------------------|
| sigmoid       | 1 / (1 + e^(-x))                       |
| neat_sigmoid  | 1 / (1 + e^(-4.9 x))  (Stanley & Miikkulainen 2002, "steepened sigmoid") |
| tanh          | tanh(x)                                |
| relu          | max(0, x)                              |
| identity      | x                                      |
| gauss         | e^(-x^2)                               |
| sin           | sin(x)                                 |
| abs           | abs(x)                                 |
| step          | 1 if x > 0 else 0                      |

The docstring of :class:`~neuroyard.core.network.Network` repeats this table for readers of
the public API; ``tests/test_network_format.py`` holds the two to the same names and formulas.
"""

import math

import numba

NAMES: tuple[str, ...] = (
    "sigmoid",
    "neat_sigmoid",
    "tanh",
    "relu",
    "identity",
    "gauss",
    "sin",
    "abs",
    "step",
)
CODES: dict[str, int] = {name: code for code, name in enumerate(NAMES)}

NEAT_SIGMOID_SLOPE = 4.9  # Stanley & Miikkulainen 2002, sec. 4.1


def _logistic(z: float) -> float:
    # Split by sign so exp never overflows (Python raises OverflowError on exp(>709)).
    if z >= 0.0:
        return 1.0 / (1.0 + math.exp(-z))
    e = math.exp(z)
    return e / (1.0 + e)


def reference(code: int, x: float) -> float:
    """Plain-Python activation, the specification the kernels are tested against."""
    if code == 0:
        return _logistic(x)
    if code == 1:
        return _logistic(NEAT_SIGMOID_SLOPE * x)
    if code == 2:
        return math.tanh(x)
    if code == 3:
        return x if x > 0.0 else 0.0
    if code == 4:
        return x
    if code == 5:
        return math.exp(-x * x)
    if code == 6:
        return math.sin(x)
    if code == 7:
        return abs(x)
    if code == 8:
        return 1.0 if x > 0.0 else 0.0
    raise ValueError(f"unknown activation code {code}")


_logistic_jit = numba.njit(cache=True, inline="always")(_logistic)


@numba.njit(cache=True)
def apply(code: int, x: float) -> float:
    """Compiled activation; same definitions as :func:`reference`."""
    if code == 0:
        return _logistic_jit(x)
    if code == 1:
        return _logistic_jit(NEAT_SIGMOID_SLOPE * x)
    if code == 2:
        return math.tanh(x)
    if code == 3:
        return x if x > 0.0 else 0.0
    if code == 4:
        return x
    if code == 5:
        return math.exp(-x * x)
    if code == 6:
        return math.sin(x)
    if code == 7:
        return abs(x)
    return 1.0 if x > 0.0 else 0.0
