# The open datasets and flags shared by tests/validity/run.sh and growth.sh (sourced by both,
# after they cd to the repository's top): the binary, the data folder, the column names of the
# files without a header, and the flags every case runs with. OUT is the folder written to.
out=${1:-$default_out}
mkdir -p "$out"
# ACQUEST=path runs another build (used to record the figures before an estimator change).
if [ -z "${ACQUEST:-}" ]; then cargo build --release --quiet; fi
bin=${ACQUEST:-./target/release/acquest}
shared=../shared/data
adult_columns=age,workclass,fnlwgt,education,education-num,marital-status,occupation,relationship,race,sex,capital-gain,capital-loss,hours-per-week,native-country,income
german_columns=status,duration,history,purpose,amount,savings,employment,rate,personal,debtors,residence,property,age,plans,housing,credits,job,liable,telephone,foreign,credit
common=(--rounds 5 --confidence 0.8 --fairness eod --quiet --no-project)
adult=("--data" "$shared/adult/adult.data" --no-header --columns "$adult_columns"
  --target income --favourable '>50K' --hold-rows 0.5 --hold-features occupation,relationship)
german=("--data" "$shared/german-credit/german.data" --no-header --columns "$german_columns"
  --target credit --favourable 1 --hold-rows 0.3 --hold-features status,history)
student=(--data "$shared/student-performance/student-por.csv" --target G3 --favourable '>=10'
  --exclude G2 --protected sex --hold-rows 0.3 --hold-features G1,failures)

# Runs one case: its name, then its flags; prints the lines of its terminal report from the
# heading matching $section up to the next heading matching $until.
run() {
  local name=$1; shift
  echo "== $name"
  "$bin" backtest "$@" "${common[@]}" --json "$out/$name.json" | sed -n "/^$section/,/^$until/p" | sed '$d'
}
