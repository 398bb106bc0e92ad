#!/usr/bin/env bash
# Every test: the README's Slurm array job (tests/cluster/array_job.sh, on the
# cluster .ci/run starts), the Rust suites, then the Python checks of the files
# the commands write (xarray opens every NetCDF file without a warning), then a
# short fuzzing pass of the input readers (tests/fuzz.sh; nightly + cargo-fuzz,
# installed from the registries if missing).
# Slow suites: cargo test --release -- --ignored (not run here).
set -euo pipefail
cd "$(dirname "$0")/.."
python3 -m pip install --quiet --disable-pip-version-check --root-user-action=ignore -r python/requirements-test.txt
# the Python front (pyproject.toml: maturin builds pyfront/ into the abi3
# wheel of the module `icefold`; the same wheel `pip install .` would build),
# installed here and, by python/tests/test_front.py, into a fresh venv
rm -rf target/wheels
python3 -m maturin build --release --quiet -o target/wheels
python3 -m pip install --quiet --disable-pip-version-check --root-user-action=ignore \
    --force-reinstall --no-deps target/wheels/icefold-*.whl
cargo build --release
# the README's Slurm array job and merge, on the cluster of tests/cluster/start.sh
# (skipped with the reason when none runs, except under CI=true as root)
bash tests/cluster/array_job.sh
cargo test --release
python3 -m pytest -q python/tests
# a short coverage-guided fuzzing pass of the input readers (15 s a target)
bash tests/fuzz.sh 15
