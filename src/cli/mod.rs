//! Command-line front end: clap types with no logic, progress bars, output files, exit codes
//! (0 done, 1 failure, 2 bad input or usage).

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::Context;
use clap::Parser;

use acquest::decide::plan;
use acquest::estimate::{appraise, baseline, learning};
use acquest::settings::{AppraisalSettings, Choices, CurveSettings, Settings, PROJECT_FILE};
use acquest::{demo, render};

mod args;
mod progress;

use args::{BacktestArgs, Cli, Command, OutputArgs, RenderArgs};
use progress::{progress_bar, shown_on, CLOCK, STARTED};

fn run_baseline(choices: Choices, output: &OutputArgs) -> anyhow::Result<()> {
    let settings = Settings::from_choices(choices)?;
    let bar = progress_bar(output.quiet);
    let show = shown_on(&bar);
    let report = baseline::run(&settings, &show)?;
    bar.finish_and_clear();
    write_outputs(&report, render::baseline_text(&report), output)
}

/// Documents to write beside the JSON report.
struct Documents {
    markdown: Option<PathBuf>,
    html: Option<PathBuf>,
}

impl Documents {
    /// Writes a plan report's documents.
    fn write(
        &self,
        report: &acquest::report::PlanReport,
        output: &OutputArgs,
    ) -> anyhow::Result<()> {
        self.write_with(
            || render::plan_markdown(report),
            || render::html::plan_html(report),
            output,
        )
    }

    /// Writes the documents that were asked for, each made only when asked.
    fn write_with(
        &self,
        markdown: impl FnOnce() -> String,
        html: impl FnOnce() -> String,
        output: &OutputArgs,
    ) -> anyhow::Result<()> {
        if let Some(path) = &self.markdown {
            std::fs::write(path, markdown()).with_context(|| {
                format!("cannot write the Markdown report to {}", path.display())
            })?;
            status(
                output,
                &format!("Markdown report written to {}", path.display()),
            );
        }
        if let Some(path) = &self.html {
            std::fs::write(path, html())
                .with_context(|| format!("cannot write the HTML report to {}", path.display()))?;
            status(
                output,
                &format!("HTML report written to {}", path.display()),
            );
        }
        Ok(())
    }
}

/// A saved report of one kind, read from its JSON.
fn saved<T: serde::de::DeserializeOwned>(
    value: serde_json::Value,
    path: &Path,
    kind: &str,
) -> anyhow::Result<T> {
    serde_json::from_value(value).map_err(|e| {
        acquest::Error::Format {
            path: path.to_path_buf(),
            reason: format!("its command is '{kind}', but it does not read as that report: {e}"),
        }
        .into()
    })
}

/// Renders a saved report of any kind as the documents asked for.
fn run_render(args: RenderArgs) -> anyhow::Result<()> {
    if args.markdown.is_none() && args.html.is_none() {
        return Err(acquest::Error::setting(
            "--markdown",
            "name --markdown FILE or --html FILE (or both)",
        )
        .into());
    }
    let path = &args.report;
    let value = read_report(path)?;
    let kind = value
        .get("command")
        .and_then(|c| c.as_str())
        .unwrap_or("")
        .to_string();
    let documents = Documents {
        markdown: args.markdown,
        html: args.html,
    };
    let output = OutputArgs {
        json: None,
        quiet: true,
        timings: false,
    };
    let document = match kind.as_str() {
        "plan" => {
            let report: acquest::report::PlanReport = saved(value, path, &kind)?;
            return documents.write(&report, &output);
        }
        "baseline" => render::baseline_document(&saved(value, path, &kind)?),
        "curves" => render::curves_document(&saved(value, path, &kind)?),
        "appraise" => render::appraisal_document(&saved(value, path, &kind)?),
        "backtest" => render::backtest_document(&saved(value, path, &kind)?),
        other => {
            return Err(acquest::Error::Format {
                path: path.clone(),
                reason: format!(
                    "its command is '{other}'; render reads the reports of baseline, curves, appraise, plan and backtest"
                ),
            }
            .into())
        }
    };
    documents.write_with(|| document.markdown(), || document.html(), &output)
}

fn run_plan(choices: Choices, documents: &Documents, output: &OutputArgs) -> anyhow::Result<()> {
    let settings = Settings::from_choices(choices.clone())?;
    let appraisal = AppraisalSettings::from_choices(&choices)?;
    let rules = acquest::settings::plan_rules(&choices)?;
    let budgets = acquest::settings::frontier_budgets(&choices)?;
    let bar = progress_bar(output.quiet);
    let show = shown_on(&bar);
    let report = plan::run(&settings, &appraisal, &rules, &budgets, &show)?;
    bar.finish_and_clear();
    write_outputs(&report, render::plan_text(&report), output)?;
    documents.write(&report, output)
}

fn run_saved_plan(
    path: &Path,
    choices: &Choices,
    documents: &Documents,
    output: &OutputArgs,
) -> anyhow::Result<()> {
    let rules = acquest::settings::plan_rules(choices)?;
    let budgets = acquest::settings::frontier_budgets(choices)?;
    let mut value = read_report(path)?;
    if value.get("command").and_then(|c| c.as_str()) == Some("plan") {
        value = value["appraisal"].take();
    }
    let appraisal: acquest::report::AppraisalReport =
        serde_json::from_value(value).map_err(|e| acquest::Error::Format {
            path: path.to_path_buf(),
            reason: format!(
                "not an appraisal written by `acquest appraise --json` (or a plan's): {e}"
            ),
        })?;
    let report = plan::run_on_saved(appraisal, &rules, &budgets)?;
    write_outputs(&report, render::plan_text(&report), output)?;
    documents.write(&report, output)
}

/// Reads a JSON report written by acquest, checking that this acquest reads its format.
fn read_report(path: &Path) -> anyhow::Result<serde_json::Value> {
    let format_error = |reason: String| acquest::Error::Format {
        path: path.to_path_buf(),
        reason,
    };
    let text = std::fs::read_to_string(path).map_err(|e| acquest::Error::File {
        path: path.to_path_buf(),
        reason: e.to_string(),
    })?;
    let value: serde_json::Value =
        serde_json::from_str(&text).map_err(|e| format_error(format!("not a JSON report: {e}")))?;
    if value.get("format").and_then(|v| v.as_str()) != Some("acquest-report") {
        return Err(format_error("not a report written by acquest".into()).into());
    }
    let version = value.get("format_version").and_then(|v| v.as_u64());
    if version != Some(u64::from(acquest::report::FORMAT_VERSION)) {
        return Err(format_error(format!(
            "written in report format {}, and this acquest reads format {}: \
             run the command again to write it anew (docs/report.md, Changes)",
            version.map_or("unknown".into(), |v| v.to_string()),
            acquest::report::FORMAT_VERSION
        ))
        .into());
    }
    Ok(value)
}

fn run_appraise(choices: Choices, output: &OutputArgs) -> anyhow::Result<()> {
    let settings = Settings::from_choices(choices.clone())?;
    let appraisal = AppraisalSettings::from_choices(&choices)?;
    let bar = progress_bar(output.quiet);
    let show = shown_on(&bar);
    let report = appraise::run(&settings, &appraisal, &show)?;
    bar.finish_and_clear();
    write_outputs(&report, render::appraisal_text(&report), output)
}

fn run_backtest(args: BacktestArgs) -> anyhow::Result<()> {
    let mut choices = args.data.choices(args.trials)?;
    choices.fairness = args.fairness.or(choices.fairness.take());
    choices.hold_rows = args.hold_rows.or(choices.hold_rows);
    choices.hold_features = args.hold_features.or(choices.hold_features.take());
    choices.pilot = args.pilot.or(choices.pilot);
    choices.hold_group = args.hold_group.or(choices.hold_group.take());
    choices.rounds = args.rounds.or(choices.rounds);
    let settings = Settings::from_choices(choices.clone())?;
    let backtest = acquest::settings::backtest_settings(&choices)?;
    let bar = progress_bar(args.output.quiet);
    let show = shown_on(&bar);
    let report = acquest::estimate::backtest::run(&settings, &backtest, &show)?;
    bar.finish_and_clear();
    write_outputs(&report, render::backtest_text(&report), &args.output)
}

fn run_curves(choices: Choices, svg: Option<&Path>, output: &OutputArgs) -> anyhow::Result<()> {
    let settings = Settings::from_choices(choices.clone())?;
    let curve_settings = CurveSettings::from_choices(&choices)?;
    let bar = progress_bar(output.quiet);
    let show = shown_on(&bar);
    let report = learning::run(&settings, &curve_settings, &show)?;
    bar.finish_and_clear();
    if let Some(path) = svg {
        std::fs::write(path, render::svg::curves_svg(&report))
            .with_context(|| format!("cannot write the chart to {}", path.display()))?;
    }
    write_outputs(&report, render::curves_text(&report), output)?;
    if let Some(path) = svg {
        status(output, &format!("Chart written to {}", path.display()));
    }
    Ok(())
}

/// A line about files written: on stdout, unless the JSON report goes there.
fn status(output: &OutputArgs, line: &str) {
    if output.json.as_deref() == Some(Path::new("-")) {
        eprintln!("{line}");
    } else {
        println!("{line}");
    }
}

fn write_outputs<T: serde::Serialize>(
    report: &T,
    text: String,
    output: &OutputArgs,
) -> anyhow::Result<()> {
    match output.json.as_deref() {
        Some(path) if path == Path::new("-") => print!("{}", render::json(report)),
        Some(path) => {
            std::fs::write(path, render::json(report))
                .with_context(|| format!("cannot write the JSON report to {}", path.display()))?;
            print!("{text}");
            println!("\nJSON report written to {}", path.display());
        }
        None => print!("{text}"),
    }
    if output.timings {
        eprint!("{}", CLOCK.report(*STARTED));
    }
    Ok(())
}

fn run(cli: Cli) -> anyhow::Result<()> {
    match cli.command {
        Command::Baseline(args) => {
            let choices = args.data.choices(args.trials)?;
            run_baseline(choices, &args.output)
        }
        Command::Curves(args) => {
            let args = *args;
            let mut choices = args.data.choices(args.trials)?;
            choices.at = args.at.or(choices.at.take());
            choices.smallest = args.smallest.or(choices.smallest);
            run_curves(choices, args.svg.as_deref(), &args.output)
        }
        Command::Appraise(args) => {
            let mut args = *args;
            let choices = args.choices()?;
            run_appraise(choices, &args.output)
        }
        Command::Plan(args) => {
            let mut args = *args;
            let mut choices = args.appraise.choices()?;
            choices.budget = args.budget.or(choices.budget);
            choices.budgets = args.budgets.or(choices.budgets);
            choices.cautious = args.cautious.then_some(true).or(choices.cautious);
            choices.keep_accuracy = args.keep_accuracy.then_some(true).or(choices.keep_accuracy);
            choices.no_adverse_impact = args
                .no_adverse_impact
                .then_some(true)
                .or(choices.no_adverse_impact);
            choices.held_features =
                Some(args.held_features || choices.held_features.unwrap_or(false));
            let output = args.appraise.output;
            let documents = Documents {
                markdown: args.markdown,
                html: args.html,
            };
            match args.appraisal {
                Some(path) => run_saved_plan(&path, &choices, &documents, &output),
                None => run_plan(choices, &documents, &output),
            }
        }
        Command::Backtest(args) => run_backtest(*args),
        Command::Render(args) => run_render(args),
        Command::Demo(args) => {
            let folder = args
                .out
                .unwrap_or_else(|| std::env::temp_dir().join("acquest-demo"));
            let size = demo::DemoSize {
                rows: args.rows.unwrap_or(demo::DEMO_ROWS),
                extra_columns: args.extra_columns.unwrap_or(0),
            };
            if size.rows < 500 {
                return Err(acquest::Error::setting(
                    "--rows",
                    format!("the demo needs at least 500 rows, not {}", size.rows),
                )
                .into());
            }
            demo::write_demo(&folder, size)?;
            println!(
                "Demo scenario (Larkfield Placement Fund, invented) written to {}: \
                 applications.csv, costs.csv, {PROJECT_FILE}",
                folder.display()
            );
            if args.parquet {
                demo::write_parquet_copy(&folder)?;
                println!("The data also as Parquet: applications.parquet");
            }
            if args.no_run {
                return Ok(());
            }
            println!("Running the baseline, the learning curves, and the appraisal and budgeted plan of the cost sheet on it.\n");
            let choices = Choices::from_project_file(&folder.join(PROJECT_FILE))?;
            let output = |name: &str| OutputArgs {
                json: Some(folder.join(name)),
                quiet: args.quiet,
                timings: false,
            };
            run_baseline(choices.clone(), &output("baseline.json"))?;
            println!();
            run_curves(
                choices.clone(),
                Some(&folder.join("curves.svg")),
                &output("curves.json"),
            )?;
            println!();
            run_plan(
                choices,
                &Documents {
                    markdown: Some(folder.join("report.md")),
                    html: Some(folder.join("report.html")),
                },
                &output("report.json"),
            )
        }
    }
}

/// Runs the command line and returns the exit code.
pub fn main() -> ExitCode {
    std::sync::LazyLock::force(&STARTED);
    let cli = Cli::parse();
    match run(cli) {
        Ok(()) => ExitCode::SUCCESS,
        Err(error) => {
            eprintln!("error: {error:#}");
            let input = error
                .downcast_ref::<acquest::Error>()
                .is_some_and(acquest::Error::is_input);
            ExitCode::from(if input { 2 } else { 1 })
        }
    }
}
