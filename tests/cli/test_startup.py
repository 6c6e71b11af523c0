"""Start-up: what each command imports, and the scipy.special functions used in place of scipy.stats."""

import subprocess
import sys

import numpy as np
import pytest
from scipy import special, stats

HEAVY = ("numpy", "scipy", "openpyxl", "xlsxwriter")
_LOADED = """
import contextlib, io, sys
from sheettool.cli.main import main
with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
    try:
        main(sys.argv[1:])
    except SystemExit:
        pass
print(" ".join(sorted({name.split(".")[0] for name in sys.modules})))
"""


@pytest.mark.parametrize("argv", [["--version"], ["--help"], ["evaluate", "--help"], ["bogus"]])
def test_version_and_help_load_no_heavy_library(argv):
    done = subprocess.run([sys.executable, "-c", _LOADED, *argv], capture_output=True, text=True, check=True)
    loaded = set(done.stdout.split())
    assert "sheettool" in loaded
    assert not loaded & set(HEAVY), f"{argv} imported {sorted(loaded & set(HEAVY))}"


def test_special_functions_give_the_values_of_scipy_stats():
    # scipy.stats's normal and chi-square distributions call these very functions (scipy's own source), so the
    # values must agree exactly, bit for bit, including the tails and the infinities.
    rng = np.random.default_rng(16)
    x = np.concatenate([rng.normal(0.0, 4.0, 2000), rng.uniform(-40.0, 40.0, 2000), [0.0, np.inf, -np.inf]])
    q = np.concatenate([rng.uniform(0.0, 1.0, 2000), 10.0 ** -rng.uniform(0.0, 300.0, 2000), [0.0, 1.0]])
    assert np.array_equal(special.ndtr(x), stats.norm.cdf(x))
    assert np.array_equal(special.ndtr(-x), stats.norm.sf(x))
    assert np.array_equal(special.log_ndtr(x), stats.norm.logcdf(x))
    assert np.array_equal(special.log_ndtr(-x), stats.norm.logsf(x))
    assert np.array_equal(special.ndtri(q), stats.norm.ppf(q))
    assert np.array_equal(-special.ndtri(q), stats.norm.isf(q))
    t = np.abs(x[np.isfinite(x)]) * 10.0
    for dof in (1, 4, 24, 3.5, 1000):
        assert np.array_equal(special.chdtr(dof, t), stats.chi2.cdf(t, dof))
        assert np.array_equal(special.chdtrc(dof, t), stats.chi2.sf(t, dof))


def test_an_evaluation_loads_neither_scipy_stats_nor_scipy_signal(tmp_path):
    # Their import costs more than a small workbook's whole evaluation; the distributions come from
    # core/distributions.py and core/johnson.py (held to scipy.stats in tests/core/test_distributions.py).
    from sheettool.demo.scenario import BUNDLED

    argv = ["evaluate", str(BUNDLED), "-o", str(tmp_path / "out.xlsx"), "--quiet"]
    code = _LOADED.replace('print(" ".join(sorted({name.split(".")[0] for name in sys.modules})))',
                           'print(" ".join(sorted(sys.modules)))')
    done = subprocess.run([sys.executable, "-c", code, *argv], capture_output=True, text=True, check=True)
    loaded = set(done.stdout.split())
    assert "sheettool.core.data_shape" in loaded and (tmp_path / "out.xlsx").exists()
    assert not loaded & {"scipy.stats", "scipy.signal"}
