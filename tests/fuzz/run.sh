#!/usr/bin/env bash
# The full fuzzing run: ACQUEST_FUZZ_INPUTS inputs per parser (default 1,000,000) of generated
# and mutated data files (CSV, Parquet), cost sheets, project files, --groups, --favourable and
# --delimiter values, each of which must end in a result or a named error. Prints each parser's
# count, panics or hangs, and time. An input that panics is kept under the system's temporary
# folder (acquest-fuzz-crashes); copy it to tests/fuzz/crashes to make it a regression test.
# The test suite runs the same harness with 300 inputs per parser.
set -euo pipefail
cd "$(dirname "$0")/../.."
export ACQUEST_FUZZ_INPUTS="${ACQUEST_FUZZ_INPUTS:-1000000}"
cargo test --release --test fuzz every_parser -- --nocapture
