#!/usr/bin/env bash
# The backtests behind docs/validity.md: acquest's predicted gains against gains realised by
# buying the held-back rows and features for real, on the open datasets in ../shared/data.
# Writes one JSON report per case to the folder given (default validity-out) and prints each
# case's summary; takes about 5 minutes on 2 cores.
# Usage: bash tests/validity/run.sh [OUT]
set -euo pipefail
cd "$(dirname "$0")/../.."
default_out=validity-out section=Targets until=Methods
source tests/validity/cases.sh

run adult-sex "${adult[@]}" --pilot 0.2 --protected sex --hold-group Female
run adult-race "${adult[@]}" --pilot 0.2 --protected race --groups 'White=White;Black=Black;other=*' --hold-group Black
run german-sex "${german[@]}" --pilot 0.4 --protected personal --groups 'female=A92,A95;male=*' --hold-group female
run german-age "${german[@]}" --pilot 0.4 --protected age --groups 'young=<=25;older=>25' --hold-group young
run student-sex "${student[@]}" --pilot 0.4 --hold-group M
