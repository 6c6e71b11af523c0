"""Evaluation: fit a characteristic's chart, find its signals and assess the scheme; frozen result types.

evaluate.py runs one characteristic in two steps, `fit_characteristic` (chart, limits, signals, capability; no
run-length engine) and `assess` (performance and the extra checks), `evaluate` being both; options.py holds the
evaluation's options and how settings become them; checks.py the extra checks (estimated limits, data shape,
requirements); carried.py limits carried from an earlier output as typed parameters; results.py (`Fitted`,
`Assessment`, `CharacteristicResult` made of both) and summary.py the results handed upwards.
"""
