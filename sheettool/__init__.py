"""sheettool: control limits, signals, capability and run-length performance for measurement workbooks."""

__version__ = "0.1.0"  # the one place the version is written (pyproject.toml reads it); no metadata look-up at start-up

TOOL_NAME = "sheettool"
