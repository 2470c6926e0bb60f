"""neuroyard harness: ``core`` (network format, kernels, evolver contract) at the bottom of
the house; ``records``, ``execution``, ``reports`` and ``cli`` above the tasks and the
reference evolvers (see DEVELOPERS.md, Layers)."""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("neuroyard")
except PackageNotFoundError:  # running from a source tree that was never installed
    __version__ = "0+unknown"
