"""Evaluation: fit a characteristic's chart, find its signals and assess the scheme; frozen result types.

evaluate.py runs one characteristic end to end; options.py holds the evaluation's options and how settings
become them; checks.py the extra checks (estimated limits, data shape, requirements); carried.py limits carried
from an earlier output as typed parameters; results.py and summary.py the results handed upwards.
"""
