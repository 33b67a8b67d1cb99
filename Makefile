# Two commands: `make demo` and `make test`. Both create .venv when it is missing
# and install tnarena with its built-in plugins (each plugin is its own distribution,
# found through the same entry points a third-party plugin uses).

PYTHON ?= $(shell command -v python3.11 || command -v python3)
VENV   ?= .venv
BIN     = $(VENV)/bin
PLUGINS = $(sort $(wildcard plugins/*/pyproject.toml))
STAMP   = $(VENV)/.tnarena-installed

.PHONY: demo test install bench clean

install: $(STAMP)

$(STAMP): pyproject.toml $(PLUGINS)
	@test -x $(BIN)/python || $(PYTHON) -m venv $(VENV)
	$(BIN)/python -m pip install --quiet --upgrade pip
	$(BIN)/python -m pip install --quiet -e '.[test]' $(foreach p,$(PLUGINS),-e $(dir $(p)))
	@touch $(STAMP)

demo: $(STAMP)
	@rm -f demo-output/demo.db demo-output/demo.db-wal demo-output/demo.db-shm
	$(BIN)/tnarena run studies/demo.toml --db demo-output/demo.db --report demo-output/report

test: $(STAMP)
	$(BIN)/python -m pytest -q

bench: $(STAMP)
	$(BIN)/python benchmarks/exact_scaling.py

clean:
	rm -rf $(VENV) .pytest_cache
