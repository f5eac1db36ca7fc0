# Shortcuts for the commands in README.md and DEVELOPERS.md. PYTHON defaults to the project virtualenv.
PYTHON ?= $(if $(wildcard .venv/bin/python),.venv/bin/python,python3)

.PHONY: test lint bench bench-quick

test:
	$(PYTHON) -m pytest -n 2

lint:
	$(PYTHON) -m ruff check service tests benchmarks

# Every performance bar of DESIGN.md section 5 with its reference, as ratios (about 3 minutes; not a test).
bench:
	$(PYTHON) benchmarks/run_all.py

# The same, shortened: a smoke run of well under a minute.
bench-quick:
	$(PYTHON) benchmarks/run_all.py --quick
