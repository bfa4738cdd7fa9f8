//! One table of bad inputs (a module of tests/cli.rs), each run end to end through the binary: files, flags, cost sheets
//! (CSV and JSON), the project file and the shapes of data that cannot be assessed. Every one
//! must end with exit code 2 and a message that names what is wrong (the column, line, field,
//! flag or value), and never with a panic. The rules behind the expected messages are the
//! project's own (docs/report.md, README "When the input is wrong"); none comes from outside.

use std::path::Path;

use super::acquest;

/// `baseline` on the small table at `data` (columns x, z, g, y).
fn small_baseline(data: &'static str) -> Vec<&'static str> {
    let mut args = vec!["baseline", "--data", data];
    args.extend(SMALL);
    args
}

/// The flags that read the small table (columns x, z, g, y), after its `--data`.
const SMALL: [&str; 7] = [
    "--target",
    "y",
    "--favourable",
    "yes",
    "--protected",
    "g",
    "--no-project",
];

const SHEET_HEADER: &str = "name,kind,column,per_row,fixed,max_rows,step,sensitive,note\n";

/// Where a case runs: beside the small table, or in a demo folder (its data, cost sheet and
/// acquest.toml).
#[derive(Clone, Copy, PartialEq)]
enum Folder {
    Small,
    Demo,
}

struct Case {
    /// What is wrong, as the test's failure names it.
    what: &'static str,
    folder: Folder,
    /// Files written over the folder's, by name.
    files: Vec<(&'static str, Vec<u8>)>,
    /// The command line after `acquest`.
    args: Vec<&'static str>,
    /// A piece the message must hold.
    expect: &'static str,
}

fn case(
    what: &'static str,
    folder: Folder,
    files: Vec<(&'static str, Vec<u8>)>,
    args: &[&'static str],
    expect: &'static str,
) -> Case {
    Case {
        what,
        folder,
        files,
        args: args.to_vec(),
        expect,
    }
}

/// `n` rows of the small table: x in 0..17, z in 0..5, two groups (a, b), labels alternating.
fn small_rows(n: usize) -> String {
    let mut s = String::from("x,z,g,y\n");
    for i in 0..n {
        s += &format!(
            "{},{},{},{}\n",
            i % 17,
            i % 5,
            if i % 3 == 0 { "b" } else { "a" },
            if i % 2 == 0 { "yes" } else { "no" }
        );
    }
    s
}

/// A small-table case: `data` as cases.csv, baseline with `extra` flags.
fn small(what: &'static str, data: String, extra: &[&'static str], expect: &'static str) -> Case {
    let mut args = small_baseline("cases.csv");
    args.extend(extra);
    case(
        what,
        Folder::Small,
        vec![("cases.csv", data.into_bytes())],
        &args,
        expect,
    )
}

/// A demo case of `appraise` with the cost-sheet lines `lines` (after the header).
fn sheet(what: &'static str, lines: &str, expect: &'static str) -> Case {
    case(
        what,
        Folder::Demo,
        vec![("costs.csv", format!("{SHEET_HEADER}{lines}").into_bytes())],
        &["appraise", "--repeats", "3"],
        expect,
    )
}

/// A demo cost sheet case whose header adds the pilot fields.
fn pilot_sheet(what: &'static str, lines: &str, expect: &'static str) -> Case {
    case(
        what,
        Folder::Demo,
        vec![("costs.csv", format!("name,kind,column,per_row,fixed,max_rows,step,sensitive,note,pilot_per_row,pilot_fixed,pilot_max_rows\n{lines}").into_bytes())],
        &["appraise", "--repeats", "3"],
        expect,
    )
}

/// The demo's data with column `column` of every data row (1-based) set by `cell` from its
/// row, value and label.
fn demo_data_with(
    demo: &Path,
    column: &str,
    cell: impl Fn(usize, &str, &str) -> String,
) -> Vec<u8> {
    let text = std::fs::read_to_string(demo.join("applications.csv")).unwrap();
    let mut lines = text.lines();
    let header = lines.next().unwrap();
    let names: Vec<&str> = header.split(',').collect();
    let at = names.iter().position(|n| *n == column).unwrap();
    let mut out = format!("{header}\n");
    for (row, line) in lines.enumerate() {
        let mut fields: Vec<String> = line.split(',').map(String::from).collect();
        let label = fields.last().cloned().unwrap_or_default();
        fields[at] = cell(row + 1, &fields[at], &label);
        out += &(fields.join(",") + "\n");
    }
    out.into_bytes()
}

fn cases(demo: &Path) -> Vec<Case> {
    let good = small_rows(120);
    let project = std::fs::read_to_string(demo.join("acquest.toml")).unwrap();
    let with_project_line = |line: &str| format!("{project}{line}\n").into_bytes();
    let references_pilot =
        |cell: fn(usize, &str, &str) -> String| demo_data_with(demo, "reference_rating", cell);
    let references = "a,feature,reference_rating,1,0,,,no,\n";
    vec![
        // Files.
        case(
            "a data file that does not exist",
            Folder::Small,
            vec![],
            &small_baseline("/nonexistent/cases.csv"),
            "cannot read",
        ),
        small("an empty file", String::new(), &[], "empty"),
        small(
            "a header and no rows",
            "x,z,g,y\n".into(),
            &[],
            "no data rows",
        ),
        small(
            "a line with one field too many",
            good.replacen("\n5,0,a,no\n", "\n5,0,a,no,extra\n", 1),
            &[],
            "fields",
        ),
        small(
            "a word in a numeric column",
            good.replacen("\n4,4,a,yes\n", "\nfour,4,a,yes\n", 1),
            &[],
            "'four'",
        ),
        small(
            "NaN in a numeric column",
            good.replacen("\n4,4,a,yes\n", "\nNaN,4,a,yes\n", 1),
            &[],
            "not a finite number",
        ),
        small(
            "inf in a numeric column",
            good.replacen("\n4,4,a,yes\n", "\ninf,4,a,yes\n", 1),
            &[],
            "not a finite number",
        ),
        small(
            "a column named twice",
            good.replacen("x,z,g,y", "x,x,g,y", 1),
            &[],
            "'x' twice",
        ),
        case(
            "bytes that are not UTF-8",
            Folder::Small,
            vec![("cases.csv", {
                let mut bytes = good.clone().into_bytes();
                let at = good.find("\n5,").unwrap() + 1;
                bytes[at] = 0xff;
                bytes
            })],
            &small_baseline("cases.csv"),
            "is not UTF-8 text",
        ),
        case(
            "a CSV file named .parquet",
            Folder::Small,
            vec![("cases.parquet", good.clone().into_bytes())],
            &small_baseline("cases.parquet"),
            "not a Parquet file",
        ),
        // Shapes of data that cannot be assessed.
        small(
            "every row of one label",
            good.replace(",no\n", ",yes\n"),
            &[],
            "every row",
        ),
        small(
            "one group only",
            good.replace(",b,", ",a,"),
            &[],
            "only one group",
        ),
        small(
            "a group of 3 rows",
            good.replace(",b,", ",a,") + "1,1,c,yes\n2,2,c,no\n3,3,c,yes\n",
            &[],
            "'c' has 3 rows",
        ),
        small(
            "one label absent from a group",
            good.replace(",b,no\n", ",b,yes\n"),
            &[],
            "group 'b' has no rows with the label 'no'",
        ),
        small(
            "every feature empty",
            good.lines()
                .enumerate()
                .map(|(i, l)| {
                    if i == 0 {
                        format!("{l}\n")
                    } else {
                        let f: Vec<&str> = l.split(',').collect();
                        format!(",,{},{}\n", f[2], f[3])
                    }
                })
                .collect(),
            &[],
            "no feature columns are left",
        ),
        // Flags.
        small(
            "a target that is not a column",
            good.clone(),
            &["--target", "yy"],
            "did you mean 'y'",
        ),
        small(
            "a protected column that is not a column",
            good.clone(),
            &["--protected", "gg"],
            "--protected: no column named 'gg'",
        ),
        small(
            "a favourable value the target does not hold",
            good.clone(),
            &["--favourable", "maybe"],
            "no value 'maybe'",
        ),
        small(
            "a feature that is not a column",
            good.clone(),
            &["--features", "x,nope"],
            "--features: no column named 'nope'",
        ),
        small(
            "a group expression without a name",
            good.clone(),
            &["--groups", "a=a;=b"],
            "'=b' has no group name",
        ),
        small(
            "group codes that leave one group",
            good.clone(),
            &["--groups", "b=zz"],
            "needs at least two groups",
        ),
        small(
            "a delimiter of two characters",
            good.clone(),
            &["--delimiter", "ab"],
            "--delimiter: 'ab' is not one character",
        ),
        small("no repeats", good.clone(), &["--repeats", "0"], "--repeats"),
        small(
            "one repeat",
            good.clone(),
            &["--repeats", "1"],
            "at least 2 for an interval",
        ),
        small(
            "a negative number of repeats",
            good.clone(),
            &["--repeats", "-3"],
            "--repeats",
        ),
        small(
            "a test share that leaves too few to train on",
            good.clone(),
            &["--test-fraction", "0.99"],
            "to train on",
        ),
        small(
            "a negative confidence",
            good.clone(),
            &["--confidence", "-0.9"],
            "--confidence",
        ),
        small(
            "an unknown model",
            good.clone(),
            &["--model", "nonsense"],
            "unknown model 'nonsense'",
        ),
        small(
            "a report into a folder that does not exist",
            good.clone(),
            &["--json", "/nonexistent/report.json"],
            "--json: cannot write /nonexistent/report.json",
        ),
        case(
            "a negative budget",
            Folder::Demo,
            vec![],
            &["plan", "--budget", "-5"],
            "--budget: must be 0 or more, not -5",
        ),
        case(
            "a budget list with a word in it",
            Folder::Demo,
            vec![],
            &["plan", "--budgets", "1000,x"],
            "--budgets",
        ),
        case(
            "a negative weight",
            Folder::Demo,
            vec![],
            &["appraise", "--weigh-accuracy", "-1"],
            "--weigh-accuracy: must be 0 or more, not -1",
        ),
        case(
            "a held-back share above one",
            Folder::Demo,
            vec![],
            &["backtest", "--hold-rows", "1.5"],
            "--hold-rows: must be a share from 0 to 0.9, not 1.5",
        ),
        case(
            "a held group that does not exist",
            Folder::Demo,
            vec![],
            &["backtest", "--hold-group", "nobody"],
            "--hold-group: column 'disability' has no value 'nobody'",
        ),
        // Several protected attributes.
        case(
            "a protected attribute that is not a column",
            Folder::Demo,
            vec![],
            &["baseline", "--protected", "disability,nosuch"],
            "--protected: no column named 'nosuch'",
        ),
        case(
            "groups for an attribute that is not protected",
            Folder::Demo,
            vec![],
            &[
                "baseline",
                "--protected",
                "disability,region",
                "--groups",
                "age:young=<=25;older=>25",
            ],
            "--groups: 'age' is not a protected attribute (--protected: disability, region)",
        ),
        case(
            "the target named as a protected attribute",
            Folder::Demo,
            vec![],
            &["baseline", "--protected", "disability,shortlisted"],
            "--protected: 'shortlisted' is the same column as --target",
        ),
        case(
            "a protected attribute named twice",
            Folder::Demo,
            vec![],
            &["baseline", "--protected", "disability,disability"],
            "--protected: names 'disability' twice",
        ),
        case(
            "intersections of a single attribute",
            Folder::Demo,
            vec![],
            &["baseline", "--intersections"],
            "--intersections: needs at least two protected attributes",
        ),
        case(
            "a reference for an attribute that is not protected",
            Folder::Demo,
            vec![],
            &[
                "baseline",
                "--protected",
                "disability,region",
                "--reference",
                "nowhere=East",
            ],
            "--reference: 'nowhere' is not a protected attribute",
        ),
        case(
            "a rows option on a cell whose intersection was not formed",
            Folder::Demo,
            vec![(
                "costs.csv",
                format!("{SHEET_HEADER}east,rows,disability=declared&region=East,10,0,100,,no,\n")
                    .into_bytes(),
            )],
            &["appraise", "--protected", "disability,region"],
            "'disability=declared&region=East' is a cell of disability × region: add --intersections",
        ),
        case(
            "a rows option on a cell of a column that is not protected",
            Folder::Demo,
            vec![(
                "costs.csv",
                format!("{SHEET_HEADER}east,rows,disability=declared&prior_course=yes,10,0,100,,no,\n")
                    .into_bytes(),
            )],
            &["appraise", "--protected", "disability,region", "--intersections"],
            "rows can be targeted at a group of a protected attribute (disability, region), not at 'prior_course'",
        ),
        case(
            "a rows option on a cell of a group that does not exist",
            Folder::Demo,
            vec![(
                "costs.csv",
                format!("{SHEET_HEADER}east,rows,disability=declared&region=Eest,10,0,100,,no,\n")
                    .into_bytes(),
            )],
            &["appraise", "--protected", "disability,region", "--intersections"],
            "'disability × region' has no group 'declared & Eest'",
        ),
        case(
            "a narrowing check at a size the appraisal does not predict",
            Folder::Demo,
            vec![],
            &["backtest", "--hold-features", "test_score", "--check-growth", "3"],
            "--check-growth: grows the pilots 2 or 4 times",
        ),
        case(
            "a narrowing check that would grow a pilot past every row",
            Folder::Demo,
            vec![],
            &[
                "backtest",
                "--hold-features",
                "test_score",
                "--pilot",
                "0.4",
                "--check-growth",
                "4",
            ],
            "give a --pilot of at most 25%",
        ),
        case(
            "a narrowing check without held features",
            Folder::Demo,
            vec![],
            &["backtest", "--check-growth", "2"],
            "--check-growth: needs held features",
        ),
        // Cost sheets.
        case(
            "a cost sheet that does not exist",
            Folder::Demo,
            vec![],
            &["appraise", "--costs", "nothere.csv"],
            "cannot read nothere.csv",
        ),
        sheet(
            "an unknown kind",
            "a,gift,,1,0,10,1,no,\n",
            "line 2, field kind",
        ),
        sheet(
            "a candidate that is not a column",
            "a,feature,no_such,1,0,,,no,\n",
            "no candidate column 'no_such'",
        ),
        sheet(
            "a current feature offered as a candidate",
            "a,feature,test_score,1,0,,,no,\n",
            "already a current feature",
        ),
        sheet(
            "the target offered as a candidate",
            "a,feature,shortlisted,1,0,,,no,\n",
            "'shortlisted' is the target column",
        ),
        sheet(
            "the protected column offered as a candidate",
            "a,feature,disability,1,0,,,no,\n",
            "'disability' is the protected column",
        ),
        sheet(
            "rows of a group that does not exist",
            "a,rows,disability=unknown,1,0,10,1,no,\n",
            "no group 'unknown'",
        ),
        sheet(
            "rows of a group of another column",
            "a,rows,region=North,1,0,10,1,no,\n",
            "rows can be targeted at a group of a protected attribute (disability), not at 'region'",
        ),
        sheet(
            "two options of one name",
            "a,rows,,1,0,10,1,no,\na,rows,,2,0,10,1,no,\n",
            "'a' names two options",
        ),
        sheet(
            "a negative cost",
            "a,rows,,-1,0,10,1,no,\n",
            "field per_row: -1 is negative",
        ),
        sheet(
            "a cost that is a word",
            "a,rows,,cheap,0,10,1,no,\n",
            "field per_row: 'cheap' is not a number",
        ),
        sheet(
            "rows without a most",
            "a,rows,,1,0,,1,no,\n",
            "field max_rows",
        ),
        sheet(
            "sensitive neither yes nor no",
            "a,rows,,1,0,10,1,maybe,\n",
            "field sensitive",
        ),
        sheet(
            "a step above the most",
            "a,rows,,1,0,50,100,no,\n",
            "line 2, field step: 100 is more than max_rows 50",
        ),
        sheet(
            "more options than one appraisal values",
            &(0..61)
                .map(|i| format!("o{i},rows,,1,0,10,1,no,\n"))
                .collect::<String>(),
            "lists 61 options, more than the 60",
        ),
        sheet(
            "a step of zero",
            "a,rows,,1,0,50,0,no,\n",
            "field step: 0 is not a whole number",
        ),
        pilot_sheet(
            "a pilot field on a rows option",
            "a,rows,,1,0,10,1,no,,2,,\n",
            "line 2, field pilot_per_row: a rows option has no pilot to grow",
        ),
        pilot_sheet(
            "a pilot's most no more than its rows",
            "w,feature,work_sample,4.5,2000,,,no,,,,500\n",
            "line 2, field pilot_max_rows: 500 is not more than the 600 rows the pilot of 'work_sample' holds",
        ),
        pilot_sheet(
            "a negative pilot cost",
            "w,feature,work_sample,4.5,2000,,,no,,-1,,\n",
            "field pilot_per_row: -1 is negative",
        ),
        pilot_sheet(
            "a pilot's most that is a word",
            "w,feature,work_sample,4.5,2000,,,no,,,,many\n",
            "field pilot_max_rows: 'many' is not a number",
        ),
        case(
            "a JSON pilot cost that is a word",
            Folder::Demo,
            vec![(
                "costs.csv",
                br#"[{"name": "w", "kind": "feature", "column": "work_sample", "per_row": 4.5, "pilot_fixed": "dear"}]"#.to_vec(),
            )],
            &["appraise", "--repeats", "3"],
            "field pilot_fixed: 'dear' is not a number",
        ),
        case(
            "a candidate empty everywhere (no pilot)",
            Folder::Demo,
            vec![
                (
                    "costs.csv",
                    format!("{SHEET_HEADER}{references}").into_bytes(),
                ),
                (
                    "applications.csv",
                    references_pilot(|_, _, _| String::new()),
                ),
            ],
            &["appraise", "--repeats", "3"],
            "no pilot rows",
        ),
        case(
            "a pilot of 2 rows",
            Folder::Demo,
            vec![
                (
                    "costs.csv",
                    format!("{SHEET_HEADER}{references}").into_bytes(),
                ),
                (
                    "applications.csv",
                    references_pilot(|row, _, _| if row <= 2 { "3".into() } else { String::new() }),
                ),
            ],
            &["appraise", "--repeats", "3"],
            "the pilot of 'reference_rating' (the rows where it is filled) holds 2 rows",
        ),
        case(
            "a pilot of one label",
            Folder::Demo,
            vec![
                (
                    "costs.csv",
                    format!("{SHEET_HEADER}{references}").into_bytes(),
                ),
                (
                    "applications.csv",
                    references_pilot(|_, cell, label| {
                        if label == "yes" {
                            cell.into()
                        } else {
                            String::new()
                        }
                    }),
                ),
            ],
            &["appraise", "--repeats", "3"],
            "0 without",
        ),
        case(
            "a JSON cost sheet cut short",
            Folder::Demo,
            vec![("costs.json", b"{\"options\": [{\"name\": \"a\"".to_vec())],
            &["appraise", "--costs", "costs.json"],
            "costs.json: not valid JSON",
        ),
        case(
            "a JSON cost sheet with a word for a cost",
            Folder::Demo,
            vec![(
                "costs.json",
                br#"[{"name": "a", "kind": "rows", "per_row": "x"}]"#.to_vec(),
            )],
            &["appraise", "--costs", "costs.json"],
            "option 1, field per_row: 'x' is not a number",
        ),
        // The project file.
        case(
            "a project setting of the wrong type",
            Folder::Demo,
            vec![("acquest.toml", with_project_line("repeats = \"ten\""))],
            &["baseline"],
            "invalid type: string \"ten\"",
        ),
        case(
            "an unknown project setting",
            Folder::Demo,
            vec![("acquest.toml", with_project_line("colour = 3"))],
            &["baseline"],
            "unknown field `colour`",
        ),
        case(
            "a project setting cut short",
            Folder::Demo,
            vec![("acquest.toml", with_project_line("target ="))],
            &["baseline"],
            "acquest.toml: TOML parse error",
        ),
        case(
            "a project file naming a missing data file",
            Folder::Demo,
            vec![(
                "acquest.toml",
                project
                    .replace("\"applications.csv\"", "\"gone.csv\"")
                    .into_bytes(),
            )],
            &["baseline"],
            "cannot read gone.csv",
        ),
    ]
}

#[test]
fn every_bad_input_ends_with_exit_2_and_names_the_problem() {
    let demo = tempfile::tempdir().unwrap();
    acquest()
        .args(["demo", "--quiet", "--no-run", "--out"])
        .arg(demo.path())
        .assert()
        .success();
    let table = cases(demo.path());
    let mut names: Vec<&str> = table.iter().map(|c| c.what).collect();
    names.sort_unstable();
    names.dedup();
    assert_eq!(names.len(), table.len(), "every case is distinct");
    assert!(table.len() >= 40, "{} cases", table.len());
    let mut failures = Vec::new();
    for c in &table {
        let dir = tempfile::tempdir().unwrap();
        if c.folder == Folder::Demo {
            for entry in std::fs::read_dir(demo.path()).unwrap() {
                let entry = entry.unwrap();
                std::fs::copy(entry.path(), dir.path().join(entry.file_name())).unwrap();
            }
        }
        for (name, bytes) in &c.files {
            std::fs::write(dir.path().join(name), bytes).unwrap();
        }
        let output = acquest()
            .current_dir(dir.path())
            .args(&c.args)
            .arg("--quiet")
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&output.stderr);
        let code = output.status.code();
        if code != Some(2)
            || !stderr.contains(c.expect)
            || stderr.contains("panicked")
            || stderr.contains("RUST_BACKTRACE")
        {
            failures.push(format!(
                "{}: exit {code:?}, expected '{}' in: {stderr}",
                c.what, c.expect
            ));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
}

#[test]
fn a_file_too_large_for_the_memory_available_stops_before_it_is_read() {
    // The demo (3,000 rows × 10 columns, 30,000 cells at 32 bytes: about 1 MiB) against a limit
    // of 0 MiB set by ACQUEST_MEMORY_MIB, as CSV and as Parquet; and under a limit it fits.
    let demo = tempfile::tempdir().unwrap();
    acquest()
        .args(["demo", "--quiet", "--no-run", "--parquet", "--out"])
        .arg(demo.path())
        .assert()
        .success();
    for (data, estimate) in [
        (
            "applications.csv",
            "estimated from its size and first lines",
        ),
        ("applications.parquet", "30,000 cells, from its metadata"),
    ] {
        let output = acquest()
            .current_dir(demo.path())
            .env("ACQUEST_MEMORY_MIB", "0")
            .args(["baseline", "--quiet", "--data", data])
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&output.stderr);
        assert_eq!(output.status.code(), Some(2), "{stderr}");
        assert!(
            stderr.contains(&format!("{data}: too large for the memory available"))
                && stderr.contains(estimate)
                && stderr.contains("random sample of its rows"),
            "{stderr}"
        );
        acquest()
            .current_dir(demo.path())
            .env("ACQUEST_MEMORY_MIB", "64")
            .args(["baseline", "--quiet", "--repeats", "2", "--data", data])
            .assert()
            .success();
    }
}
