#!/usr/bin/env bash
# Benchmark: `acquest baseline` on Adult (train file), 10 repeats, logistic regression.
# Prints wall time and peak memory, and their ratio to the targets (10 s, 1 GiB on 2 cores).
# Usage: bash tests/bench/baseline.sh [runs]   (run from anywhere; builds the release binary)
set -euo pipefail
cd "$(dirname "$0")/../.."
runs=${1:-3}
data=../shared/data/adult/adult.data
[ -f "$data" ] || { echo "skipped: $data is absent"; exit 0; }
cargo build --release --quiet
columns=age,workclass,fnlwgt,education,education-num,marital-status,occupation,relationship,race,sex,capital-gain,capital-loss,hours-per-week,native-country,income
echo "machine: $(nproc) cores; runs: $runs"
for i in $(seq "$runs"); do
  /usr/bin/time -f "%e %M" -o /tmp/acquest-bench.$$ ./target/release/acquest baseline \
    --data "$data" --no-header --columns "$columns" --target income --favourable '>50K' \
    --protected sex --repeats 10 --quiet --json /tmp/acquest-bench.$$.json > /dev/null
  read -r wall kb < /tmp/acquest-bench.$$
  awk -v w="$wall" -v k="$kb" -v i="$i" 'BEGIN {
    printf "run %d: wall %.2f s (%.2f of the 10 s target), peak memory %.0f MiB (%.3f of 1 GiB)\n",
      i, w, w / 10, k / 1024, k / 1048576 }'
done
rm -f /tmp/acquest-bench.$$ /tmp/acquest-bench.$$.json
