# spikevar developer and user entry points. `make demo` and `make test` are the two set-up commands.
PYTHON ?= $(shell command -v python3.11 >/dev/null 2>&1 && echo python3.11 || echo python3)
VENV := .venv
PY := $(VENV)/bin/python
STAMP := $(VENV)/.spikevar-installed
CORES ?= 2
DEMO_COHORT := demo/cohort
DEMO_RESULTS := results/demo
SMK := $(PY) -m snakemake --cores $(CORES)
# the demo aligns trials on the flash (column time) and on the lick that follows it
DEMO_CONFIG := sessions=$(DEMO_COHORT)/sessions.tsv results=$(DEMO_RESULTS) alignments='[time, lick_time]'


.PHONY: demo test quick lint unit workflow-lint bench clean report-check readme-figures

$(STAMP): pyproject.toml
	$(PYTHON) -m venv $(VENV)
	$(PY) -m pip install --quiet --upgrade pip
	$(PY) -m pip install --quiet -e '.[dev]'
	touch $(STAMP)

## demo: create the environment, build the synthetic demo cohort, run the whole pipeline
demo: $(STAMP)
	$(PY) -m spikevar.synth.demo --out $(DEMO_COHORT)
	$(SMK) --config $(DEMO_CONFIG)
	$(SMK) --config $(DEMO_CONFIG) --report $(DEMO_RESULTS)/report.html
	@$(PY) -m spikevar.pipeline.where $(DEMO_RESULTS)

## report-check: open the demo's report in headless Chromium, keep a screenshot of its start page
report-check: $(STAMP)
	$(PY) tests/report_browser.py $(DEMO_RESULTS)

## readme-figures: the README's demo figures (small PNGs in docs/figures), after make demo
readme-figures: $(STAMP)
	$(PY) scripts/readme_figures.py $(DEMO_RESULTS) docs/figures

## test: lint the code and the workflow, then run the whole test suite
test: $(STAMP) lint workflow-lint unit

## quick: lint and every test that does not run Snakemake (about a minute)
quick: $(STAMP) lint
	$(PY) -m pytest -n $(CORES) -q -m "not workflow"

lint: $(STAMP)
	$(VENV)/bin/ruff check src tests scripts bench

workflow-lint: $(STAMP)
	$(PY) -m spikevar.synth.demo --out .lint-cohort --seed 1 >/dev/null
	$(PY) -m snakemake --lint --config sessions=.lint-cohort/sessions.tsv results=.lint-results
	$(PY) -m snakemake --lint --config sessions=.lint-cohort/sessions.tsv results=.lint-results \
		session_jobs=whole_session

unit: $(STAMP)
	$(PY) -m pytest -n $(CORES) -q

## bench: run the benchmarks (prints throughput; not part of the tests)
bench: $(STAMP)
	for b in bench/bench_*.py; do $(PY) $$b || exit 1; done

clean:
	rm -rf results .lint-cohort .lint-results .snakemake .pytest_cache
