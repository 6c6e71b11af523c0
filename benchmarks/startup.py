"""Start-up: how long a technician waits before sheettool does any work.

Times, each in a fresh process (best of REPEAT wall times; the machine may be busy with other work):
`sheettool --version`, `sheettool evaluate --help` and a plain evaluation of the demo workbook, each with the time
its imports took (`python -X importtime`, every import of the run, the heaviest packages named) and the heavy
libraries it loaded, so that a change making `--version` import numpy or scipy shows here.
Targets: `--version` and `evaluate --help` under 0.3 s. Children write and reuse compiled bytecode
(PYTHONDONTWRITEBYTECODE removed), as an installed sheettool does.

    PYTHONPATH=. python benchmarks/startup.py
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
import tempfile
import time
from pathlib import Path

REPEAT = 5
ENV = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}
DEMO = Path(__file__).resolve().parents[1] / "sheettool" / "demo" / "demo-measurements.xlsx"
HEAVY = ("numpy", "scipy.special", "scipy.optimize", "scipy.stats", "scipy.signal", "openpyxl", "xlsxwriter")
_LINE = re.compile(r"import time:\s+(\d+) \|\s+(\d+) \|( *)(\S+)")


def _best(argv: list[str]) -> float:
    """Best wall time of REPEAT runs of `python -m sheettool ARGV`, in seconds."""
    times = []
    for _ in range(REPEAT):
        start = time.perf_counter()
        subprocess.run([sys.executable, "-m", "sheettool", *argv], capture_output=True, check=True, env=ENV)
        times.append(time.perf_counter() - start)
    return min(times)


def _imports(argv: list[str]) -> tuple[float, list[tuple[str, float]]]:
    """Total import time of one run under -X importtime, and the top-level packages by their own total."""
    done = subprocess.run([sys.executable, "-X", "importtime", "-m", "sheettool", *argv], capture_output=True,
                          text=True, check=True, env=ENV)
    total, tops = 0.0, {}
    for line in done.stderr.splitlines():
        match = _LINE.match(line)
        if match is None:
            continue
        own, _, _, name = match.groups()
        total += int(own) / 1e6
        tops[name.split(".")[0]] = tops.get(name.split(".")[0], 0.0) + int(own) / 1e6
    return total, sorted(tops.items(), key=lambda item: -item[1])[:6]


def _heavy(argv: list[str]) -> list[str]:
    """The heavy libraries present after running the command in-process."""
    code = ("import contextlib, io, sys\nfrom sheettool.cli.main import main\n"
            "with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):\n"
            "    try:\n        main(sys.argv[1:])\n    except SystemExit:\n        pass\n"
            f"print(' '.join(m for m in {HEAVY!r} if m in sys.modules))")
    done = subprocess.run([sys.executable, "-c", code, *argv], capture_output=True, text=True, check=True, env=ENV)
    return done.stdout.split()


def main() -> None:
    """Print the start-up figures."""
    with tempfile.TemporaryDirectory() as folder:
        out = str(Path(folder) / "demo-evaluated.xlsx")
        evaluate = ["evaluate", str(DEMO), "-o", out, "--timestamp", "2026-12-01T08:00", "--quiet"]
        commands = (("sheettool --version", ["--version"]), ("sheettool evaluate --help", ["evaluate", "--help"]),
                    ("sheettool evaluate (demo, 3 sheets)", evaluate))
        for words, argv in commands:
            seconds = _best(argv)
            total, tops = _imports(argv)
            heavy = _heavy(argv)
            print(f"{words}: {seconds:.3f} s wall (best of {REPEAT}); imports {total:.3f} s "
                  f"({', '.join(f'{name} {s:.3f}' for name, s in tops)})")
            print(f"    heavy libraries loaded: {', '.join(heavy) or 'none'}")


if __name__ == "__main__":
    main()
