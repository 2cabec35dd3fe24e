# mettle: the two set-up commands are `make demo` and `make test`.
# Each installs what is missing (a font for the charts, via apt-get), then builds and runs.
# Build products go to a cache outside the clone so that rebuilds reuse work.

CARGO_TARGET_DIR ?= $(HOME)/.cache/mettle/target
export CARGO_TARGET_DIR

BIN  := $(CARGO_TARGET_DIR)/release/mettle
DEMO := out/demo
SUDO := $(shell [ "$$(id -u)" = 0 ] || echo sudo)

# The Python package (python/, docs/python.md) is built into a virtual
# environment outside the clone, with the same Cargo target directory.
VENV ?= $(HOME)/.cache/mettle/venv
PY   := $(VENV)/bin/python
PY_PACKAGES := maturin pytest numpy pandas polars scikit-learn matplotlib

.PHONY: all deps browser build demo models test lint fmt bench bench-engine bench-scale bench-serve clean-demo python test-python python-tests

all: build

deps:
	@if ! dpkg -s fonts-dejavu-core >/dev/null 2>&1; then \
	  echo "== installing fonts-dejavu-core (the face the charts' PNG text is drawn with, --png) with apt-get"; \
	  $(SUDO) apt-get update -qq && DEBIAN_FRONTEND=noninteractive $(SUDO) apt-get install -y -qq fonts-dejavu-core; \
	fi
	@command -v cargo >/dev/null || { echo "cargo not found: install the Rust toolchain (rustup) first"; exit 1; }

# the browser tests drive Debian's chromium: tests/serve_browser.rs through chromium-driver,
# tests/browser.rs (the report and the charts) from its command line
browser:
	@if ! command -v chromium >/dev/null 2>&1 || ! command -v chromedriver >/dev/null 2>&1; then \
	  echo "== installing chromium and chromium-driver (Debian) for the browser tests with apt-get"; \
	  $(SUDO) apt-get update -qq && DEBIAN_FRONTEND=noninteractive $(SUDO) apt-get install -y -qq chromium chromium-driver; \
	fi

build: deps
	@echo "== building mettle (release; first build takes several minutes, target dir $(CARGO_TARGET_DIR))"
	cargo build --release --locked

# the Rust suite (unit, integration through the real binary, browser), then
# the Python interface's pytest suite against the binary the Rust suite built.
# The extension's first build compiles the dependency tree a second time,
# with the extension's features (about 12 minutes on the 2-core machine;
# later builds reuse it from the cache).
test: deps browser
	@echo "== running the test suite (release build)"
	cargo test --release --locked
	$(MAKE) --no-print-directory python-tests

# the Python interface's tests alone (python/tests), against the CLI of this tree
test-python: deps
	cargo build --release --locked
	$(MAKE) --no-print-directory python-tests

python-tests: python
	@echo "== the Python interface: pytest (python/tests) against $(BIN)"
	METTLE_BIN=$(BIN) $(PY) -m pytest -q python/tests

# a virtual environment with maturin, pytest, numpy, pandas, polars,
# scikit-learn and matplotlib from PyPI, and the mettle package built from
# python/ (PyO3 over the Rust library; maturin)
python: deps
	@if ! python3 -c "import ensurepip, venv" >/dev/null 2>&1; then \
	  echo "== installing python3-venv and python3-pip with apt-get"; \
	  $(SUDO) apt-get update -qq && DEBIAN_FRONTEND=noninteractive $(SUDO) apt-get install -y -qq python3-venv python3-pip; \
	fi
	@if [ ! -x $(PY) ]; then echo "== creating the virtual environment $(VENV)"; python3 -m venv $(VENV); fi
	@if [ ! -f $(VENV)/.mettle-packages ] || [ "$$(cat $(VENV)/.mettle-packages)" != "$(PY_PACKAGES)" ]; then \
	  echo "== installing $(PY_PACKAGES) into $(VENV) with pip"; \
	  $(PY) -m pip install -q --upgrade pip && $(PY) -m pip install -q $(PY_PACKAGES) && \
	  echo "$(PY_PACKAGES)" > $(VENV)/.mettle-packages; \
	fi
	@echo "== building and installing the mettle Python package (python/, release build)"
	PATH="$(VENV)/bin:$$PATH" $(PY) -m pip install -q --no-build-isolation --force-reinstall --no-deps ./python

lint: deps
	cargo fmt --all -- --check
	cargo clippy --release --locked --all-targets -- -D warnings

fmt:
	cargo fmt --all

bench: build
	cargo run --release --locked --example uci_benchmark -- --markdown docs/benchmark-table.md

# issue 28's speed targets (training, 10 000-row training, prediction per core, predict end
# to end on 1 000 000 rows), this tree's binary against a baseline binary in one run
# (benches/engine_targets.rs). The baseline is main at BASELINE_COMMIT, exported with
# git archive and built once in its own target directory under ~/.cache/mettle (about 10
# minutes the first time). About 10 minutes per run on the 2-core machine; not part of make test.
BASELINE_COMMIT ?= 4dbce5d
BASELINE_DIR    ?= $(HOME)/.cache/mettle/baseline-$(BASELINE_COMMIT)
BASELINE_BIN    := $(BASELINE_DIR)/target/release/mettle
BENCH_ROWS      ?= 1000000

$(BASELINE_BIN):
	@command -v /usr/bin/time >/dev/null || { echo "/usr/bin/time missing: apt-get install time"; exit 1; }
	@echo "== building the baseline mettle at $(BASELINE_COMMIT) in $(BASELINE_DIR)"
	rm -rf $(BASELINE_DIR)/src && mkdir -p $(BASELINE_DIR)/src
	git archive $(BASELINE_COMMIT) | tar -x -C $(BASELINE_DIR)/src
	cd $(BASELINE_DIR)/src && CARGO_TARGET_DIR=$(BASELINE_DIR)/target cargo build --release --locked --bin mettle

bench-engine: build $(BASELINE_BIN)
	cargo bench --locked --bench engine_targets -- --baseline $(BASELINE_BIN) --new $(BIN) \
	  --rows $(BENCH_ROWS) ../shared/datasets/uci

# growth of training time, memory and prediction rate with rows and inputs
# (synthetic data; about an hour on the 2-core machine; docs/benchmarks.md)
bench-scale: deps
	cargo bench --locked --bench scale -- --markdown out/bench-scale.md --svg out/bench-scale.svg

# the full load run of `mettle serve`: 32 clients, 2 000 requests of 100 rows (docs/serve.md)
bench-serve: deps
	cargo bench --locked --bench serve_load

demo: build
	@mkdir -p $(DEMO)
	@echo "== 1. the bundled INVENTED Fellhaven weld records (datasets/; fictional scenario, not test results)"
	@echo "==    checking the archive before trusting it: duplicates, replicate scatter, outliers"
	$(BIN) audit --data datasets/fellhaven_welds.csv --schema datasets/fellhaven_welds.toml
	@echo "== 2. QA engineer: yield, UTS, elongation and Charpy energy at -40 C for 8 new welds,"
	@echo "==    from the bundled model (models/fellhaven_welds.json), with error bars and domain verdicts"
	$(BIN) predict --model models/fellhaven_welds.json --input datasets/fellhaven_new_welds.csv
	@echo "==    and the chance that each meets UTS >= 620 MPa and 47 J at -40 C, with its 3 nearest training welds"
	$(BIN) predict --model models/fellhaven_welds.json --input datasets/fellhaven_new_welds.csv \
	  --require 'uts_mpa>=620' --require 'charpy_j>=47@test_temp_c=-40' --neighbours 3 --training-data datasets/fellhaven_welds.csv
	@echo "== 3. the same estimates checked against the generator's noise-free truth"
	$(BIN) evaluate --model models/fellhaven_welds.json --data datasets/fellhaven_new_welds_truth.csv
	@echo "== 4. researcher: retraining a UTS committee on the archive (a smaller search, for speed)"
	$(BIN) train --data datasets/fellhaven_welds.csv --target uts_mpa \
	  --inputs c_wt,si_wt,mn_wt,ni_wt,cr_wt,mo_wt,cu_wt,co_wt,ti_ppm,b_ppm,o_ppm,n_ppm,heat_input_kj_mm,interpass_temp_c,pwht_temp_c \
	  --hidden 1..6 --restarts 2 --seed 1 --out $(DEMO)/uts_model.json
	@echo "== 5. the model card: noise level beside the replicate scatter, committee, input relevance"
	$(BIN) explain --model $(DEMO)/uts_model.json
	@echo "== 6. a self-contained HTML report with every chart"
	$(BIN) report --model $(DEMO)/uts_model.json --training-data datasets/fellhaven_welds.csv \
	  --data datasets/fellhaven_new_welds_truth.csv --out $(DEMO)/uts_report.html
	@echo "== 7. alloy developer: rank the candidate welds by their chance of UTS >= 620 MPa and 47 J at -40 C,"
	@echo "==    with INVENTED prices and a CE(IIW) limit (datasets/fellhaven_costs.toml)"
	$(BIN) screen --model models/fellhaven_welds.json --input datasets/fellhaven_candidates.csv \
	  --require 'uts_mpa>=620' --require 'charpy_j>=47@test_temp_c=-40' --costs datasets/fellhaven_costs.toml
	@echo "== 8. design: search C, Mn, Ni, Mo for diverse in-domain candidates (cost-vs-probability chart)"
	$(BIN) design --model models/fellhaven_welds.json --base datasets/fellhaven_new_welds.csv \
	  --require 'uts_mpa>=620' --require 'charpy_j>=47@test_temp_c=-40' --costs datasets/fellhaven_costs.toml \
	  --vary c_wt=0.05:0.11 --vary mn_wt=0.9:1.7 --vary ni_wt=0.2:3.4 --vary mo_wt=0.02:0.45 \
	  --count 6 --svg $(DEMO)/design_front.svg
	@echo "== 9. UTS and toughness against nickel for the first new weld, with bands; the stretch outside the data is marked"
	$(BIN) sweep --model models/fellhaven_welds.json --vary ni_wt=0:3.5:15 --base datasets/fellhaven_new_welds.csv \
	  --out $(DEMO)/ni_sweep.csv --plot $(DEMO)/ni_sweep.svg
	@echo "== 10. Charpy transition curve of that weld (inside the training domain at every temperature): T80J, T100J and P(100 J at -50 C)"
	$(BIN) transition --model models/fellhaven_welds.json --temperature-input test_temp_c --target charpy_j \
	  --base datasets/fellhaven_new_welds.csv --from -80 --to 20 --energy 80,100 --require 100@-50 \
	  --plot $(DEMO)/transition.svg
	@echo "== outputs are in $(DEMO)/"

# Regenerate the bundled invented data and the bundled model (deterministic: same seeds,
# byte-identical files). Run after a change to the generator or to the model format;
# tests/bundled.rs fails when they are out of date.
models: build
	$(BIN) demo-data --out datasets/
	$(BIN) train --data datasets/fellhaven_welds.csv --schema datasets/fellhaven_welds.toml \
	  --seed 1 --quiet --out models/fellhaven_welds.json

clean-demo:
	rm -rf $(DEMO)
