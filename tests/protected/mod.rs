//! Several protected attributes at once, and their intersections (a module of tests/cli.rs):
//! every group's and cell's rows and favourable labels against counts computed outside
//! acquest from the files themselves, the four-fifths findings from those counts, the cells
//! too small to assess, and the same report on one and two threads.

use acquest::report::{AttributeSection, BaselineReport};

use super::{acquest, baseline_report, shared, GERMAN_COLUMNS};

/// A section's groups as (name, rows, favourable labels).
fn cells(section: &AttributeSection) -> Vec<(String, usize, usize)> {
    section
        .groups
        .iter()
        .map(|g| (g.name.clone(), g.rows, g.favourable_labels))
        .collect()
}

fn section<'a>(report: &'a BaselineReport, name: &str) -> &'a AttributeSection {
    report
        .attributes
        .iter()
        .find(|a| a.attribute == name)
        .unwrap_or_else(|| panic!("no section '{name}'"))
}

#[test]
fn adult_by_sex_and_race_and_their_intersection() {
    let Some(data) = shared("adult/adult.data") else {
        return;
    };
    let data = data.to_str().unwrap();
    let mut args = super::adult_flags(data);
    // The flags read sex as the protected column; here sex and race.
    *args.last_mut().unwrap() = "sex,race";
    args.extend(["--intersections", "--repeats", "3", "--no-project"]);
    let (report, _) = baseline_report(&args, None);
    // Counted outside acquest, from adult.data as described in
    // ../shared/data/adult/PROVENANCE.md (32,561 records; sex is field 10, race field 9,
    // income field 15):
    //   awk -F', ' 'NF>=15 {n[$10" & "$9]++; if ($15 ~ />50K/) f[$10" & "$9]++}
    //     END {for (k in n) print k, n[k], f[k]+0}' adult.data
    let counted: [(&str, usize, usize); 10] = [
        ("Male & White", 19_174, 6_089),
        ("Male & Black", 1_569, 297),
        ("Male & Asian-Pac-Islander", 693, 233),
        ("Male & Amer-Indian-Eskimo", 192, 24),
        ("Male & Other", 162, 19),
        ("Female & White", 8_642, 1_028),
        ("Female & Black", 1_555, 90),
        ("Female & Asian-Pac-Islander", 346, 43),
        ("Female & Amer-Indian-Eskimo", 119, 12),
        ("Female & Other", 109, 6),
    ];
    // The race groups are the cells summed over sex.
    let race = section(&report, "race");
    for (group, rows, favourable) in cells(race) {
        let (r, f) = counted
            .iter()
            .filter(|c| c.0.ends_with(&format!("& {group}")))
            .fold((0, 0), |(r, f), c| (r + c.1, f + c.2));
        assert_eq!((rows, favourable), (r, f), "race group {group}");
    }
    assert_eq!(race.groups.len(), 5);
    // The four-fifths rule in the labels: each group's favourable rate over the highest.
    let rate = |g: &acquest::report::GroupSummary| g.favourable_labels as f64 / g.rows as f64;
    let highest = race.groups.iter().map(rate).fold(0.0, f64::max);
    for g in &race.groups {
        let finding = race
            .label_bias
            .four_fifths
            .iter()
            .find(|f| f.group == g.name)
            .unwrap();
        assert!(
            (finding.impact_ratio - rate(g) / highest).abs() < 1e-12,
            "{}",
            g.name
        );
        assert_eq!(
            finding.adverse_impact,
            rate(g) / highest < 0.8,
            "{}",
            g.name
        );
    }
    // The intersection: a cell is assessed with at least 20 rows and, in a 30% test part, an
    // expected 5 of each label (at least 17 of each in all); two cells fall short and are
    // reported with their counts, not dropped silently.
    let both = section(&report, "sex × race");
    let assessed = cells(both);
    for (name, rows, favourable) in counted {
        let small = favourable.min(rows - favourable) as f64 * 0.3 < 5.0 || rows < 20;
        let shown = assessed.iter().find(|c| c.0 == name);
        let reported = both.too_small.iter().find(|c| c.group == name);
        if small {
            assert!(shown.is_none(), "{name} is too small to assess");
            let c = reported.unwrap_or_else(|| panic!("{name} is not reported"));
            assert_eq!((c.rows, c.favourable_labels), (rows, favourable));
            assert!(report
                .warnings
                .iter()
                .any(|w| w.contains(&format!("cell '{name}'")) && w.contains("too small")));
        } else {
            assert_eq!(
                shown.map(|c| (c.1, c.2)),
                Some((rows, favourable)),
                "{name}"
            );
        }
    }
    assert_eq!(both.too_small.len(), 2);
    // Left out of every figure: the model's rates and the worst groups name assessed cells only.
    assert_eq!(both.model_groups.len(), assessed.len());
    let worst = both.worst.equal_opportunity_difference.as_ref().unwrap();
    assert!(assessed.iter().any(|c| c.0 == worst.group));
    // The model's test rows by cell add up to the assessed rows' share of a test part.
    let test_rows: f64 = both.model_groups.iter().map(|g| g.test_rows).sum();
    let assessed_rows: usize = assessed.iter().map(|c| c.1).sum();
    assert!(
        (test_rows / report.model.test_rows as f64 - assessed_rows as f64 / 32_561.0).abs() < 0.01
    );
    // The first attribute is reported as with one attribute.
    assert_eq!(report.groups.len(), 2);
    // Over every attribute, the worst group by EOD is the worst of the three readings.
    let over = report
        .worst_over_attributes
        .as_ref()
        .unwrap()
        .equal_opportunity_difference
        .as_ref()
        .unwrap();
    let readings = [
        (
            "sex",
            report.model.worst.equal_opportunity_difference.as_ref(),
        ),
        ("race", race.worst.equal_opportunity_difference.as_ref()),
        (
            "sex × race",
            both.worst.equal_opportunity_difference.as_ref(),
        ),
    ];
    let (attribute, worst) = readings
        .iter()
        .map(|(a, w)| (*a, w.unwrap()))
        .max_by(|a, b| a.1.unfairness.total_cmp(&b.1.unfairness))
        .unwrap();
    assert_eq!(
        (
            over.attribute.as_str(),
            over.group.as_str(),
            over.unfairness
        ),
        (attribute, worst.group.as_str(), worst.unfairness)
    );
}

#[test]
fn german_credit_by_sex_from_codes_and_age_from_a_threshold_at_once() {
    let Some(data) = shared("german-credit/german.data") else {
        return;
    };
    let data = data.to_str().unwrap();
    let mut args = super::german_flags(data);
    args.extend([
        "--protected",
        "personal,age,foreign",
        "--groups",
        "personal:female=A92,A95;male=*",
        "--groups",
        "age:young=<=25;older=>25",
        "--reference",
        "age=older",
        "--intersections",
        "--repeats",
        "4",
        "--no-project",
    ]);
    let (report, one) = baseline_report(&args, Some(1));
    // ../shared/data/german-credit/PROVENANCE.md: female 201/310, male 499/690; age <= 25
    // 110/190, > 25 590/810. The cells, counted with awk from german.data (personal is field
    // 9, age 13, credit 21): female & young 105 (58 good), female & older 205 (143), male &
    // young 85 (52), male & older 605 (447).
    let sex: Vec<(String, usize, usize)> = report
        .groups
        .iter()
        .map(|g| (g.name.clone(), g.rows, g.favourable_labels))
        .collect();
    assert_eq!(
        sex,
        [("female".into(), 310, 201), ("male".into(), 690, 499)]
    );
    let age = section(&report, "age");
    assert_eq!(
        cells(age),
        [("young".into(), 190, 110), ("older".into(), 810, 590)]
    );
    assert_eq!(age.reference.name, "older");
    assert_eq!(age.reference.rule, "named with --reference");
    // Foreign worker (field 20): A201 yes 963 rows (667 good), A202 no 37 (33), by awk; each
    // value a group (PROVENANCE.md: A201 yes, A202 no).
    assert_eq!(
        cells(section(&report, "foreign")),
        [("A201".into(), 963, 667), ("A202".into(), 37, 33)]
    );
    let mut both = cells(section(&report, "personal × age"));
    both.sort();
    assert_eq!(
        both,
        [
            ("female & older".into(), 205, 143),
            ("female & young".into(), 105, 58),
            ("male & older".into(), 605, 447),
            ("male & young".into(), 85, 52),
        ]
    );
    // Three attributes and their three intersections from one set of trials, byte-identical
    // on two threads.
    assert_eq!(report.attributes.len(), 2 + 3);
    let (_, two) = baseline_report(&args, Some(2));
    assert_eq!(one, two, "the thread count changed the report");
}

#[test]
fn a_project_file_lists_the_protected_attributes() {
    let Some(data) = shared("german-credit/german.data") else {
        return;
    };
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(
        dir.path().join("acquest.toml"),
        format!(
            "data = {:?}\nno-header = true\ncolumns = {:?}\ntarget = \"credit\"\nfavourable = \"1\"\n\
             protected = [\"personal\", \"age\"]\ngroups = [\"personal:female=A92,A95;male=*\", \"age:young=<=25;older=>25\"]\nrepeats = 3\n",
            data.to_str().unwrap(),
            GERMAN_COLUMNS.split(',').collect::<Vec<_>>()
        ),
    )
    .unwrap();
    let out = acquest()
        .current_dir(dir.path())
        .args(["baseline", "--quiet", "--json", "-"])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let report: BaselineReport = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(report.attributes.len(), 1);
    assert_eq!(report.attributes[0].attribute, "age");
    // The terminal shows a line per further attribute, the full tables with --detail.
    let text = |extra: &[&str]| {
        let out = acquest()
            .current_dir(dir.path())
            .args(["baseline", "--quiet"])
            .args(extra)
            .output()
            .unwrap();
        String::from_utf8(out.stdout).unwrap()
    };
    let (short, long) = (text(&[]), text(&["--detail"]));
    assert!(short.contains("By 'age': 2 groups, reference 'older'"));
    assert!(!short.contains("Groups by 'age'") && long.contains("Groups by 'age'"));
    // The curves of every attribute come from the same trials: the first's as with one
    // attribute, the others' by their own groups.
    let out = acquest()
        .current_dir(dir.path())
        .args(["curves", "--quiet", "--json", "-"])
        .output()
        .unwrap();
    let curves: acquest::report::CurvesReport = serde_json::from_slice(&out.stdout).unwrap();
    let age = &curves.attributes[0];
    assert_eq!(age.attribute, "age");
    assert_eq!(age.curves.len(), 3 * 2, "three rates of each age group");
    assert!(age
        .disparities
        .iter()
        .any(|d| d.measure == "equal opportunity difference" && d.group == "young"));
    assert_eq!(
        age.curves[0].anchors.len(),
        curves.curves[0].anchors.len(),
        "the same anchors"
    );
    // The commands that assess the first attribute only say so.
    let demo = super::demo_folder();
    let by_disability_and_region = |command: &str| {
        super::json_of(
            acquest()
                .current_dir(demo.path())
                .args([command, "--quiet", "--protected", "disability,region"])
                .args(["--json", "-"]),
        )
    };
    let appraisal: acquest::report::AppraisalReport =
        serde_json::from_value(by_disability_and_region("appraise")).unwrap();
    assert!(appraisal
        .warnings
        .iter()
        .any(|w| w.contains("assesses 'disability' (the first) only")));
    // Each pilot's paired unfairness difference is also given by region, over every repeat.
    for option in appraisal.options.iter().filter(|o| o.pilot.is_some()) {
        let by = &option
            .pilot
            .as_ref()
            .unwrap()
            .unfairness_difference_by_attribute;
        assert_eq!(by.len(), 1);
        assert_eq!(by[0].attribute, "region");
        assert_eq!(
            by[0].difference.as_ref().unwrap().trials,
            appraisal.inputs.repeats
        );
    }
    // Today by region is the baseline's: the same trials, the same worst group and figure.
    let baseline: BaselineReport =
        serde_json::from_value(by_disability_and_region("baseline")).unwrap();
    let worst = baseline.attributes[0]
        .worst
        .equal_opportunity_difference
        .as_ref()
        .unwrap();
    let today = &appraisal.today_by_attribute[0];
    assert_eq!(today.attribute, "region");
    assert_eq!(today.worst_group.as_deref(), Some(worst.group.as_str()));
    assert!((today.unfairness.unwrap() - worst.unfairness).abs() < 1e-12);
}

/// A rows option on a cell of two attributes (the demo's declared applicants in the East, 134
/// rows, 48 favourable, by awk on the demo's file): its own curves, in which only that cell's
/// rows grow, valued at every step and offered to the plan; the parts of the cell may be
/// written in either order.
#[test]
fn a_rows_option_on_a_cell_of_two_attributes_is_valued_and_planned() {
    let demo = super::demo_folder();
    let sheet = std::fs::read_to_string(demo.path().join("costs.csv")).unwrap();
    let plan = |cell: &str| {
        std::fs::write(
            demo.path().join("cells.csv"),
            format!(
                "{sheet}outreach-east,rows,{cell},10.00,500,300,100,yes,Outreach in the East\n"
            ),
        )
        .unwrap();
        let report = super::json_of(
            acquest()
                .current_dir(demo.path())
                .args([
                    "plan",
                    "--quiet",
                    "--no-pilot-advice",
                    "--costs",
                    "cells.csv",
                ])
                .args(["--protected", "disability,region", "--intersections"])
                .args(["--json", "-"]),
        );
        serde_json::from_value::<acquest::report::PlanReport>(report).unwrap()
    };
    let report = plan("disability=declared&region=East");
    // The cell itself, as the baseline counts it.
    let baseline: BaselineReport = serde_json::from_value(super::json_of(
        acquest()
            .current_dir(demo.path())
            .args(["baseline", "--quiet", "--protected", "disability,region"])
            .args(["--intersections", "--json", "-"]),
    ))
    .unwrap();
    let cell = section(&baseline, "disability × region")
        .groups
        .iter()
        .find(|g| g.name == "declared & East")
        .map(|g| (g.rows, g.favourable_labels));
    assert_eq!(cell, Some((134, 48)));
    let option = report
        .appraisal
        .options
        .iter()
        .find(|o| o.name == "outreach-east")
        .unwrap();
    assert_eq!(option.kind, acquest::report::OptionKind::GroupRows);
    assert_eq!(
        option.target.as_deref(),
        Some("disability=declared & region=East")
    );
    let steps: Vec<usize> = option.steps.iter().map(|s| s.new_rows).collect();
    assert_eq!(steps, [100, 200, 300]);
    assert!(option.estimate.accuracy_gain.low.is_some());
    // Ranked with the others and offered to the plan (the demo's curves are flat, so a plan
    // does not buy it: its gain is no change).
    assert!(report
        .appraisal
        .ranking
        .iter()
        .any(|r| r.name == "outreach-east"));
    assert_eq!(option.estimate.cost, 500.0 + 10.0 * 300.0);
    // The parts in the other order are the same cell.
    let again = plan("region=East&disability=declared");
    let same = again
        .appraisal
        .options
        .iter()
        .find(|o| o.name == "outreach-east")
        .unwrap();
    assert_eq!(same.estimate, option.estimate);
}

/// The backtest holds back the rows of a cell of two attributes and buys them back for real:
/// the option's rows are the held rows of that cell (counted here from the demo's file).
#[test]
fn the_backtest_holds_back_the_rows_of_a_cell() {
    let demo = super::demo_folder();
    let report: acquest::report::BacktestReport = serde_json::from_value(super::json_of(
        acquest()
            .current_dir(demo.path())
            .args(["backtest", "--quiet", "--rounds", "1", "--hold-rows", "0.4"])
            .args(["--protected", "disability,region", "--intersections"])
            .args(["--hold-group", "region=East&disability=declared"])
            .args(["--json", "-"]),
    ))
    .unwrap();
    let round = &report.rounds[0];
    let cell = round
        .options
        .iter()
        .find(|o| o.option == "held-back rows of declared & East")
        .expect("the cell's option");
    assert_eq!(cell.kind, acquest::report::OptionKind::GroupRows);
    // 134 rows of the cell, 40% of them held within every (disability group, label) cell of
    // the split: between a third and a half of them.
    assert!((40..=67).contains(&cell.rows), "{} held rows", cell.rows);
    assert!(cell.quantities[0].realised.mean.is_finite());
}
