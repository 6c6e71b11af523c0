"""sheettool: control limits, signals, capability and run-length performance for measurement workbooks."""

__version__ = "0.2.0"  # the one place the version is written (pyproject.toml reads it); no metadata look-up at start-up

TOOL_NAME = "sheettool"
# The version of the --json contract: raised whenever a name or meaning in it changes (README "Changes" lists each).
JSON_VERSION = 2


def tool_json() -> dict[str, object]:
    """The program that wrote a --json document, and the version of the JSON contract it follows."""
    return {"name": TOOL_NAME, "version": __version__, "json_version": JSON_VERSION}
