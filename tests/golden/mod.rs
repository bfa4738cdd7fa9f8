//! Golden outputs: the JSON reports of fixed runs, committed beside this file and compared byte
//! for byte. A change that should move no number (a move of code, a renamed type) keeps them
//! all; after a change that is meant to move numbers, rewrite them with
//! `ACQUEST_BLESS=1 cargo test --release golden` and say in the commit why they moved.

use std::path::Path;

use super::{acquest, adult_with_pilots, plan_on_adult_pilots, shared};

/// Compares `produced` (a report just written) with the committed golden copy `name`, or
/// rewrites the copy under `ACQUEST_BLESS`.
fn check(name: &str, produced: &Path) {
    let golden = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/golden")
        .join(name);
    let bytes = std::fs::read(produced)
        .unwrap_or_else(|e| panic!("{} was not written: {e}", produced.display()));
    if std::env::var_os("ACQUEST_BLESS").is_some() {
        std::fs::write(&golden, &bytes).unwrap();
        return;
    }
    let kept = std::fs::read(&golden).unwrap_or_else(|e| {
        panic!(
            "{}: {e}; write it with ACQUEST_BLESS=1 cargo test --release golden",
            golden.display()
        )
    });
    if bytes != kept {
        let (a, b) = (
            String::from_utf8_lossy(&kept),
            String::from_utf8_lossy(&bytes),
        );
        let line = a
            .lines()
            .zip(b.lines())
            .position(|(x, y)| x != y)
            .unwrap_or(a.lines().count().min(b.lines().count()));
        panic!(
            "{name} differs from tests/golden/{name} from line {}:\n  golden:   {}\n  produced: {}",
            line + 1,
            a.lines().nth(line).unwrap_or("(end)"),
            b.lines().nth(line).unwrap_or("(end)")
        );
    }
}

/// Runs acquest in `dir` with `args` and fails with its standard error when it fails.
fn run_in(dir: &Path, args: &[&str]) {
    let output = acquest().current_dir(dir).args(args).output().unwrap();
    assert!(
        output.status.success(),
        "acquest {}: {}",
        args.join(" "),
        String::from_utf8_lossy(&output.stderr)
    );
}

/// The demo end to end (baseline, curves, plan with its appraisal), the demo's appraisal alone,
/// a plan under both floors and a backtest on the demo: every report type, on relative paths so
/// that the reports do not depend on where the test runs.
#[test]
fn golden_reports_of_the_demo() {
    let dir = tempfile::tempdir().unwrap();
    run_in(dir.path(), &["demo", "--out", "demo", "--quiet"]);
    let demo = dir.path().join("demo");
    for name in ["baseline.json", "curves.json", "report.json"] {
        check(&format!("demo-{name}"), &demo.join(name));
    }
    run_in(&demo, &["appraise", "--quiet", "--json", "appraise.json"]);
    check("demo-appraise.json", &demo.join("appraise.json"));
    run_in(
        &demo,
        &[
            "plan",
            "--keep-accuracy",
            "--no-adverse-impact",
            "--budget",
            "30000",
            "--quiet",
            "--json",
            "floors.json",
        ],
    );
    check("demo-plan-floors.json", &demo.join("floors.json"));
    run_in(
        &demo,
        &[
            "backtest",
            "--hold-rows",
            "0.4",
            "--hold-features",
            "test_score",
            "--hold-group",
            "declared",
            "--rounds",
            "2",
            "--repeats",
            "4",
            "--quiet",
            "--json",
            "backtest.json",
        ],
    );
    check("demo-backtest.json", &demo.join("backtest.json"));
}

/// The cost sheet of tests/bench/adult-pilot.sh: the three blanked features and two rows options.
const ADULT_COSTS: &str = "name,kind,column,per_row,fixed,max_rows,step,sensitive,note
occupation,feature,occupation,0.40,1000,,,no,Occupation from the employer survey
relationship,feature,relationship,0.30,500,,,yes,Household relationship
education,feature,education,0.20,500,,,no,Highest education level
more-records,rows,,1.50,0,30000,10000,no,Another census extract
more-women,rows,sex=Female,2.50,2000,10000,2500,no,Targeted sample of women
";

/// `acquest plan` on the design of the Adult benchmark (tests/bench/adult-pilot.sh):
/// occupation, relationship and education each blanked outside an independent random 20% pilot,
/// two rows options, 5 repeats, budget 40,000. The pilots are drawn here from a stream of the
/// project's own (the benchmark script draws them with awk, whose generator differs between awk
/// implementations), so the file is the same on every machine.
#[test]
fn golden_plan_on_the_adult_benchmark_file() {
    let Some(data) = shared("adult/adult.data") else {
        return;
    };
    let dir = tempfile::tempdir().unwrap();
    // occupation, relationship, education (columns 7, 8 and 4), in that order.
    let pilot = adult_with_pilots(&data, &[(6, 0.2), (7, 0.2), (3, 0.2)], 11);
    let written = plan_on_adult_pilots(dir.path(), &pilot, ADULT_COSTS, &["--budget", "40000"]);
    check("adult-plan.json", &written);
}
