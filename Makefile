.DEFAULT_GOAL := help
.PHONY: help dev test lint fmt bench demo

help: ## list the targets
	@grep -E '^[a-z]+:.*## ' Makefile | sed 's/:.*## /\t/'

dev: ## build the native module in debug mode and install tracemill in editable mode
	MATURIN_PEP517_ARGS="--profile dev" python -m pip install -e . --no-build-isolation -q

test: ## Rust unit tests, then the Python suite (oracles, bad input, notebooks)
	cargo test && python -m pytest

lint: ## formatting and lints, Rust and Python
	cargo fmt --check
	cargo clippy --all-targets --features python -- -D warnings
	ruff check python tests

fmt: ## format Rust and Python
	cargo fmt
	ruff format python tests

bench: ## side-by-side benchmarks against general-purpose peers (release build first)
	python -m pip install -e . --no-build-isolation -q
	python -m pytest tests/bench -m bench -s

demo: ## run the demo on the built-in scenario
	python -m tracemill demo
