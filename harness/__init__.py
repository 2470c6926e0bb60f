"""neuroyard: benchmark tasks and an honest validation harness for neuroevolution."""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("neuroyard")
except PackageNotFoundError:  # running from a source tree that was never installed
    __version__ = "0+unknown"
