"""neuroyard harness: network format, compiled evaluation, evolver contract, runner, store, CLI."""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("neuroyard")
except PackageNotFoundError:  # running from a source tree that was never installed
    __version__ = "0+unknown"
