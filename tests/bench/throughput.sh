#!/usr/bin/env bash
# Benchmark: trial throughput, side by side in one run (release build, this machine's cores):
#   1. the learning-curve schedule on Adult (80/20, 5 repeats, 13 sizes from 500: 65 fits),
#   2. `appraise` on Adult with 3 feature options (20% pilots) and 2 rows options, 5 repeats,
#   3. `plan` on the demo,
#   4. with BIG=1, `plan` on a 1,000,000-row, 40-column demo file, as CSV and as Parquet (drawn
#      by `acquest demo --rows 1000000 --extra-columns 30 --parquet` into a temporary folder,
#      never committed; about 4 minutes each).
# Prints wall time, models fitted, fits per second and peak memory against the targets.
# CPU is the share of one core used (200% is both cores busy). ACQUEST=path times another build.
# Usage: [BIG=1] [ACQUEST=path] bash tests/bench/throughput.sh
set -euo pipefail
cd "$(dirname "$0")/../.."
if [ -z "${ACQUEST:-}" ]; then cargo build --release --quiet; fi
bin=${ACQUEST:-$PWD/target/release/acquest}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
echo "machine: $(nproc) cores"
printf "%-34s %9s %7s %8s %9s %6s  %s\n" "run" "wall (s)" "fits" "fits/s" "peak MiB" "CPU" "target"

# Runs acquest with --timings; prints one row of the table.
row() {
  local name=$1 target=$2; shift 2
  /usr/bin/time -f "%e %M %P" -o "$work/time" "$bin" "$@" --quiet --timings > /dev/null 2> "$work/timings"
  read -r wall kb cpu < "$work/time"
  local fits
  fits=$(sed -n 's/.* \([0-9]*\) models fitted.*/\1/p' "$work/timings")
  awk -v n="$name" -v w="$wall" -v k="$kb" -v f="$fits" -v t="$target" -v c="$cpu" 'BEGIN {
    printf "%-34s %9.2f %7d %8.1f %9.0f %6s  %s\n", n, w, f, f / w, k / 1024, c, t }'
}

data=../shared/data/adult/adult.data
columns=age,workclass,fnlwgt,education,education-num,marital-status,occupation,relationship,race,sex,capital-gain,capital-loss,hours-per-week,native-country,income
if [ -f "$data" ]; then
  row "curves schedule, Adult" "under 5 s" curves --data "$data" --no-header --columns "$columns" \
    --target income --favourable '>50K' --protected sex --repeats 5 --test-fraction 0.2 \
    --smallest 500 --no-project
  . tests/bench/adult-pilot.sh
  adult=(--data "$work/adult-pilot.csv" --no-header --columns "$columns" --target income
    --favourable '>50K' --protected sex --costs "$work/costs.csv" --repeats 5 --no-project)
  row "appraise, Adult (3 + 2 options)" "-" appraise "${adult[@]}"
  row "plan, Adult (3 + 2 options)" "under 30 s" plan "${adult[@]}" --budget 40000
else
  echo "skipped the Adult runs: $data is absent"
fi

"$bin" demo --out "$work/demo" --no-run > /dev/null
(cd "$work/demo" && row "plan, demo" "-" plan)

if [ "${BIG:-0}" = 1 ]; then
  "$bin" demo --out "$work/big" --rows 1000000 --extra-columns 30 --parquet --no-run > /dev/null
  (cd "$work/big" && row "plan, 1,000,000 x 40 CSV" "3 min, 2 GiB" plan)
  (cd "$work/big" && row "plan, 1,000,000 x 40 Parquet" "3 min, 2 GiB" plan --data applications.parquet)
fi
