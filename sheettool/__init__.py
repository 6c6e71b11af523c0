"""sheettool: control limits, signals, capability and run-length performance for measurement workbooks."""

from importlib.metadata import PackageNotFoundError, version

try:
    __version__ = version("sheettool")
except PackageNotFoundError:  # running from a source tree that is not installed
    __version__ = "0.0.0+source"

TOOL_NAME = "sheettool"
