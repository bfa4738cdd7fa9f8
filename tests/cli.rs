//! End-to-end tests of the acquest binary: real files in, JSON reports parsed back into the
//! report types. The open datasets live in ../shared/data (see each PROVENANCE.md there).

use std::path::{Path, PathBuf};

use acquest::report::BaselineReport;
use assert_cmd::Command;

mod bad_inputs;
mod golden;
mod growth;
mod protected;

const ADULT_COLUMNS: &str = "age,workclass,fnlwgt,education,education-num,marital-status,\
occupation,relationship,race,sex,capital-gain,capital-loss,hours-per-week,native-country,income";
const GERMAN_COLUMNS: &str = "status,duration,history,purpose,amount,savings,employment,rate,\
personal,debtors,residence,property,age,plans,housing,credits,job,liable,telephone,foreign,credit";

/// An open dataset under ../shared/data. Outside CI a test whose data are absent is skipped
/// with a message; under CI (the `CI` variable set) their absence is a failure, so that no test
/// passes there without having run.
fn shared(path: &str) -> Option<PathBuf> {
    let p = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("../shared/data")
        .join(path);
    if p.exists() {
        Some(p)
    } else {
        assert!(
            std::env::var_os("CI").is_none(),
            "{} is absent: under CI every test must run",
            p.display()
        );
        eprintln!("skipped: {} is absent", p.display());
        None
    }
}

/// The flags that read an Adult file: no header, the income label, sex as the protected column.
fn adult_flags(data: &str) -> Vec<&str> {
    vec![
        "--data",
        data,
        "--no-header",
        "--columns",
        ADULT_COLUMNS,
        "--target",
        "income",
        "--favourable",
        ">50K",
        "--protected",
        "sex",
    ]
}

/// The flags that read german.data: no header, the credit label (1 is good); no protected
/// column.
fn german_flags(data: &str) -> Vec<&str> {
    vec![
        "--data",
        data,
        "--no-header",
        "--columns",
        GERMAN_COLUMNS,
        "--target",
        "credit",
        "--favourable",
        "1",
    ]
}

/// adult.data (at `data`) with each `(column, share)` blanked ("?") outside an independent random
/// pilot of that share of rows, the draws taken row by row in the order given from a stream of
/// the project's own seeded by `seed` (awk's generator differs between implementations).
fn adult_with_pilots(data: &Path, pilots: &[(usize, f64)], seed: u64) -> String {
    use acquest::engine::streams::{stream_rng, Stream};
    use rand::Rng;
    let mut rng = stream_rng(seed, Stream::Check(11), 0);
    let mut out = String::new();
    for line in std::fs::read_to_string(data).unwrap().lines() {
        let mut fields: Vec<&str> = line.split(", ").collect();
        if fields.len() < 15 {
            continue;
        }
        for &(column, share) in pilots {
            if rng.gen::<f64>() >= share {
                fields[column] = "?";
            }
        }
        out.push_str(&fields.join(", "));
        out.push('\n');
    }
    out
}

/// Writes `pilot` (an Adult file, see [`adult_with_pilots`]) and the cost sheet `costs` into `dir`
/// and runs `acquest plan` on them with `flags`, 5 repeats, writing `dir/plan.json`; fails with
/// acquest's standard error when it fails.
fn plan_on_adult_pilots(dir: &Path, pilot: &str, costs: &str, flags: &[&str]) -> PathBuf {
    std::fs::write(dir.join("adult-pilot.csv"), pilot).unwrap();
    std::fs::write(dir.join("costs.csv"), costs).unwrap();
    let mut args = vec!["plan"];
    args.extend(adult_flags("adult-pilot.csv"));
    args.extend(flags);
    args.extend([
        "--costs",
        "costs.csv",
        "--repeats",
        "5",
        "--quiet",
        "--no-project",
        "--json",
        "plan.json",
    ]);
    let output = acquest().current_dir(dir).args(&args).output().unwrap();
    assert!(
        output.status.success(),
        "acquest {}: {}",
        args.join(" "),
        String::from_utf8_lossy(&output.stderr)
    );
    dir.join("plan.json")
}

/// The demo's target, favourable label and protected column, as flags.
const DEMO_FLAGS: [&str; 6] = [
    "--target",
    "shortlisted",
    "--favourable",
    "yes",
    "--protected",
    "disability",
];

fn acquest() -> Command {
    let mut cmd = Command::cargo_bin("acquest").unwrap();
    cmd.env_remove("RAYON_NUM_THREADS");
    cmd
}

/// Runs acquest with `args` plus `--json FILE` and returns the parsed report.
fn baseline_report(args: &[&str], threads: Option<usize>) -> (BaselineReport, String) {
    let dir = tempfile::tempdir().unwrap();
    let json = dir.path().join("report.json");
    let mut cmd = acquest();
    cmd.current_dir(dir.path())
        .arg("baseline")
        .args(args)
        .arg("--quiet")
        .arg("--json")
        .arg(&json);
    if let Some(t) = threads {
        cmd.env("RAYON_NUM_THREADS", t.to_string());
    }
    let output = cmd.output().unwrap();
    assert!(
        output.status.success(),
        "acquest failed: {}",
        String::from_utf8_lossy(&output.stderr)
    );
    let text = std::fs::read_to_string(&json).unwrap();
    (serde_json::from_str(&text).unwrap(), text)
}

fn label_rate(report: &BaselineReport, group: &str) -> f64 {
    report
        .groups
        .iter()
        .find(|g| g.name == group)
        .unwrap()
        .label_rate
}

fn close(a: f64, b: f64) -> bool {
    (a - b).abs() < 5e-7
}

#[test]
fn adult_label_bias_and_model_with_intervals() {
    let Some(data) = shared("adult/adult.data") else {
        return;
    };
    let data = data.to_str().unwrap();
    let (report, _) = baseline_report(
        &[
            "--data",
            data,
            "--no-header",
            "--columns",
            ADULT_COLUMNS,
            "--target",
            "income",
            "--favourable",
            ">50K",
            "--protected",
            "sex",
            "--repeats",
            "4",
        ],
        None,
    );
    // ../shared/data/adult/PROVENANCE.md: Male 21,790 rows, 6,662 >50K (0.305737); Female
    // 10,771 rows, 1,179 >50K (0.109461); label ratio Female/Male 0.358023, SPD -0.196276.
    assert_eq!(report.data.rows_used, 32_561);
    assert!(close(label_rate(&report, "Male"), 0.305737));
    assert!(close(label_rate(&report, "Female"), 0.109461));
    assert_eq!(report.reference.name, "Male");
    let label = &report.label_bias.comparisons[0];
    assert!(close(label.disparate_impact.unwrap(), 0.358023));
    assert!(close(
        label.statistical_parity_difference.unwrap(),
        -0.196276
    ));
    // 29 CFR 1607.4(D): 0.358 is below four-fifths.
    let female = report
        .label_bias
        .four_fifths
        .iter()
        .find(|f| f.group == "Female")
        .unwrap();
    assert!(female.adverse_impact);

    let model = &report.model;
    assert_eq!(model.trials, 4);
    assert!(model.accuracy.low.unwrap() < model.accuracy.mean);
    assert!(model.accuracy.mean < model.accuracy.high.unwrap());
    // Logistic regression on Adult is commonly reported near 85% accuracy (common practice, no
    // source): a loose sanity band, not a reference value.
    assert!(
        (0.82..0.88).contains(&model.accuracy.mean),
        "{}",
        model.accuracy.mean
    );
    let c = &model.comparisons[0];
    for e in [
        &c.statistical_parity_difference,
        &c.disparate_impact,
        &c.equal_opportunity_difference,
        &c.average_odds_difference,
    ] {
        let e = e.as_ref().unwrap();
        assert!(e.low.is_some() && e.high.is_some() && e.p_value.is_some());
    }
    assert_eq!(report.cautions.len(), 4);
}

#[test]
fn adult_test_file_with_full_stops_and_a_leading_comment_line() {
    let Some(data) = shared("adult/adult.test") else {
        return;
    };
    let data = data.to_str().unwrap();
    let (report, _) = baseline_report(
        &[
            "--data",
            data,
            "--no-header",
            "--columns",
            ADULT_COLUMNS,
            "--skip-lines",
            "1",
            "--target",
            "income",
            "--favourable",
            ">50K",
            "--protected",
            "sex",
            "--repeats",
            "2",
            "--model",
            "tree",
        ],
        None,
    );
    // ../shared/data/adult/PROVENANCE.md: adult.test Male 10,860 / 3,256 (0.299816);
    // Female 5,421 / 590 (0.108836). Labels there end in a full stop.
    assert_eq!(report.data.rows_used, 16_281);
    assert!(close(label_rate(&report, "Male"), 0.299816));
    assert!(close(label_rate(&report, "Female"), 0.108836));
    assert_eq!(report.inputs.favourable, ">50K");
}

#[test]
fn german_credit_groups_from_codes_and_from_an_age_threshold() {
    let Some(data) = shared("german-credit/german.data") else {
        return;
    };
    let data = data.to_str().unwrap();
    let mut common = german_flags(data);
    common.extend(["--repeats", "3"]);
    let mut by_sex = common.clone();
    by_sex.extend([
        "--protected",
        "personal",
        "--groups",
        "female=A92,A95;male=*",
    ]);
    let (report, _) = baseline_report(&by_sex, None);
    // ../shared/data/german-credit/PROVENANCE.md: female (A92) 201/310 = 0.648387,
    // male (A91+A93+A94) 499/690 = 0.723188.
    assert!(close(label_rate(&report, "female"), 0.648387));
    assert!(close(label_rate(&report, "male"), 0.723188));
    assert!(
        report.warnings.iter().any(|w| w.contains("A95")),
        "A95 does not occur"
    );

    let mut by_age = common.to_vec();
    by_age.extend([
        "--protected",
        "age",
        "--groups",
        "25 or younger=<=25;over 25=>25",
        "--model",
        "tree",
    ]);
    let (report, _) = baseline_report(&by_age, None);
    // PROVENANCE.md: age > 25: 590/810 = 0.728395; age <= 25: 110/190 = 0.578947.
    assert!(close(label_rate(&report, "over 25"), 0.728395));
    assert!(close(label_rate(&report, "25 or younger"), 0.578947));
    assert_eq!(report.groups[0].definition, "age <= 25");
}

#[test]
fn student_performance_with_a_numeric_threshold_target() {
    for (file, female, male) in [
        // ../shared/data/student-performance/PROVENANCE.md (pass = G3 >= 10).
        ("student-performance/student-mat.csv", 0.639423, 0.705882),
        ("student-performance/student-por.csv", 0.869452, 0.812030),
    ] {
        let Some(data) = shared(file) else { return };
        let (report, _) = baseline_report(
            &[
                "--data",
                data.to_str().unwrap(),
                "--target",
                "G3",
                "--favourable",
                ">=10",
                "--protected",
                "sex",
                "--exclude",
                "G1,G2",
                "--repeats",
                "3",
            ],
            None,
        );
        assert!(close(label_rate(&report, "F"), female), "{file}");
        assert!(close(label_rate(&report, "M"), male), "{file}");
        assert_eq!(report.inputs.data.delimiter.as_deref(), Some(";"));
    }
}

#[test]
fn same_seed_gives_byte_identical_json_on_one_and_two_threads() {
    let Some(data) = shared("german-credit/german.data") else {
        return;
    };
    let data = data.to_str().unwrap();
    for model in ["logistic", "tree"] {
        let mut args = german_flags(data);
        args.extend([
            "--protected",
            "personal",
            "--groups",
            "female=A92,A95;male=*",
            "--model",
            model,
            "--repeats",
            "6",
            "--seed",
            "99",
        ]);
        let (_, one) = baseline_report(&args, Some(1));
        let (_, two) = baseline_report(&args, Some(2));
        let (_, again) = baseline_report(&args, Some(2));
        assert_eq!(one, two, "{model}: thread count changed the report");
        assert_eq!(two, again, "{model}: a second run changed the report");
    }
}

#[test]
fn parquet_input_gives_the_same_groups_as_csv() {
    use polars::prelude::*;
    let dir = tempfile::tempdir().unwrap();
    let rows = 200;
    let mut frame = df!(
        "score" => (0..rows).map(|i| (i % 37) as f64).collect::<Vec<_>>(),
        "group" => (0..rows).map(|i| if i % 4 == 0 { "b" } else { "a" }).collect::<Vec<_>>(),
        "label" => (0..rows).map(|i| if (i % 37) > 15 { "good" } else { "bad" }).collect::<Vec<_>>(),
    )
    .unwrap();
    let path = dir.path().join("cases.parquet");
    ParquetWriter::new(std::fs::File::create(&path).unwrap())
        .finish(&mut frame)
        .unwrap();
    let csv = dir.path().join("cases.csv");
    CsvWriter::new(std::fs::File::create(&csv).unwrap())
        .finish(&mut frame)
        .unwrap();
    let args = |p: &Path| {
        vec![
            "--data".to_string(),
            p.display().to_string(),
            "--target".into(),
            "label".into(),
            "--favourable".into(),
            "good".into(),
            "--protected".into(),
            "group".into(),
            "--repeats".into(),
            "3".into(),
        ]
    };
    let a = args(&path);
    let b = args(&csv);
    let (from_parquet, _) =
        baseline_report(&a.iter().map(String::as_str).collect::<Vec<_>>(), None);
    let (from_csv, _) = baseline_report(&b.iter().map(String::as_str).collect::<Vec<_>>(), None);
    assert_eq!(from_parquet.inputs.data.format, "parquet");
    assert_eq!(from_parquet.groups, from_csv.groups);
    assert_eq!(from_parquet.model.accuracy, from_csv.model.accuracy);
}

#[test]
fn demo_writes_the_committed_scenario_and_runs_the_baseline() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("demo");
    let output = acquest()
        .arg("demo")
        .arg("--out")
        .arg(&out)
        .arg("--quiet")
        .output()
        .unwrap();
    assert!(
        output.status.success(),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
    let text = String::from_utf8_lossy(&output.stdout);
    assert!(text.contains("Bias already in the labels"), "{text}");
    assert!(text.contains("Cautions"));
    let committed = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data");
    for file in ["applications.csv", "costs.csv", "acquest.toml"] {
        let written = std::fs::read(out.join(file)).unwrap();
        let kept = std::fs::read(committed.join(file)).unwrap();
        assert!(
            written == kept,
            "demo-data/{file} differs from what the generator writes; \
                                  regenerate with `acquest demo --out demo-data --no-run`"
        );
    }
}

#[test]
fn project_file_supplies_the_settings() {
    let dir = tempfile::tempdir().unwrap();
    acquest()
        .arg("demo")
        .arg("--out")
        .arg(dir.path())
        .arg("--no-run")
        .assert()
        .success();
    let output = acquest()
        .current_dir(dir.path())
        .args(["baseline", "--repeats", "2", "--quiet", "--json", "-"])
        .output()
        .unwrap();
    assert!(
        output.status.success(),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
    let report: BaselineReport = serde_json::from_slice(&output.stdout).unwrap();
    assert_eq!(report.inputs.target, "shortlisted");
    assert_eq!(report.inputs.repeats, 2, "flags override the project file");
    assert!(report
        .data
        .features
        .iter()
        .all(|f| f.name != "applicant_id"));
    let candidates: Vec<&str> = report
        .data
        .candidates
        .iter()
        .map(|c| c.name.as_str())
        .collect();
    assert_eq!(
        candidates,
        ["work_sample", "reference_rating", "postcode_digit"]
    );
}

/// `n` rows of a small table: x in 0..17, two groups (a, b), labels alternating.
fn good_rows(n: usize) -> String {
    let mut s = String::from("x,g,y\n");
    for i in 0..n {
        s += &format!(
            "{},{},{}\n",
            i % 17,
            if i % 3 == 0 { "b" } else { "a" },
            if i % 2 == 0 { "yes" } else { "no" }
        );
    }
    s
}

#[test]
fn usage_errors_exit_2() {
    acquest()
        .arg("baseline")
        .arg("--no-such-flag")
        .assert()
        .code(2);
    let dir = tempfile::tempdir().unwrap();
    acquest()
        .current_dir(dir.path())
        .args(["baseline", "--data", "x.csv"])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("--target"));
}

fn curves_report(
    args: &[&str],
    threads: Option<usize>,
) -> (
    acquest::report::CurvesReport,
    String,
    PathBuf,
    tempfile::TempDir,
) {
    let dir = tempfile::tempdir().unwrap();
    let json = dir.path().join("curves.json");
    let svg = dir.path().join("curves.svg");
    let mut cmd = acquest();
    cmd.current_dir(dir.path())
        .arg("curves")
        .args(args)
        .arg("--quiet")
        .arg("--json")
        .arg(&json)
        .arg("--svg")
        .arg(&svg);
    if let Some(t) = threads {
        cmd.env("RAYON_NUM_THREADS", t.to_string());
    }
    let output = cmd.output().unwrap();
    assert!(
        output.status.success(),
        "acquest curves failed: {}",
        String::from_utf8_lossy(&output.stderr)
    );
    let text = std::fs::read_to_string(&json).unwrap();
    (serde_json::from_str(&text).unwrap(), text, svg, dir)
}

#[test]
fn adult_learning_curves_hold_every_family_and_forecast_well() {
    let Some(data) = shared("adult/adult.data") else {
        return;
    };
    let (report, _, svg, _dir) = curves_report(
        &[
            "--data",
            data.to_str().unwrap(),
            "--no-header",
            "--columns",
            ADULT_COLUMNS,
            "--target",
            "income",
            "--favourable",
            ">50K",
            "--protected",
            "sex",
            "--repeats",
            "4",
            "--at",
            "2x,8x",
        ],
        None,
    );
    let s = &report.schedule;
    assert_eq!(*s.sizes.last().unwrap(), s.training_rows);
    assert!(s.sizes.len() >= 10, "{:?}", s.sizes);
    // Accuracy and three rates for each of the two groups.
    assert_eq!(report.curves.len(), 7);
    for c in &report.curves {
        assert_eq!(c.families.len(), 4, "{}", c.quantity);
        assert!(c.chosen.is_some(), "{}", c.quantity);
        for f in &c.families {
            assert!(f.parameters.iter().all(|p| p.is_finite()));
        }
        assert_eq!(c.at.len(), 2);
        assert!(
            !c.at[0].unreliable && c.at[1].unreliable,
            "8x is beyond 4x the largest size"
        );
    }
    // On Adult the accuracy curve forecasts its held-back anchors within half a percentage point
    // (a stated tolerance: common practice, no source).
    let accuracy = &report.curves[0];
    let chosen = accuracy
        .families
        .iter()
        .find(|f| Some(f.family) == accuracy.chosen)
        .unwrap();
    assert!(
        chosen.forecast_error.unwrap() < 0.005,
        "{:?}",
        chosen.forecast_error
    );
    // Disparities derived for the one compared group, with the labels' own SPD beside them
    // (../shared/data/adult/PROVENANCE.md: -0.196276).
    assert_eq!(report.disparities.len(), 4);
    assert!((report.disparities[0].in_labels.unwrap() + 0.196276).abs() < 5e-7);
    let chart = std::fs::read_to_string(svg).unwrap();
    assert!(
        chart.starts_with("<svg") && chart.contains("polyline") && chart.contains("training rows")
    );
}

#[test]
fn curves_are_byte_identical_on_one_and_two_threads() {
    let Some(data) = shared("german-credit/german.data") else {
        return;
    };
    let args = [
        "--data",
        data.to_str().unwrap(),
        "--no-header",
        "--columns",
        GERMAN_COLUMNS,
        "--target",
        "credit",
        "--favourable",
        "1",
        "--protected",
        "personal",
        "--groups",
        "female=A92,A95;male=*",
        "--repeats",
        "4",
    ];
    let (_, one, _, _d1) = curves_report(&args, Some(1));
    let (_, two, _, _d2) = curves_report(&args, Some(2));
    assert_eq!(one, two);
}

#[test]
fn curves_on_too_few_rows_stop_with_a_clear_message() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("small.csv");
    std::fs::write(&path, good_rows(60)).unwrap();
    let output = acquest()
        .current_dir(dir.path())
        .args([
            "curves",
            "--data",
            path.to_str().unwrap(),
            "--target",
            "y",
            "--favourable",
            "yes",
            "--protected",
            "g",
            "--quiet",
        ])
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{stderr}");
    assert!(stderr.contains("too few rows for trials"), "{stderr}");
    assert!(!stderr.contains("panicked"));
}

#[test]
fn a_rare_group_gets_the_documented_fallback_and_a_warning() {
    let Some(data) = shared("adult/adult.data") else {
        return;
    };
    let (report, text, _, _dir) = curves_report(
        &[
            "--data",
            data.to_str().unwrap(),
            "--no-header",
            "--columns",
            ADULT_COLUMNS,
            "--target",
            "income",
            "--favourable",
            ">50K",
            "--protected",
            "race",
            "--repeats",
            "2",
        ],
        None,
    );
    assert!(
        report.schedule.smallest_rule.contains("an eighth"),
        "{}",
        report.schedule.smallest_rule
    );
    assert!(report.warnings.iter().any(|w| w.contains("too small")));
    assert!(!text.contains("NaN"));
}

#[test]
fn appraise_ranks_the_demo_options() {
    let dir = tempfile::tempdir().unwrap();
    acquest()
        .arg("demo")
        .arg("--out")
        .arg(dir.path())
        .arg("--no-run")
        .assert()
        .success();
    let output = acquest()
        .current_dir(dir.path())
        .args(["appraise", "--repeats", "5", "--quiet", "--json", "-"])
        .output()
        .unwrap();
    assert!(
        output.status.success(),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
    let report: acquest::report::AppraisalReport = serde_json::from_slice(&output.stdout).unwrap();
    assert_eq!(report.options.len(), 5);
    assert_eq!(report.ranking.len(), 5);
    let names: Vec<&str> = report.options.iter().map(|o| o.name.as_str()).collect();
    assert_eq!(
        names,
        [
            "work-sample",
            "references",
            "postcode",
            "more-applications",
            "more-disabled-applicants"
        ]
    );
    // Cost rule (SPEC 2.2), demo-data/costs.csv: work-sample 2,000 + 4.50 × 3,000 rows = 15,500;
    // with 500 new rows, 2,000 + 4.50 × 3,500 = 17,750; 3,000 applications at 12 = 36,000.
    let work = &report.options[0];
    assert_eq!(work.estimate.cost, 15_500.0);
    assert_eq!(work.steps[0].new_rows, 500);
    assert_eq!(work.steps[0].cost, 17_750.0);
    assert_eq!(report.options[3].estimate.cost, 36_000.0);
    assert!(report.options[2]
        .flags
        .iter()
        .any(|f| f.contains("sensitive")));
    assert_eq!(report.held_features.len(), 4);
}

/// The demo's options measured for real: the generating model (docs/demo.md) draws a large test
/// population and the extra rows, each option is actually added and the model retrained, and the
/// gains are averaged over repetitions. Source of truth: the project's own stated model, which is
/// what the demo exists for.
#[test]
fn demo_appraisal_against_the_truth_of_its_generating_model() {
    use acquest::data::Dataset;
    use acquest::demo::{complete_csv, draw_applicants, DEMO_ROWS, DEMO_SEED, DISABLED_SHARE};
    use acquest::engine::streams::Stream;
    use acquest::settings::{Choices, Settings};
    use rand::seq::SliceRandom;

    // The appraisal, as a user runs it on the demo folder.
    let dir = tempfile::tempdir().unwrap();
    acquest()
        .arg("demo")
        .arg("--out")
        .arg(dir.path())
        .arg("--no-run")
        .assert()
        .success();
    let output = acquest()
        .current_dir(dir.path())
        .args(["appraise", "--quiet", "--json", "-"])
        .output()
        .unwrap();
    assert!(
        output.status.success(),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
    let report: acquest::report::AppraisalReport = serde_json::from_slice(&output.stdout).unwrap();

    // The truth: the same 3,000 applicants, extra rows and a large test population, all drawn
    // from the generating model.
    let repetitions = 6;
    let demo = draw_applicants(DEMO_ROWS, DEMO_SEED, Stream::DemoApplicants, DISABLED_SHARE);
    let mut everyone = demo.clone();
    let extra_start = everyone.len();
    for k in 0..repetitions {
        everyone.extend(draw_applicants(
            3_000,
            DEMO_SEED,
            Stream::DemoPopulation(300 + k),
            DISABLED_SHARE,
        ));
    }
    let declared_start = everyone.len();
    for k in 0..repetitions {
        everyone.extend(draw_applicants(
            600,
            DEMO_SEED,
            Stream::DemoPopulation(400 + k),
            1.0,
        ));
    }
    let test_start = everyone.len();
    everyone.extend(draw_applicants(
        30_000,
        DEMO_SEED,
        Stream::DemoPopulation(200),
        DISABLED_SHARE,
    ));
    let path = dir.path().join("complete.csv");
    std::fs::write(&path, complete_csv(&everyone)).unwrap();
    let settings = Settings::from_choices(Choices {
        data: Some(path),
        target: Some("shortlisted".into()),
        favourable: Some("yes".into()),
        protected: Some("disability".into()),
        features: Some(
            [
                "test_score",
                "years_experience",
                "region",
                "prior_course",
                "work_sample",
                "reference_rating",
                "postcode_digit",
            ]
            .iter()
            .map(|s| s.to_string())
            .collect(),
        ),
        ..Choices::default()
    })
    .unwrap();
    let (_, all) = Dataset::load(&settings).unwrap();
    let with_features = |extra: &[&str]| {
        let mut d = all.clone();
        d.features.retain(|c| {
            ["test_score", "years_experience", "region", "prior_course"].contains(&c.name.as_str())
                || extra.contains(&c.name.as_str())
        });
        d
    };
    let declared = all
        .group_list
        .iter()
        .position(|g| g.name == "declared")
        .unwrap();
    let none = all
        .group_list
        .iter()
        .position(|g| g.name == "none")
        .unwrap();
    let test: Vec<usize> = (test_start..everyone.len()).collect();
    let measure = |data: &Dataset, train: &[usize]| {
        use acquest::engine::trial::{self, Arm, GivenSplit, Rows, TrialDesign};
        let splits = [GivenSplit {
            test: test.clone(),
            train: vec![train.to_vec()],
        }];
        let design = TrialDesign {
            stage: "truth",
            rows: Rows::Given(&splits),
            arms: vec![Arm::of(&data.features)],
        };
        let o = trial::run(data, &settings.trials, &design, &trial::no_progress).unwrap()[0][0]
            .sizes[0]
            .clone();
        let eod = (o.counts[declared].true_positive_rate().unwrap()
            - o.counts[none].true_positive_rate().unwrap())
        .abs();
        (o.accuracy, eod)
    };
    // Options in the cost sheet's order, with how each changes the training data.
    let names = [
        "work-sample",
        "references",
        "postcode",
        "more-applications",
        "more-disabled-applicants",
    ];
    let base = with_features(&[]);
    let variants = [
        with_features(&["work_sample"]),
        with_features(&["reference_rating"]),
        with_features(&["postcode_digit"]),
    ];
    let mut gains = vec![(0.0, 0.0); names.len()];
    // Each repetition's gains too, for the truth's own noise.
    let mut per_repetition = vec![Vec::new(); names.len()];
    let training = report.today.training_rows;
    for k in 0..repetitions {
        let mut rows: Vec<usize> = (0..DEMO_ROWS).collect();
        rows.shuffle(&mut acquest::engine::streams::stream_rng(
            7,
            Stream::Check(500),
            k,
        ));
        let train = &rows[..training];
        let (a0, u0) = measure(&base, train);
        for (i, variant) in variants.iter().enumerate() {
            let (a, u) = measure(variant, train);
            gains[i].0 += (a - a0) / repetitions as f64;
            gains[i].1 += (u0 - u) / repetitions as f64;
            per_repetition[i].push((a - a0, u0 - u));
        }
        // 3,000 more applications, of which the training part is the same share as today's.
        let share = training as f64 / DEMO_ROWS as f64;
        let k = k as usize;
        let mut more: Vec<usize> = train.to_vec();
        more.extend(
            (extra_start + 3_000 * k..extra_start + 3_000 * (k + 1))
                .take((3_000.0 * share) as usize),
        );
        let (a, u) = measure(&base, &more);
        gains[3].0 += (a - a0) / repetitions as f64;
        gains[3].1 += (u0 - u) / repetitions as f64;
        per_repetition[3].push((a - a0, u0 - u));
        let mut targeted: Vec<usize> = train.to_vec();
        targeted.extend(
            (declared_start + 600 * k..declared_start + 600 * (k + 1))
                .take((600.0 * share) as usize),
        );
        let (a, u) = measure(&base, &targeted);
        gains[4].0 += (a - a0) / repetitions as f64;
        gains[4].1 += (u0 - u) / repetitions as f64;
        per_repetition[4].push((a - a0, u0 - u));
    }
    eprintln!("option                      true acc   predicted acc [interval]            true fair  predicted fair [interval]");
    for (i, name) in names.iter().enumerate() {
        let o = report.options.iter().find(|o| o.name == *name).unwrap();
        let (a, f) = (&o.estimate.accuracy_gain, &o.estimate.unfairness_reduction);
        eprintln!(
            "{name:26} {:+.4}   {:+.4} [{:+.4}, {:+.4}]   {:+.4}   {:+.4} [{:+.4}, {:+.4}]",
            gains[i].0,
            a.mean,
            a.low.unwrap_or(f64::NAN),
            a.high.unwrap_or(f64::NAN),
            gains[i].1,
            f.mean,
            f.low.unwrap_or(f64::NAN),
            f.high.unwrap_or(f64::NAN)
        );
    }
    let best = |values: &[f64]| {
        (0..values.len())
            .max_by(|&a, &b| values[a].total_cmp(&values[b]))
            .unwrap()
    };
    let true_accuracy: Vec<f64> = gains.iter().map(|g| g.0).collect();
    let true_fairness: Vec<f64> = gains.iter().map(|g| g.1).collect();
    // For the ranking, a true effect within two standard errors of its own repetitions
    // (common practice, no source) is no effect: the truth cannot order those options, so
    // they tie at zero.
    let resolved = |side: fn(&(f64, f64)) -> f64| -> Vec<f64> {
        per_repetition
            .iter()
            .map(|r| {
                let v: Vec<f64> = r.iter().map(side).collect();
                let n = v.len() as f64;
                let mean = v.iter().sum::<f64>() / n;
                let sd = (v.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
                if mean.abs() < 2.0 * sd / n.sqrt() {
                    0.0
                } else {
                    mean
                }
            })
            .collect()
    };
    let ranked_accuracy = resolved(|g| g.0);
    let ranked_fairness = resolved(|g| g.1);
    eprintln!("true effects as ranked (zero where within two standard errors): accuracy {ranked_accuracy:.4?}, fairness {ranked_fairness:.4?}");
    let predicted = |f: &dyn Fn(&acquest::report::Purchase) -> f64| -> Vec<f64> {
        names
            .iter()
            .map(|n| {
                f(&report
                    .options
                    .iter()
                    .find(|o| o.name == *n)
                    .unwrap()
                    .estimate)
            })
            .collect()
    };
    let predicted_accuracy = predicted(&|p| p.accuracy_gain.mean);
    let predicted_fairness = predicted(&|p| p.unfairness_reduction.mean);
    assert_eq!(
        best(&predicted_accuracy),
        best(&true_accuracy),
        "best option by accuracy gain"
    );
    assert_eq!(
        best(&predicted_fairness),
        best(&true_fairness),
        "best option by fairness gain"
    );
    // The rankings agree: Spearman's rank correlation (ties share their mean rank) of at least
    // 0.8 (the project's target; common practice, no source), against the true effects the
    // truth can resolve (the rest tie at zero, above). The rows options are estimated as flat
    // curves, so they tie on the estimated side.
    assert!(
        acquest::stats::metrics::spearman(&predicted_accuracy, &ranked_accuracy)
            .is_some_and(|r| r >= 0.8),
        "{predicted_accuracy:?} vs {ranked_accuracy:?}"
    );
    assert!(
        acquest::stats::metrics::spearman(&predicted_fairness, &ranked_fairness)
            .is_some_and(|r| r >= 0.8),
        "{predicted_fairness:?} vs {ranked_fairness:?}"
    );
}

/// A demo folder whose cost sheet is replaced by `sheet`; returns the appraisal's exit code and
/// standard error.
fn appraise_with_sheet(
    sheet: &str,
    mut edit_data: impl FnMut(String) -> String,
) -> (i32, String, Vec<u8>) {
    let dir = tempfile::tempdir().unwrap();
    acquest()
        .arg("demo")
        .arg("--out")
        .arg(dir.path())
        .arg("--no-run")
        .assert()
        .success();
    std::fs::write(dir.path().join("costs.csv"), sheet).unwrap();
    let data = std::fs::read_to_string(dir.path().join("applications.csv")).unwrap();
    std::fs::write(dir.path().join("applications.csv"), edit_data(data)).unwrap();
    let output = acquest()
        .current_dir(dir.path())
        .args(["appraise", "--repeats", "3", "--quiet", "--json", "-"])
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&output.stderr).to_string();
    assert!(!stderr.contains("panicked"), "{stderr}");
    (output.status.code().unwrap_or(-1), stderr, output.stdout)
}

#[test]
fn a_pilot_too_small_for_a_curve_is_measured_at_its_size() {
    let header = "name,kind,column,per_row,fixed,max_rows,step,sensitive,note\n";
    let mut kept = 0;
    let (code, stderr, stdout) = appraise_with_sheet(
        &format!("{header}refs,feature,reference_rating,1,0,,,no,\nmore,rows,,1,0,1000,500,no,\n"),
        |d| {
            d.lines()
                .map(|l| {
                    let mut f: Vec<&str> = l.split(',').collect();
                    if f[0] != "applicant_id" && !f[7].is_empty() {
                        kept += 1;
                        if kept > 60 {
                            f[7] = "";
                        }
                    }
                    f.join(",") + "\n"
                })
                .collect()
        },
    );
    assert_eq!(code, 0, "{stderr}");
    let report: acquest::report::AppraisalReport = serde_json::from_slice(&stdout).unwrap();
    let refs = &report.options[0];
    assert!(!refs.pilot.as_ref().unwrap().extrapolated);
    assert!(
        refs.flags.iter().any(|f| f.contains("pilot too small")),
        "{:?}",
        refs.flags
    );
    assert_eq!(
        refs.steps.len(),
        2,
        "read with each step of the rows option"
    );
}

#[test]
fn plan_within_the_budget_and_an_empty_plan_below_the_cheapest_option() {
    let dir = tempfile::tempdir().unwrap();
    acquest()
        .arg("demo")
        .arg("--out")
        .arg(dir.path())
        .arg("--no-run")
        .assert()
        .success();
    let plan_with = |args: &[&str]| -> acquest::report::PlanReport {
        let output = acquest()
            .current_dir(dir.path())
            .arg("plan")
            .args(args)
            .args(["--quiet", "--json", "-"])
            .output()
            .unwrap();
        assert!(
            output.status.success(),
            "{}",
            String::from_utf8_lossy(&output.stderr)
        );
        serde_json::from_slice(&output.stdout).unwrap()
    };
    let plan_for = |budget: &str| {
        plan_with(&[
            "--budget",
            budget,
            "--repeats",
            "4",
            "--markdown",
            "plan.md",
        ])
    };
    // demo-data/costs.csv: cheapest purchase postcode, 100 + 0.05 × 3,000 = 250.
    let report = plan_for("20000");
    let plan = &report.plan;
    assert!(plan.total_cost <= 20_000.0);
    assert!(!plan.items.is_empty());
    // Cost rule (SPEC 2.2): each item's cost as the sheet gives it, features paid on new rows too.
    let new_rows: usize = plan.items.iter().map(|i| i.new_rows).sum();
    for item in &plan.items {
        let expected = match item.option.as_str() {
            "work-sample" => 2_000.0 + 4.5 * (3_000 + new_rows) as f64,
            "references" => 500.0 + 2.0 * (3_000 + new_rows) as f64,
            "postcode" => 100.0 + 0.05 * (3_000 + new_rows) as f64,
            "more-applications" => 12.0 * item.new_rows as f64,
            _ => 1_500.0 + 30.0 * item.new_rows as f64,
        };
        assert!(
            (item.cost - expected).abs() < 1e-6,
            "{}: {} vs {expected}",
            item.option,
            item.cost
        );
    }
    let sum: f64 = plan.items.iter().map(|i| i.cost).sum();
    assert!((plan.total_cost - sum).abs() < 1e-6);
    assert!(!report.frontier.is_empty());
    assert!(report
        .frontier
        .windows(2)
        .all(|w| w[1].plan.score >= w[0].plan.score - 1e-12));
    let markdown = std::fs::read_to_string(dir.path().join("plan.md")).unwrap();
    assert!(markdown.contains("## Recommendation") && markdown.contains("## Cautions"));
    // The recommendation carries the plan's doubt: its gains with intervals and the chance that
    // it helps at all; a plan of one option carries that option's own estimate, and a plan
    // whose gain cannot be told from zero says so first.
    let summary = report
        .summary
        .as_ref()
        .expect("a plan that buys has a summary");
    if let [item] = &plan.items[..] {
        if item.kind == acquest::report::OptionKind::Feature {
            let option = report
                .appraisal
                .options
                .iter()
                .find(|o| o.name == item.option)
                .unwrap();
            assert_eq!(summary.source, "option");
            assert_eq!(summary.utility, option.estimate.utility);
            assert_eq!(summary.accuracy_gain, option.estimate.accuracy_gain);
        }
    }
    let chance = summary.utility.chance_positive.unwrap();
    assert!((0.0..=1.0).contains(&chance));
    let recommendation = markdown.split("## Recommendation").nth(1).unwrap();
    // The advice on growing a pilot leads; the plan's doubt comes next.
    let mut lines = recommendation.lines().filter(|l| !l.is_empty());
    let advice = lines.next().unwrap();
    assert!(
        advice.starts_with("**Decide now") || advice.starts_with("**First grow pilot"),
        "{advice}"
    );
    let first = lines.next().unwrap();
    assert_eq!(
        first.starts_with("**The plan's gain cannot be told from zero"),
        !summary.differs_from_zero,
        "{first}"
    );
    let whole = recommendation
        .lines()
        .find(|l| l.starts_with("The plan as a whole"))
        .expect("the plan as a whole");
    assert!(
        whole.contains(&format!("{:+.4} [", summary.utility.mean)),
        "{whole}"
    );

    // The best plans are re-scored with their options together (SPEC 3.5); a plan of two
    // features is measured where their pilots overlap, or says why it cannot be.
    let wide = plan_for("30000");
    assert!(!wide.candidates.is_empty());
    for c in wide.candidates.iter().filter(|c| {
        c.plan
            .items
            .iter()
            .filter(|i| i.kind == acquest::report::OptionKind::Feature)
            .count()
            > 1
    }) {
        assert!(c.joint.is_some() || c.note.is_some());
    }
    assert!(wide.plan.total_cost <= 30_000.0);
    let wide_summary = wide.summary.as_ref().unwrap();
    if wide_summary.source == "joint" {
        let joint = wide
            .candidates
            .iter()
            .find(|c| c.plan.items == wide.plan.items)
            .and_then(|c| c.joint.as_ref())
            .unwrap();
        assert_eq!(wide_summary.utility, joint.utility);
    }

    // Planning on the saved appraisal (here, the one inside a plan report) measures nothing:
    // its additive best and its frontier are those of the plan run on the data.
    std::fs::write(
        dir.path().join("saved.json"),
        serde_json::to_string(&wide).unwrap(),
    )
    .unwrap();
    let saved = plan_with(&["--appraisal", "saved.json", "--budget", "30000"]);
    assert_eq!(saved.frontier, wide.frontier);
    assert_eq!(saved.candidates[0].plan, wide.candidates[0].plan);
    assert!(saved.candidates.iter().all(|c| c.joint.is_none()));
    assert!(saved.chosen_by.contains("additive"));

    let poor = plan_for("200");
    assert!(poor.plan.items.is_empty());
    assert!(poor.explanation.unwrap().contains("below the cheapest"));
}

/// One "today": the baseline, the curves' full-size anchor and the plan's today come from the
/// same trials (the baseline's splits, the full-size fit made the same way), so the three
/// reports give the same figures to the last bit. Checked on the demo, whose plan measures
/// unfairness by EOD.
#[test]
fn the_demo_reports_give_one_today() {
    let dir = tempfile::tempdir().unwrap();
    acquest()
        .arg("demo")
        .arg("--out")
        .arg(dir.path())
        .arg("--quiet")
        .assert()
        .success();
    let read = |name: &str| -> serde_json::Value {
        serde_json::from_str(&std::fs::read_to_string(dir.path().join(name)).unwrap()).unwrap()
    };
    let (baseline, curves, plan) = (
        read("baseline.json"),
        read("curves.json"),
        read("report.json"),
    );
    let model = &baseline["model"];
    let accuracy = model["accuracy"]["mean"].as_f64().unwrap();
    let comparison = &model["comparisons"][0];
    let group = comparison["group"].as_str().unwrap();
    let eod = comparison["equal_opportunity_difference"]["mean"]
        .as_f64()
        .unwrap();
    let last_mean = |record: &serde_json::Value| {
        record["anchors"].as_array().unwrap().last().unwrap()["mean"]
            .as_f64()
            .unwrap()
    };
    let curve_accuracy = curves["curves"]
        .as_array()
        .unwrap()
        .iter()
        .find(|c| c["quantity"] == "accuracy" && c["group"].is_null())
        .map(last_mean)
        .unwrap();
    let curve_eod = curves["disparities"]
        .as_array()
        .unwrap()
        .iter()
        .find(|d| d["group"] == group && d["measure"] == "equal opportunity difference")
        .map(last_mean)
        .unwrap();
    let today = &plan["appraisal"]["today"];
    assert_eq!(today["source"], "trials");
    assert_eq!(curve_accuracy, accuracy);
    assert_eq!(today["accuracy"].as_f64().unwrap(), accuracy);
    assert_eq!(curve_eod, eod);
    assert_eq!(today["worst_group"], group);
    assert_eq!(today["unfairness"].as_f64().unwrap(), eod.abs());
    let rates: Vec<f64> = model["groups"]
        .as_array()
        .unwrap()
        .iter()
        .map(|g| g["selection_rate"]["mean"].as_f64().unwrap())
        .collect();
    let today_rates: Vec<f64> = today["selection_rates"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r.as_f64().unwrap())
        .collect();
    assert_eq!(today_rates, rates);
}

#[test]
fn render_writes_every_report_kind_as_markdown_and_html() {
    let dir = tempfile::tempdir().unwrap();
    acquest()
        .args(["demo", "--quiet", "--out"])
        .arg(dir.path())
        .assert()
        .success();
    acquest()
        .current_dir(dir.path())
        .args([
            "backtest",
            "--quiet",
            "--rounds",
            "1",
            "--hold-features",
            "region",
        ])
        .args(["--json", "backtest.json"])
        .assert()
        .success();
    let plan: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("report.json")).unwrap())
            .unwrap();
    std::fs::write(
        dir.path().join("appraise.json"),
        serde_json::to_string(&plan["appraisal"]).unwrap(),
    )
    .unwrap();
    let cases = [
        ("baseline", "## Groups", false),
        ("curves", "## Learning curves", true),
        ("appraise", "## Options, ranked by utility", true),
        ("report", "## Recommendation", true),
        ("backtest", "## How well each method did", false),
    ];
    for (name, heading, chart) in cases {
        let (md, html) = (dir.path().join("out.md"), dir.path().join("out.html"));
        acquest()
            .arg("render")
            .arg(dir.path().join(format!("{name}.json")))
            .arg("--markdown")
            .arg(&md)
            .arg("--html")
            .arg(&html)
            .assert()
            .success();
        let (md, html) = (
            std::fs::read_to_string(md).unwrap(),
            std::fs::read_to_string(html).unwrap(),
        );
        assert!(md.starts_with("# ") && md.contains(heading), "{name}: {md}");
        // Every report carries the cautions of the product description, section 4.
        for text in [&md, &html] {
            assert!(
                text.contains("screening measures, not legal findings"),
                "{name}"
            );
        }
        assert!(html.starts_with("<!DOCTYPE html>") && html.ends_with("</html>\n"));
        assert_eq!(
            html.contains("<svg"),
            chart,
            "{name}: a chart where one is drawn"
        );
    }
    // The baseline's figures are the JSON's, to the digits shown.
    let baseline: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("baseline.json")).unwrap())
            .unwrap();
    acquest()
        .arg("render")
        .arg(dir.path().join("baseline.json"))
        .arg("--markdown")
        .arg(dir.path().join("b.md"))
        .assert()
        .success();
    let md = std::fs::read_to_string(dir.path().join("b.md")).unwrap();
    let accuracy = baseline["model"]["accuracy"]["mean"].as_f64().unwrap();
    assert!(
        md.contains(&format!("| accuracy | {accuracy:.4} [")),
        "{md}"
    );
    // With no file asked for, render prints the terminal view: for the baseline, the very text
    // the baseline command printed on the same data (after its first line, which names the data
    // file as the demo gave it).
    let printed = acquest()
        .current_dir(dir.path())
        .args(["baseline", "--quiet"])
        .output()
        .unwrap();
    let rendered = acquest()
        .current_dir(dir.path())
        .args(["render", "baseline.json"])
        .output()
        .unwrap();
    assert!(rendered.status.success());
    let after_first = |bytes: &[u8]| {
        let text = String::from_utf8_lossy(bytes).into_owned();
        text.split_once('\n').map(|(_, rest)| rest.to_string())
    };
    assert_eq!(after_first(&rendered.stdout), after_first(&printed.stdout));
    assert!(after_first(&rendered.stdout).is_some_and(|t| t.contains("Cautions")));
    // A report of no command that render knows is refused with exit 2, naming those it reads.
    let other = serde_json::json!({
        "format": "acquest-report",
        "format_version": acquest::report::FORMAT_VERSION,
        "command": "demo",
    });
    std::fs::write(dir.path().join("other.json"), other.to_string()).unwrap();
    acquest()
        .arg("render")
        .arg(dir.path().join("other.json"))
        .arg("--html")
        .arg(dir.path().join("o.html"))
        .assert()
        .code(2)
        .stderr(predicates::str::contains(
            "render reads the reports of baseline",
        ));
}

/// Runs a command that writes its JSON report to standard output, and reads the report.
fn json_of(command: &mut Command) -> serde_json::Value {
    let out = command.output().unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

/// A folder holding the demo's files, not yet run.
fn demo_folder() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    acquest()
        .args(["demo", "--quiet", "--no-run", "--out"])
        .arg(dir.path())
        .assert()
        .success();
    dir
}

/// The appraisal of the demo in `folder`, saved as `name` there.
fn appraise_to(folder: &Path, name: &str) {
    acquest()
        .current_dir(folder)
        .args(["appraise", "--quiet", "--json", name])
        .assert()
        .success();
}

#[test]
fn the_frontier_is_at_round_budgets_or_at_those_asked_for() {
    let dir = demo_folder();
    appraise_to(dir.path(), "appraise.json");
    let frontier = |extra: &[&str]| -> Vec<f64> {
        let report = json_of(
            acquest()
                .current_dir(dir.path())
                .args(["plan", "--appraisal", "appraise.json", "--budget", "20000"])
                .args(extra)
                .args(["--json", "-"]),
        );
        report["frontier"]
            .as_array()
            .unwrap()
            .iter()
            .map(|p| p["budget"].as_f64().unwrap())
            .collect()
    };
    // Round budgets: one or two significant digits, common practice for a reader (no source).
    let round = frontier(&[]);
    assert!(round.len() >= 8, "{round:?}");
    for b in &round {
        let scale = 10f64.powi(b.log10().floor() as i32 - 1);
        assert_eq!((b / scale).fract(), 0.0, "{b} is not round");
    }
    assert_eq!(
        frontier(&["--budgets", "5000,1000,20000,1000"]),
        [1000.0, 5000.0, 20000.0]
    );
    acquest()
        .current_dir(dir.path())
        .args(["plan", "--appraisal", "appraise.json", "--budget", "20000"])
        .args(["--budgets", "1000,lots"])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("--budgets"));
}

#[test]
fn outputs_are_checked_before_the_work_and_written_whole() {
    let dir = demo_folder();
    // An output that cannot be written stops the run before any trial, naming flag and path.
    for (flag, path) in [
        ("--html", "/nonexistent/x.html"),
        ("--json", "/nonexistent/x.json"),
        ("--markdown", "."),
    ] {
        acquest()
            .current_dir(dir.path())
            .args(["plan", "--quiet", flag, path])
            .assert()
            .code(2)
            .stderr(predicates::str::contains(flag))
            .stderr(predicates::str::contains(path.trim_start_matches('.')))
            .stdout(predicates::str::is_empty());
    }
    acquest()
        .current_dir(dir.path())
        .args(["plan", "--json", "-", "--markdown", "-"])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("only one output"));
    // '-' is standard output for every output flag: the document alone, no tables.
    appraise_to(dir.path(), "appraise.json");
    let out = acquest()
        .current_dir(dir.path())
        .args(["plan", "--appraisal", "appraise.json", "--markdown", "-"])
        .output()
        .unwrap();
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(text.starts_with("# Data acquisition plan"), "{text}");
    // A run interrupted mid-way leaves no file, whole or partial, where it was writing.
    acquest()
        .args(["demo", "--quiet", "--no-run", "--rows", "40000", "--out"])
        .arg(dir.path().join("large"))
        .assert()
        .success();
    let reports = dir.path().join("reports");
    std::fs::create_dir(&reports).unwrap();
    let child = std::process::Command::new(env!("CARGO_BIN_EXE_acquest"))
        .current_dir(dir.path().join("large"))
        .args(["plan", "--quiet"])
        .arg("--json")
        .arg(reports.join("plan.json"))
        .arg("--html")
        .arg(reports.join("plan.html"))
        .stdout(std::process::Stdio::null())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    std::thread::sleep(std::time::Duration::from_millis(1500));
    let killed = std::process::Command::new("kill")
        .args(["-INT", &child.id().to_string()])
        .status()
        .unwrap();
    assert!(killed.success());
    let done = child.wait_with_output().unwrap();
    assert_eq!(done.status.code(), Some(130), "interrupted, not finished");
    assert!(String::from_utf8_lossy(&done.stderr).contains("interrupted"));
    assert_eq!(std::fs::read_dir(&reports).unwrap().count(), 0);
}

#[test]
fn standard_input_is_read_as_the_data_file() {
    let dir = demo_folder();
    let json = |args: &[&str], input: Option<Vec<u8>>| -> serde_json::Value {
        let mut command = acquest();
        command
            .current_dir(dir.path())
            .args(["baseline", "--quiet", "--json", "-"])
            .args(args);
        if let Some(bytes) = input {
            command.write_stdin(bytes);
        }
        json_of(&mut command)
    };
    let from_file = json(&[], None);
    let bytes = std::fs::read(dir.path().join("applications.csv")).unwrap();
    let from_input = json(&["--data", "-"], Some(bytes));
    assert_eq!(from_input["inputs"]["data"]["path"], "standard input");
    assert_eq!(
        from_input["inputs"]["data"]["sha256"],
        from_file["inputs"]["data"]["sha256"]
    );
    assert_eq!(from_input["model"], from_file["model"]);
    let left: Vec<String> = std::fs::read_dir(dir.path())
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with('.'))
        .collect();
    assert!(left.is_empty(), "temporary files left: {left:?}");
    // The cost sheet too; one input at most can read standard input.
    let sheet = std::fs::read(dir.path().join("costs.csv")).unwrap();
    let report = json_of(
        acquest()
            .current_dir(dir.path())
            .args(["appraise", "--quiet", "--costs", "-", "--json", "-"])
            .write_stdin(sheet),
    );
    assert_eq!(report["costs"]["path"], "standard input");
    assert_eq!(report["options"].as_array().unwrap().len(), 5);
    acquest()
        .current_dir(dir.path())
        .args(["appraise", "--data", "-", "--costs", "-"])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("only one input"));
}

/// Loads the demo's HTML report in headless Chromium (Debian's package, installed by .ci/run)
/// and checks that the browser built the charts. Skipped with a message where Chromium is
/// absent outside CI; under CI its absence is a failure.
#[test]
fn html_report_renders_its_charts_in_a_real_browser() {
    let chromium = ["/usr/bin/chromium", "/usr/bin/chromium-browser"]
        .into_iter()
        .find(|p| Path::new(p).exists());
    let Some(chromium) = chromium else {
        assert!(
            std::env::var_os("CI").is_none(),
            "CI must install chromium (see .ci/run)"
        );
        eprintln!("skipped: no chromium on this machine");
        return;
    };
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("demo");
    acquest()
        .arg("demo")
        .arg("--out")
        .arg(&out)
        .arg("--quiet")
        .assert()
        .success();
    let profile = dir.path().join("profile");
    let dom_of = |html: &Path| -> String {
        let output = std::process::Command::new(chromium)
            .args([
                "--headless",
                "--no-sandbox",
                "--disable-gpu",
                "--disable-quic",
                "--no-first-run",
                "--disable-background-networking",
                "--disable-component-update",
                "--disable-sync",
            ])
            .arg(format!("--user-data-dir={}", profile.display()))
            .arg("--dump-dom")
            .arg(format!("file://{}", html.display()))
            .output()
            .unwrap();
        String::from_utf8_lossy(&output.stdout).into_owned()
    };
    // The demo's plan, and a plan on Adult (the golden report, rendered again).
    let adult = dir.path().join("adult.html");
    acquest()
        .arg("render")
        .arg(Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/golden/adult-plan.json"))
        .arg("--html")
        .arg(&adult)
        .assert()
        .success();
    for html in [out.join("report.html"), adult] {
        let dom = dom_of(&html);
        // The recommendation, the frontier, two option charts and the learning curves.
        assert!(
            dom.matches("<svg").count() >= 4,
            "{}",
            &dom[..dom.len().min(500)]
        );
        assert!(dom.contains("id=\"frontier\"") && dom.contains("class=\"chosen\""));
        assert!(dom.contains("id=\"plan\"") && dom.contains("id=\"options\""));
        assert!(dom.contains("polyline") && dom.contains("Cautions"));
        // The recommendation shows the plan's gains with their intervals and the chance it
        // helps.
        let whole = dom
            .split("id=\"whole\"")
            .nth(1)
            .and_then(|rest| rest.split("</p>").next())
            .expect("the plan as a whole in the HTML");
        assert!(
            whole.matches('[').count() >= 3 && whole.contains("chance that it raises the utility"),
            "{whole}"
        );
    }
    for file in ["report.json", "report.md", "curves.svg", "baseline.json"] {
        assert!(out.join(file).exists(), "{file}");
    }
}

#[test]
fn the_adverse_impact_floor_is_kept_or_the_plan_says_why_not() {
    let dir = tempfile::tempdir().unwrap();
    acquest()
        .arg("demo")
        .arg("--out")
        .arg(dir.path())
        .arg("--no-run")
        .assert()
        .success();
    let plan_for = |budget: &str| -> acquest::report::PlanReport {
        let output = acquest()
            .current_dir(dir.path())
            .args([
                "plan",
                "--budget",
                budget,
                "--no-adverse-impact",
                "--repeats",
                "4",
                "--quiet",
                "--json",
                "-",
            ])
            .output()
            .unwrap();
        assert!(
            output.status.success(),
            "{}",
            String::from_utf8_lossy(&output.stderr)
        );
        serde_json::from_slice(&output.stdout).unwrap()
    };
    for budget in ["5000", "20000"] {
        let report = plan_for(budget);
        let today = &report.appraisal.today.selection_rates;
        let mut rates = today.clone();
        for item in &report.plan.items {
            let option = report
                .appraisal
                .options
                .iter()
                .find(|o| o.name == item.option)
                .unwrap();
            let purchase = if item.kind == acquest::report::OptionKind::Feature {
                &option.estimate
            } else {
                option
                    .steps
                    .iter()
                    .find(|s| s.new_rows == item.new_rows)
                    .unwrap()
            };
            for (rate, g) in rates.iter_mut().zip(&purchase.groups) {
                *rate += g.selection_rate.mean;
            }
        }
        let top = rates.iter().copied().fold(0.0, f64::max);
        // 29 CFR 1607.4(D): no group's rate below four-fifths of the highest.
        let holds = rates.iter().all(|r| r / top >= 0.8);
        if report.plan.items.is_empty() {
            assert!(
                report
                    .explanation
                    .as_deref()
                    .unwrap_or("")
                    .contains("four-fifths"),
                "{budget}"
            );
        } else {
            assert!(holds, "{budget}: {rates:?}");
        }
    }
}

#[test]
fn backtest_on_adult_reports_predicted_against_realised_gains() {
    let Some(data) = shared("adult/adult.data") else {
        return;
    };
    let dir = tempfile::tempdir().unwrap();
    let json = dir.path().join("backtest.json");
    // The acceptance command, with one round and 4 repeats to keep the test short.
    let output = acquest()
        .current_dir(dir.path())
        .args(["backtest", "--data", data.to_str().unwrap(), "--no-header"])
        .args(["--columns", ADULT_COLUMNS, "--target", "income"])
        .args(["--favourable", ">50K", "--protected", "sex"])
        .args([
            "--hold-rows",
            "0.5",
            "--hold-features",
            "occupation,relationship",
        ])
        .args(["--pilot", "0.2", "--hold-group", "Female", "--rounds", "1"])
        .args(["--repeats", "4", "--quiet", "--json"])
        .arg(&json)
        .output()
        .unwrap();
    assert!(
        output.status.success(),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
    let text = String::from_utf8_lossy(&output.stdout);
    assert!(text.contains("How well each method did"), "{text}");
    assert!(text.contains("Cautions"), "{text}");
    let report: acquest::report::BacktestReport =
        serde_json::from_str(&std::fs::read_to_string(&json).unwrap()).unwrap();
    let round = &report.rounds[0];
    // Adult train has 32,561 rows; half are held back within every group and label.
    assert_eq!(round.kept_rows + round.held_rows, 32_561);
    assert!(round.held_rows.abs_diff(16_280) < 10, "{}", round.held_rows);
    let kinds: Vec<&str> = round.options.iter().map(|o| o.kind.name()).collect();
    assert_eq!(kinds, ["rows", "group rows", "feature", "feature"]);
    assert_eq!(round.options[0].rows, round.held_rows);
    for p in &round.pilots {
        assert!(p.rows.abs_diff(round.kept_rows / 5) <= 1, "20% pilots");
    }
    for option in &round.options {
        assert_eq!(option.quantities.len(), 5, "accuracy and four measures");
        for q in &option.quantities {
            assert_eq!(q.realised.per_repeat.len(), 4);
        }
    }
    // Occupation is the strongest of these purchases for accuracy on Adult, measured for real:
    // in docs/appraisal-checks.md the occupation feature was realised at +0.0068 on all rows.
    let occupation = round
        .options
        .iter()
        .find(|o| o.option == "feature occupation")
        .unwrap();
    let accuracy = &occupation.quantities[0];
    assert_eq!(accuracy.quantity, acquest::report::Gain::Accuracy);
    assert!(accuracy.realised.mean > 0.002, "{:?}", accuracy.realised);
    assert!(accuracy.acquest.mean > 0.0, "{:?}", accuracy.acquest);
    assert_eq!(report.summary.len(), 5);
    for s in &report.summary {
        let methods: Vec<&str> = s.methods.iter().map(|m| m.method.name()).collect();
        assert_eq!(methods, ["acquest", "last-anchor", "pilot-alone"]);
        assert!(s.methods.iter().all(|m| m.entries == 4));
        // Every method's intervals get an interval score and a mean width; detection counts
        // only significant realised gains.
        for m in &s.methods {
            assert!(
                m.interval_score_pp.is_some() && m.mean_width_pp.is_some(),
                "{m:?}"
            );
            assert!(m.detected <= m.significant);
        }
    }
    assert!(report.targets.len() >= 11, "{:?}", report.targets);
    assert_eq!(report.cautions.len(), 4);
}

#[test]
fn backtest_settings_that_cannot_work_exit_2() {
    let Some(data) = shared("german-credit/german.data") else {
        return;
    };
    let data = data.to_str().unwrap();
    let run = |extra: &[&str]| {
        let output = acquest()
            .args([
                "backtest",
                "--data",
                data,
                "--no-header",
                "--columns",
                GERMAN_COLUMNS,
            ])
            .args([
                "--target",
                "credit",
                "--favourable",
                "1",
                "--protected",
                "personal",
            ])
            .args([
                "--groups",
                "female=A92,A95;male=*",
                "--quiet",
                "--no-project",
            ])
            .args(extra)
            .output()
            .unwrap();
        (
            output.status.code().unwrap_or(-1),
            String::from_utf8_lossy(&output.stderr).to_string(),
        )
    };
    let (code, message) = run(&["--hold-features", "statuss"]);
    assert_eq!(code, 2, "{message}");
    assert!(
        message.contains("status"),
        "names the nearest column: {message}"
    );
    let (code, message) = run(&["--hold-rows", "1.5"]);
    assert_eq!(code, 2, "{message}");
    assert!(message.contains("--hold-rows"), "{message}");
    let (code, message) = run(&["--hold-group", "females"]);
    assert_eq!(code, 2, "{message}");
    assert!(message.contains("female"), "{message}");
    let (code, message) = run(&["--hold-rows", "0"]);
    assert_eq!(code, 2, "nothing held back: {message}");
}

#[test]
fn curves_beyond_the_trial_cap_are_read_by_extrapolation() {
    let Some(data) = shared("adult/adult.data") else {
        return;
    };
    let (report, ..) = curves_report(
        &[
            "--data",
            data.to_str().unwrap(),
            "--no-header",
            "--columns",
            ADULT_COLUMNS,
            "--target",
            "income",
            "--favourable",
            ">50K",
            "--protected",
            "sex",
            "--repeats",
            "3",
            "--max-train-rows",
            "4000",
        ],
        None,
    );
    let schedule = &report.schedule;
    // Adult train: 32,561 rows, 30% test: 22,792 training rows, cut to 4,000 per trial.
    assert!(schedule.capped);
    assert_eq!(schedule.training_rows, 22_792);
    assert_eq!(*schedule.sizes.last().unwrap(), 4_000);
    assert_eq!(report.inputs.max_train_rows, 4_000);
    assert!(
        report
            .warnings
            .iter()
            .any(|w| w.contains("--max-train-rows")),
        "{:?}",
        report.warnings
    );
}

#[test]
fn a_scaled_demo_writes_wider_data_and_the_same_table_as_parquet() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("wide");
    let status = acquest()
        .args([
            "demo",
            "--rows",
            "4000",
            "--extra-columns",
            "6",
            "--parquet",
            "--no-run",
        ])
        .arg("--out")
        .arg(&out)
        .output()
        .unwrap();
    assert!(
        status.status.success(),
        "{}",
        String::from_utf8_lossy(&status.stderr)
    );
    let csv = std::fs::read_to_string(out.join("applications.csv")).unwrap();
    let header: Vec<&str> = csv.lines().next().unwrap().split(',').collect();
    assert_eq!(header.len(), 16, "the scenario's 10 columns and 6 more");
    assert_eq!(csv.lines().count(), 4_001);
    // The committed scenario's first rows are drawn the same way: same applicants, more columns.
    let committed = std::fs::read_to_string(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/applications.csv"),
    )
    .unwrap();
    let first = |text: &str, k: usize| -> Vec<String> {
        text.lines()
            .nth(1)
            .unwrap()
            .split(',')
            .take(k)
            .map(String::from)
            .collect()
    };
    assert_eq!(first(&csv, 6), first(&committed, 6));
    let costs = std::fs::read_to_string(out.join("costs.csv")).unwrap();
    assert!(
        costs.contains(",4000,666,"),
        "rows on offer scale with the data: {costs}"
    );
    let common = DEMO_FLAGS;
    let mut a: Vec<String> = vec![
        "--data".into(),
        out.join("applications.csv").display().to_string(),
    ];
    let mut b: Vec<String> = vec![
        "--data".into(),
        out.join("applications.parquet").display().to_string(),
    ];
    for v in [&mut a, &mut b] {
        v.extend(common.iter().map(|s| s.to_string()));
        v.extend(
            [
                "--exclude",
                "applicant_id",
                "--repeats",
                "3",
                "--no-project",
            ]
            .map(String::from),
        );
    }
    let (from_csv, _) = baseline_report(&a.iter().map(String::as_str).collect::<Vec<_>>(), None);
    let (from_parquet, _) =
        baseline_report(&b.iter().map(String::as_str).collect::<Vec<_>>(), None);
    assert_eq!(from_parquet.inputs.data.format, "parquet");
    assert_eq!(from_parquet.groups, from_csv.groups);
    assert_eq!(from_parquet.model.accuracy, from_csv.model.accuracy);
}

/// A candidate whose pilot difference is overwhelmingly significant is bought by a cautious
/// plan. Adult (../shared/data/adult, PROVENANCE.md) with marital status known on a random 30%
/// of the rows only, and relationship (which carries much the same household information) left
/// out: dropping marital status costs the model about 2.7 points of accuracy on all rows
/// (`acquest baseline`'s ablation). The team here weighs accuracy only (--weigh-fairness 0), so
/// the plan turns on the accuracy gain alone: with fairness weighed the same plan rightly buys
/// nothing, since marital status also widens the equal-opportunity gap (about −0.15 |EOD|
/// reduction at full size, its interval clear of zero).
#[test]
fn a_cautious_plan_buys_a_feature_whose_pilot_gain_is_clear() {
    let Some(data) = shared("adult/adult.data") else {
        return;
    };
    let dir = tempfile::tempdir().unwrap();
    let costs = "name,kind,column,per_row,fixed,max_rows,step,sensitive,note
marital,feature,marital-status,0.40,1000,,,no,Marital status from the household survey
more-records,rows,,1.50,0,30000,10000,no,Another census extract
";
    let written = plan_on_adult_pilots(
        dir.path(),
        &adult_with_pilots(&data, &[(5, 0.3)], 5),
        costs,
        &[
            "--exclude",
            "relationship",
            "--budget",
            "20000",
            "--cautious",
            "--weigh-fairness",
            "0",
        ],
    );
    let plan: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(written).unwrap()).unwrap();
    let marital = plan["appraisal"]["options"]
        .as_array()
        .unwrap()
        .iter()
        .find(|o| o["name"] == "marital")
        .unwrap();
    let pilot_p = marital["pilot"]["accuracy_difference"]["p_value"]
        .as_f64()
        .unwrap();
    assert!(pilot_p < 0.001, "pilot p {pilot_p}");
    let low = marital["estimate"]["accuracy_gain"]["low"]
        .as_f64()
        .unwrap();
    assert!(low > 0.0, "headline interval reaches {low}");
    let bought: Vec<&str> = plan["plan"]["items"]
        .as_array()
        .unwrap()
        .iter()
        .map(|i| i["option"].as_str().unwrap())
        .collect();
    assert_eq!(bought, ["marital"], "{}", plan["plan"]);
}

#[test]
fn a_pilot_of_one_group_leaves_its_fairness_unmeasured_and_out_of_the_sums() {
    // The demo with the work-sample pilot kept on applicants of group 'none' only: the feature's
    // effect on unfairness cannot be read, so it must be shown as not measured (never as 0),
    // its utility must weigh accuracy alone, and plans must leave it out of their sums.
    let dir = demo_folder();
    let path = dir.path().join("applications.csv");
    let text = std::fs::read_to_string(&path).unwrap();
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().unwrap().split(',').collect();
    let column = |name: &str| header.iter().position(|h| *h == name).unwrap();
    let (group, sample, label) = (
        column("disability"),
        column("work_sample"),
        column("shortlisted"),
    );
    let (mut out, mut pilot, mut favourable) = (header.join(",") + "\n", 0, 0);
    for line in lines {
        let mut fields: Vec<&str> = line.split(',').collect();
        if fields[group] != "none" {
            fields[sample] = "";
        }
        if !fields[sample].is_empty() {
            pilot += 1;
            favourable += usize::from(fields[label] == "yes");
        }
        out += &(fields.join(",") + "\n");
    }
    std::fs::write(&path, out).unwrap();
    let output = acquest()
        .current_dir(dir.path())
        .args(["plan", "--json", "plan.json", "--html", "plan.html"])
        .output()
        .unwrap();
    assert!(
        output.status.success(),
        "{}",
        String::from_utf8_lossy(&output.stderr)
    );
    let html = std::fs::read_to_string(dir.path().join("plan.html")).unwrap();
    assert!(html.contains("not measured") && html.contains("Hollow points"));
    assert!(!html.contains("NaN"));
    let terminal = String::from_utf8_lossy(&output.stdout);
    assert!(!terminal.contains("NaN"), "{terminal}");
    assert!(terminal.contains("not measured"), "{terminal}");
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("plan.json")).unwrap())
            .unwrap();
    let appraisal = &report["appraisal"];
    let option = appraisal["options"]
        .as_array()
        .unwrap()
        .iter()
        .find(|o| o["name"] == "work-sample")
        .unwrap();
    let estimate = &option["estimate"];
    for field in ["mean", "low", "high", "p_value"] {
        assert!(estimate["unfairness_reduction"][field].is_null(), "{field}");
    }
    assert!(estimate["fairness_per_1000"].is_null());
    let weigh = appraisal["costs"]["weigh_accuracy"].as_f64().unwrap();
    let accuracy = estimate["accuracy_gain"]["mean"].as_f64().unwrap();
    assert!(accuracy.abs() > 1e-6, "the accuracy gain is measured");
    assert!((estimate["utility"]["mean"].as_f64().unwrap() - weigh * accuracy).abs() < 1e-12);
    let flags: Vec<&str> = option["flags"]
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f.as_str().unwrap())
        .collect();
    let counts =
        format!("pilot rows by group: 'none' {pilot} ({favourable} favourable), 'declared' 0");
    assert!(
        flags.iter().any(|f| f.contains(&counts)),
        "{counts} in {flags:?}"
    );
    assert!(flags
        .iter()
        .any(|f| f.starts_with("unfairness not measured")));
    // Every plan's unfairness sum is that of the items measured; work-sample's item is null.
    let mut with_it = 0;
    for point in report["frontier"].as_array().unwrap() {
        let plan = &point["plan"];
        let items = plan["items"].as_array().unwrap();
        let measured: f64 = items
            .iter()
            .filter_map(|i| i["unfairness_reduction"].as_f64())
            .sum();
        if items.iter().any(|i| i["option"] == "work-sample") {
            with_it += 1;
            let item = items.iter().find(|i| i["option"] == "work-sample").unwrap();
            assert!(item["unfairness_reduction"].is_null());
        }
        assert!((plan["unfairness_reduction"].as_f64().unwrap() - measured).abs() < 1e-12);
    }
    assert!(with_it > 0, "some budget buys the work sample");
    // Under the adverse-impact floor it cannot be shown to keep the floor: left out, said so.
    let floor = json_of(acquest().current_dir(dir.path()).args([
        "plan",
        "--quiet",
        "--no-adverse-impact",
        "--json",
        "-",
    ]));
    for point in floor["frontier"].as_array().unwrap() {
        assert!(point["plan"]["items"]
            .as_array()
            .unwrap()
            .iter()
            .all(|i| i["option"] != "work-sample"));
    }
    assert!(floor["warnings"].as_array().unwrap().iter().any(|w| w
        .as_str()
        .unwrap()
        .contains("'work-sample' is left out of every plan")));
}
