#!/usr/bin/env bash
# The backtests behind docs/validity.md: acquest's predicted gains against gains realised by
# buying the held-back rows and features for real, on the open datasets in ../shared/data.
# Writes one JSON report per case to the folder given (default validity-out) and prints each
# case's summary; takes about 5 minutes on 2 cores.
# Usage: bash tests/validity/run.sh [OUT]
set -euo pipefail
cd "$(dirname "$0")/../.."
out=${1:-validity-out}
mkdir -p "$out"
# ACQUEST=path runs another build (used to record the figures before an estimator change).
if [ -z "${ACQUEST:-}" ]; then cargo build --release --quiet; fi
bin=${ACQUEST:-./target/release/acquest}
shared=../shared/data
adult_columns=age,workclass,fnlwgt,education,education-num,marital-status,occupation,relationship,race,sex,capital-gain,capital-loss,hours-per-week,native-country,income
german_columns=status,duration,history,purpose,amount,savings,employment,rate,personal,debtors,residence,property,age,plans,housing,credits,job,liable,telephone,foreign,credit
common=(--rounds 5 --confidence 0.8 --fairness eod --quiet --no-project)

run() {
  local name=$1; shift
  echo "== $name"
  "$bin" backtest "$@" "${common[@]}" --json "$out/$name.json" | sed -n '/^Targets/,/^Methods/p' | sed '$d'
}

adult=("--data" "$shared/adult/adult.data" --no-header --columns "$adult_columns"
  --target income --favourable '>50K' --hold-rows 0.5 --hold-features occupation,relationship --pilot 0.2)
run adult-sex "${adult[@]}" --protected sex --hold-group Female
run adult-race "${adult[@]}" --protected race --groups 'White=White;Black=Black;other=*' --hold-group Black

german=("--data" "$shared/german-credit/german.data" --no-header --columns "$german_columns"
  --target credit --favourable 1 --hold-rows 0.3 --hold-features status,history --pilot 0.4)
run german-sex "${german[@]}" --protected personal --groups 'female=A92,A95;male=*' --hold-group female
run german-age "${german[@]}" --protected age --groups 'young=<=25;older=>25' --hold-group young

run student-sex --data "$shared/student-performance/student-por.csv" --target G3 --favourable '>=10' \
  --exclude G2 --protected sex --hold-rows 0.3 --hold-features G1,failures --pilot 0.4 --hold-group M
