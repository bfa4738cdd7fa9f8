#!/usr/bin/env bash
# Benchmark: `acquest appraise` and `acquest plan` on Adult train with 3 feature options
# (occupation, relationship, education, each blanked outside a random 20% pilot) and 2 rows
# options (any, women), 5 repeats; `acquest plan --appraisal` on the saved appraisal at five
# budgets; and `acquest demo` end to end. Prints wall time and peak memory against the targets
# (appraise 60 s, plan 90 s, re-plan 1 s, demo 30 s, 1.5 GiB, on 2 cores).
# Usage: [KEEP=folder] bash tests/bench/appraise.sh
set -euo pipefail
cd "$(dirname "$0")/../.."
data=../shared/data/adult/adult.data
[ -f "$data" ] || { echo "skipped: $data is absent"; exit 0; }
cargo build --release --quiet
work=$(mktemp -d)
. tests/bench/adult-pilot.sh
columns=age,workclass,fnlwgt,education,education-num,marital-status,occupation,relationship,race,sex,capital-gain,capital-loss,hours-per-week,native-country,income
echo "machine: $(nproc) cores"
/usr/bin/time -f "%e %M" -o "$work/time" ./target/release/acquest appraise --data "$work/adult-pilot.csv" \
  --no-header --columns "$columns" --target income --favourable '>50K' --protected sex \
  --costs "$work/costs.csv" --repeats 5 --quiet --no-project --json "$work/appraise.json" > /dev/null
read -r wall kb < "$work/time"
awk -v w="$wall" -v k="$kb" 'BEGIN {
  printf "appraise: wall %.2f s (%.2f of the 60 s target), peak memory %.0f MiB (%.3f of 1.5 GiB)\n",
    w, w / 60, k / 1024, k / 1572864 }'
/usr/bin/time -f "%e %M" -o "$work/time" ./target/release/acquest plan --data "$work/adult-pilot.csv" \
  --no-header --columns "$columns" --target income --favourable '>50K' --protected sex \
  --costs "$work/costs.csv" --budget 40000 --repeats 5 --quiet --no-project --json "$work/plan.json" > /dev/null
read -r wall kb < "$work/time"
awk -v w="$wall" -v k="$kb" 'BEGIN {
  printf "plan:     wall %.2f s (%.2f of the 90 s target), peak memory %.0f MiB (%.3f of 1.5 GiB)\n",
    w, w / 90, k / 1024, k / 1572864 }'
# The same plan without the value of a bigger pilot: what the advice adds (target: at most 60 s
# on this file, 10 s on the demo).
plan_wall=$wall
/usr/bin/time -f "%e %M" -o "$work/time" ./target/release/acquest plan --data "$work/adult-pilot.csv" \
  --no-header --columns "$columns" --target income --favourable '>50K' --protected sex \
  --costs "$work/costs.csv" --budget 40000 --repeats 5 --quiet --no-project --no-pilot-advice \
  --json "$work/plan-no-advice.json" > /dev/null
read -r wall kb < "$work/time"
awk -v a="$plan_wall" -v w="$wall" 'BEGIN {
  printf "plan without pilot advice: wall %.2f s; the advice adds %.2f s (target 60 s)\n", w, a - w }'
# Re-planning on the saved appraisal at five budgets (target: each under 1 s).
for budget in 5000 10000 20000 40000 80000; do
  /usr/bin/time -f "%e %M" -o "$work/time" ./target/release/acquest plan --appraisal "$work/appraise.json" \
    --budget "$budget" --quiet --no-project --json "$work/replan.json" > /dev/null
  read -r wall kb < "$work/time"
  awk -v b="$budget" -v w="$wall" -v k="$kb" 'BEGIN {
    printf "re-plan at %6d: wall %.2f s (%.2f of the 1 s target), peak memory %.0f MiB\n", b, w, w, k / 1024 }'
done
/usr/bin/time -f "%e %M" -o "$work/time" ./target/release/acquest demo --out "$work/demo" --quiet > /dev/null
read -r wall kb < "$work/time"
awk -v w="$wall" -v k="$kb" 'BEGIN {
  printf "demo:     wall %.2f s (%.2f of the 30 s target), peak memory %.0f MiB (%.3f of 1.5 GiB)\n",
    w, w / 30, k / 1024, k / 1572864 }'
# KEEP=folder keeps the appraisal's JSON (docs/appraisal-checks.md reads its figures).
if [ -n "${KEEP:-}" ]; then mkdir -p "$KEEP" && cp "$work/appraise.json" "$work/plan.json" "$KEEP/"; fi
rm -rf "$work"
