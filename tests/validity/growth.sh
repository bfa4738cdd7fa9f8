#!/usr/bin/env bash
# The narrowing check behind docs/validity.md ("A bigger pilot"): on the open datasets in
# ../shared/data, each held feature is appraised on a small pilot, which predicts its intervals
# at a pilot 2 or 4 times larger; the pilot is then grown for real (the same rows and more) and
# appraised again, and the widths are compared. Writes one JSON report per case to the folder
# given (default growth-out) and prints each case's check; takes about 6 minutes on 2 cores.
# Usage: bash tests/validity/growth.sh [OUT]
set -euo pipefail
cd "$(dirname "$0")/../.."
default_out=growth-out section='The narrowing check' until=Targets
source tests/validity/cases.sh

run adult-sex-5pc-x4 "${adult[@]}" --protected sex --pilot 0.05 --check-growth 4
run adult-sex-10pc-x2 "${adult[@]}" --protected sex --pilot 0.1 --check-growth 2
run adult-race-10pc-x2 "${adult[@]}" --protected race --groups 'White=White;Black=Black;other=*' --pilot 0.1 --check-growth 2
run german-sex-20pc-x2 "${german[@]}" --protected personal --groups 'female=A92,A95;male=*' --pilot 0.2 --check-growth 2
run student-sex-20pc-x2 "${student[@]}" --pilot 0.2 --check-growth 2
