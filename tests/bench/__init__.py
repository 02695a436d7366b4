"""Benchmarks for `make bench`: every hot path as a ratio to a floor measured in the same run.

Run with `.venv/bin/python -m tests.bench.run` (see run.py for options). Nothing here is a
test: there is no test_*.py file in this folder and tests/pytest.ini does not recurse into
it, so `make test` neither collects nor imports these modules.
"""
