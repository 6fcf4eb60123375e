# Two commands for a fresh machine: `make demo` and `make test`.
PYTHON ?= python3
VENV := .venv
BIN := $(VENV)/bin

.PHONY: demo test bench clean

$(BIN)/.installed: pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --disable-pip-version-check -e '.[test,dask]'
	touch $@

demo: $(BIN)/.installed
	$(BIN)/riskcalc run scenarios/amberlow_levee/scenario.toml --out out/amberlow_levee --overwrite
	$(BIN)/riskcalc run scenarios/tarnhollow_dam/scenario.toml --out out/tarnhollow_dam --overwrite
	$(BIN)/riskcalc run scenarios/amberlow_alternatives/scenario.toml --out out/amberlow_alternatives --overwrite
	$(BIN)/riskcalc run scenarios/wrenstow_dam_fit/scenario.toml --out out/wrenstow_dam_fit --overwrite

test: $(BIN)/.installed
	$(BIN)/ruff check .
	$(BIN)/ruff format --check .
	$(BIN)/mypy
	$(BIN)/python -m pytest -q

bench: $(BIN)/.installed
	$(BIN)/python benchmarks/bench_hazard.py
	$(BIN)/python benchmarks/bench_chain.py
	$(BIN)/python benchmarks/bench_sensitivity.py
	$(BIN)/python benchmarks/bench_run.py

clean:
	rm -rf $(VENV) out
