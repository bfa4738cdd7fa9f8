"""Markdown tables for docs/validity.md from the JSON reports written by tests/validity/run.sh.

Usage: python3 tests/validity/table.py OUT   (the folder run.sh wrote)
"""
import json
import sys
from pathlib import Path

CASES = ["adult-sex", "adult-race", "german-sex", "german-age", "student-sex"]


def fmt(x, digits=2):
    return "n/a" if x is None else f"{x:.{digits}f}"


def pct(x):
    return "n/a" if x is None else f"{x * 100:.0f}%"


def main(folder):
    folder = Path(folder)
    reports = {c: json.loads((folder / f"{c}.json").read_text()) for c in CASES if (folder / f"{c}.json").exists()}
    for quantity, title in [("accuracy", "Accuracy gain"), ("eod", "Equal-opportunity unfairness reduction")]:
        print(f"\n#### {title}\n")
        print("| case | method | MAE (pp) | RMSE net of noise (pp) | coverage (noise allowed) | interval score (pp) | mean width (pp) | signs right | detected | Spearman, distinct (all) | best named (or tied) |")
        print("|---|---|---|---|---|---|---|---|---|---|---|")
        for case, r in reports.items():
            s = next(s for s in r["summary"] if s["quantity"] == quantity)
            for m in s["methods"]:
                print(
                    f"| {case} | {m['method']} | {fmt(m['mean_absolute_error_pp'])} | {fmt(m['error_net_of_noise_pp'])} "
                    f"| {pct(m['coverage'])} ({pct(m['coverage_allowing_noise'])}) of {m['with_interval']} "
                    f"| {fmt(m.get('interval_score_pp'))} | {fmt(m.get('mean_width_pp'))} "
                    f"| {m['sign_correct']} of {m['significant']} | {m.get('detected', 0)} of {m['significant']} "
                    f"| {fmt(m['spearman_distinct'])} in {m['distinct_rounds']} rounds ({fmt(m['spearman_all'])}) "
                    f"| {m['best_named']} of {m['rounds_compared']} ({m['best_named_or_tied']}) |"
                )
    print("\n#### Mean over rounds, per option (percentage points)\n")
    print("| case | option | accuracy: acquest | last anchor | realised | EOD reduction: acquest | last anchor | realised |")
    print("|---|---|---|---|---|---|---|---|")
    for case, r in reports.items():
        names = [o["option"] for o in r["rounds"][0]["options"]]
        for name in names:
            cells = []
            for quantity in ["accuracy", "eod"]:
                rows = [
                    next(q for q in o["quantities"] if q["quantity"] == quantity)
                    for rd in r["rounds"]
                    for o in rd["options"]
                    if o["option"] == name
                ]
                mean = lambda key: sum(q[key]["mean"] for q in rows) / len(rows) * 100
                cells += [f"{mean('acquest'):+.2f}", f"{mean('last_anchor'):+.2f}", f"{mean('realised'):+.2f}"]
            print(f"| {case} | {name} | " + " | ".join(cells) + " |")


if __name__ == "__main__":
    main(sys.argv[1] if len(sys.argv) > 1 else "validity-out")
