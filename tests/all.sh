#!/usr/bin/env bash
# Every test: the Rust suites, then the Python checks of the files the
# commands write (xarray opens every NetCDF file without a warning).
# Slow suites: cargo test --release -- --ignored (not run here).
set -euo pipefail
cd "$(dirname "$0")/.."
python3 -m pip install --quiet --disable-pip-version-check -r python/requirements-test.txt
cargo build --release
cargo test --release
python3 -m pytest -q python/tests
