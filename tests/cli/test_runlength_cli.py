"""`sheettool runlength` and the performance part of `evaluate --json`."""

import pytest
from scipy import stats


def test_json_shape(run_cli):
    result = run_cli("runlength", "--chart", "xbar", "--n", "4", "--rules", "zones", "--shift", "0,1",
                     "--interval", "0.5", "--hours-per-month", "320", "--json")
    assert result.code == 0, result.err
    doc = result.json
    assert set(doc) >= {"scheme", "method", "results"}
    assert doc["scheme"]["chart"] == "xbar" and doc["scheme"]["rules"] == ["1/1>3", "2/3>2", "4/5>1", "8/8>0"]
    assert "Champ and Woodall 1987" in doc["method"]
    first, second = doc["results"]
    assert set(first) >= {"shift", "sigma_ratio", "arl", "sdrl", "percentiles", "steady_state_arl", "ats_hours"}
    assert set(first["percentiles"]) == {"5", "50", "95"}
    # Champ and Woodall (1987) in-control ARL 91.75 (recalled from memory); ATS = ARL * interval.
    assert first["arl"] == pytest.approx(91.75, abs=0.005)
    assert first["ats_hours"] == pytest.approx(0.5 * first["arl"])
    assert doc["false_alarms_per_month"] == pytest.approx(320 / (0.5 * first["arl"]))
    assert second["shift"] == 1.0 and second["arl"] < first["arl"]


def test_attribute_rates_or_shifts_in_standard_errors(run_cli):
    result = run_cli("runlength", "--chart", "c", "--c0", "4", "--rates", "4,9", "--json")
    assert result.code == 0, result.err
    rows = result.json["results"]
    # c chart 4 +/- 3*2: signals above 10 (scipy.stats.poisson as reference).
    assert rows[1]["rate"] == 9 and rows[1]["arl"] == pytest.approx(1 / stats.poisson.sf(10, 9), rel=1e-9)
    assert rows[0]["sigma_ratio"] is None and rows[0]["shift"] is None
    # --shift 2.5 moves the rate up by 2.5 standard errors, sqrt(4) = 2 each: 4 + 5 = 9, the same condition
    # (Poisson standard deviation sqrt(c), common practice).
    shifted = run_cli("runlength", "--chart", "c", "--c0", "4", "--shift", "2.5", "--json").json["results"][0]
    assert (shifted["shift"], shifted["rate"]) == (2.5, 9) and shifted["arl"] == pytest.approx(rows[1]["arl"])
    both = run_cli("runlength", "--chart", "c", "--c0", "4", "--rates", "9", "--shift", "1")
    assert both.code == 2 and "not both" in both.err


@pytest.mark.parametrize("chart, extra, words", [
    ("ewma", ["--weight", "0.05", "--limit-width", "2.615"], "Gauss-Legendre"),
    ("cusum", ["--reference", "0.5", "--decision-interval", "4"], "Brook and Evans"),
    ("individuals", ["--rules", "all"], "Monte Carlo"),
    ("np", ["--n", "50", "--p0", "0.1"], "binomial"),
    ("u", ["--n", "5", "--c0", "0.4"], "Poisson"),
    ("xbar-s", ["--n", "5"], "S chart"),
])
def test_every_chart_and_the_table(run_cli, chart, extra, words):
    result = run_cli("runlength", "--chart", chart, *extra)
    assert result.code == 0, result.err
    assert words in result.out and "ARL" in result.out


@pytest.mark.parametrize("args, words", [
    (["--rules", "7/3>2", "--n", "5"], "K must be"),
    (["--chart", "ewma", "--weight", "1.5"], "weight"),
    (["--chart", "ewma", "--weight", "0"], "weight"),
    (["--chart", "cusum", "--decision-interval", "-1"], "option --decision-interval: CUSUM decision interval"),
    (["--n", "5", "--shift", "0,abc"], "'abc' is not a number"),
    (["--n", "5", "--shift", "0,,1"], "empty entry"),
    (["--n", "5", "--shift", "1e400"], "finite"),
    (["--n", "5", "--sigma-ratio", "-1"], "positive"),
    (["--chart", "p", "--n", "50"], "p0"),
    (["--chart", "p", "--n", "50", "--p0", "1.5"], "p0"),
    (["--chart", "xbar"], "--n"),
    (["--chart", "individuals", "--n", "5"], "single readings"),
    (["--chart", "c", "--c0", "4", "--rates", "-1"], "rate"),
    (["--n", "5", "--rates", "0.1"], "--rates: for p, np, c and u only"),
])
def test_bad_parameters(run_cli, args, words):
    result = run_cli("runlength", *args)
    assert result.code == 2
    assert words in result.err and "Traceback" not in result.err
    assert len(result.err.strip().splitlines()) == 1


def test_evaluate_json_performance_keys(run_cli, demo_copy, tmp_path):
    result = run_cli("evaluate", demo_copy, "-o", tmp_path / "out.xlsx", "--rules", "zones", "--json")
    assert result.code == 0, result.err
    perf = result.json["characteristics"][0]["performance"]
    assert set(perf) >= {"method", "arl_in_control", "shifts", "false_alarms_per_month", "interval_hours"}
    assert [s["shift"] for s in perf["shifts"]] == [0.0, 0.5, 1.0, 1.5, 2.0, 3.0]
    assert all({"shift", "arl", "ats_hours"} <= set(s) for s in perf["shifts"])
    assert "R chart" in perf["method"]


def test_broken_pipe_is_quiet():
    # `sheettool runlength ... | head -c 10` with output far beyond a pipe buffer: no traceback, exit 0.
    import subprocess
    import sys
    from pathlib import Path

    shifts = ",".join(["3"] * 500)
    command = (f"'{sys.executable}' -m sheettool runlength --n 5 --shift {shifts} --json | head -c 10; "
               "exit ${PIPESTATUS[0]}")
    done = subprocess.run(["bash", "-c", command], capture_output=True, text=True, cwd=Path(__file__).parents[2])
    assert done.stdout == '{\n  "tool"' and "Traceback" not in done.stderr
    assert done.returncode == 0, done.stderr


def test_options_are_read_as_the_settings_of_that_name(run_cli):
    # --interval as evaluate reads it: "30 min" is half an hour (settings converter)
    base = ["runlength", "--chart", "ewma", "--hours-per-month", "320", "--shift", "0,1", "--json"]
    halves = run_cli(*base, "--interval", "30 min", "--weight", "0.1").json
    plain = run_cli(*base, "--interval", "0.5", "--weight", "0.1").json
    assert halves == plain and halves["scheme"]["interval_hours"] == 0.5 and halves["scheme"]["lambda"] == 0.1
    # ATS = ARL x interval (definition, common practice)
    assert halves["results"][1]["ats_hours"] == pytest.approx(0.5 * halves["results"][1]["arl"])
    bad = run_cli("runlength", "--chart", "cusum", "--reference", "-1")
    assert bad.code == 2 and "option --reference" in bad.err and "k must be zero or more" in bad.err
