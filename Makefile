# mettle: the two set-up commands are `make demo` and `make test`.
# Each installs what is missing (OpenBLAS via apt-get), then builds and runs.
# Build products go to a cache outside the clone so that rebuilds reuse work.

CARGO_TARGET_DIR ?= $(HOME)/.cache/mettle/target
export CARGO_TARGET_DIR
# Parallelism comes from training candidates on separate threads.
export OPENBLAS_NUM_THREADS ?= 1

BIN  := $(CARGO_TARGET_DIR)/release/mettle
DEMO := out/demo
SUDO := $(shell [ "$$(id -u)" = 0 ] || echo sudo)

.PHONY: all deps build demo test lint fmt bench bench-engine clean-demo

all: build

deps:
	@if ! dpkg -s libopenblas-dev >/dev/null 2>&1; then \
	  echo "== installing libopenblas-dev (OpenBLAS, the linear-algebra library mettle links) with apt-get"; \
	  $(SUDO) apt-get update -qq && DEBIAN_FRONTEND=noninteractive $(SUDO) apt-get install -y -qq libopenblas-dev pkg-config; \
	fi
	@command -v cargo >/dev/null || { echo "cargo not found: install the Rust toolchain (rustup) first"; exit 1; }

build: deps
	@echo "== building mettle (release; first build takes several minutes, target dir $(CARGO_TARGET_DIR))"
	cargo build --release --locked

test: deps
	@echo "== running the test suite (release build)"
	cargo test --release --locked

lint: deps
	cargo fmt --all -- --check
	cargo clippy --release --locked --all-targets -- -D warnings

fmt:
	cargo fmt --all

bench: build
	cargo run --release --locked --example uci_benchmark -- --markdown docs/benchmark-table.md

# speed and memory targets of the engine (training time, peak memory, prediction rate)
bench-engine: deps
	cargo bench --locked --bench engine_targets -- ../shared/datasets/uci

demo: build
	@mkdir -p $(DEMO)
	@echo "== 1. generating the invented Fellhaven demo data into $(DEMO)/ (not test results)"
	$(BIN) demo-data --out $(DEMO)
	@echo "== 2. training a committee for UTS on the invented weld records"
	$(BIN) train --data $(DEMO)/fellhaven_welds.csv --target uts_mpa \
	  --inputs c_wt,si_wt,mn_wt,ni_wt,cr_wt,mo_wt,cu_wt,co_wt,ti_ppm,b_ppm,o_ppm,n_ppm,heat_input_kj_mm,interpass_temp_c,pwht_temp_c \
	  --hidden 1..6 --restarts 2 --seed 1 --out $(DEMO)/uts_model.json
	@echo "== 3. estimating UTS, with error bars and domain verdicts, for new welds"
	$(BIN) predict --model $(DEMO)/uts_model.json --input $(DEMO)/fellhaven_new_welds.csv
	@echo "== 4. checking the model against the generator's noise-free truth for those welds"
	$(BIN) evaluate --model $(DEMO)/uts_model.json --data $(DEMO)/fellhaven_new_welds_truth.csv
	@echo "== 5. the model card: noise level beside the replicate scatter, committee, input relevance"
	$(BIN) explain --model $(DEMO)/uts_model.json
	@echo "== 6. a self-contained HTML report with every chart"
	$(BIN) report --model $(DEMO)/uts_model.json --training-data $(DEMO)/fellhaven_welds.csv \
	  --data $(DEMO)/fellhaven_new_welds_truth.csv --out $(DEMO)/uts_report.html
	@echo "== outputs are in $(DEMO)/"

clean-demo:
	rm -rf $(DEMO)
