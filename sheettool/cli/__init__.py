"""The command line: argument parsing and exit codes only; the work is in sheettool.api."""
