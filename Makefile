# Two commands get a newcomer going: `make demo` and `make test`.
PY ?= python3
VENV ?= .venv
BIN := $(VENV)/bin
DEMO_ARGS ?=
PYTEST_ARGS ?=

.PHONY: install test lint demo bench openapi clean

$(VENV)/.installed: pyproject.toml
	test -x $(BIN)/python || $(PY) -m venv $(VENV)
	$(BIN)/python -m pip install -q --upgrade pip
	$(BIN)/python -m pip install -q -e '.[test]'
	touch $@

install: $(VENV)/.installed

lint: install
	$(BIN)/ruff check app models tests bench migrations

test: lint
	$(BIN)/python -m pytest $(PYTEST_ARGS)

demo: install
	$(BIN)/shoalcast demo $(DEMO_ARGS)

# The API benchmark drives wrk (a C load generator; Debian package wrk): installed when missing.
bench: install
	command -v wrk >/dev/null 2>&1 || (apt-get update -qq && DEBIAN_FRONTEND=noninteractive apt-get install -y -qq wrk >/dev/null) || \
		echo "bench: could not install wrk (the api benchmark will fail)" >&2
	$(BIN)/python -m bench.run $(BENCH_ARGS)

openapi: install
	$(BIN)/shoalcast openapi > openapi.json

clean:
	rm -rf var build *.egg-info .pytest_cache .ruff_cache
