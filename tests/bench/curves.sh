#!/usr/bin/env bash
# Benchmark: the learning-curve schedule on Adult train (adult.data), logistic regression:
# stratified 80/20 split per repeat, 5 repeats, nested sizes 500·√2^k up to all training rows
# (13 sizes, 65 fits). Prints wall time, peak memory and fits per second; with python3 and
# scikit-learn present it also times the same schedule written the usual way in Python
# (tests/bench/curves_reference.py) and prints the ratio. Target: under 10 s and 1 GiB.
# Usage: bash tests/bench/curves.sh
set -euo pipefail
cd "$(dirname "$0")/../.."
data=../shared/data/adult/adult.data
[ -f "$data" ] || { echo "skipped: $data is absent"; exit 0; }
cargo build --release --quiet
columns=age,workclass,fnlwgt,education,education-num,marital-status,occupation,relationship,race,sex,capital-gain,capital-loss,hours-per-week,native-country,income
out=$(mktemp -d)
echo "machine: $(nproc) cores"
/usr/bin/time -f "%e %M" -o "$out/time" ./target/release/acquest curves --data "$data" --no-header \
  --columns "$columns" --target income --favourable '>50K' --protected sex --repeats 5 \
  --test-fraction 0.2 --smallest 500 --quiet --json "$out/curves.json" > /dev/null
read -r wall kb < "$out/time"
fits=$(python3 -c "import json,sys; s=json.load(open('$out/curves.json'))['schedule']; print(len(s['sizes'])*s['repeats'])")
awk -v w="$wall" -v k="$kb" -v f="$fits" 'BEGIN {
  printf "acquest: %d fits in %.2f s (%.1f fits/s; %.2f of the 10 s target), peak memory %.0f MiB\n",
    f, w, f / w, w / 10, k / 1024 }'
if python3 -c "import sklearn, pandas" 2>/dev/null; then
  /usr/bin/time -f "%e %M" -o "$out/ptime" python3 tests/bench/curves_reference.py "$data" > "$out/py.txt"
  read -r pwall pkb < "$out/ptime"
  awk -v w="$wall" -v p="$pwall" -v k="$pkb" 'BEGIN {
    printf "python (pandas + scikit-learn): %.2f s, peak memory %.0f MiB; acquest is %.1fx faster\n",
      p, k / 1024, p / w }'
fi
rm -rf "$out"
