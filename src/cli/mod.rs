//! Command-line front end: clap types with no logic, progress bars, output files, exit codes
//! (0 done, 1 failure, 2 bad input or usage).

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::Context;
use clap::Parser;

use acquest::decide::plan;
use acquest::estimate::{appraise, baseline, learning};
use acquest::settings::{AppraisalSettings, Choices, CurveSettings, Settings, PROJECT_FILE};
use acquest::{demo, files, render};

mod args;
mod progress;

use args::{BacktestArgs, Cli, Command, OutputArgs, RenderArgs};
use progress::{progress_bar, shown_on, CLOCK, STARTED};

fn run_baseline(choices: Choices, detail: bool, output: &OutputArgs) -> anyhow::Result<()> {
    let settings = Settings::from_choices(choices)?;
    let bar = progress_bar(output.quiet);
    let show = shown_on(&bar);
    let report = baseline::run(&settings, &show)?;
    bar.finish_and_clear();
    let document = render::baseline_document(&report);
    let text = if detail {
        document.plain_detailed()
    } else {
        document.plain()
    };
    write_outputs(&report, text, output)
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
            write_file(path, &markdown(), "Markdown report", output)?;
        }
        if let Some(path) = &self.html {
            write_file(path, &html(), "HTML report", output)?;
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
    // With no file asked for, the report's terminal view goes to standard output.
    let terminal = args.markdown.is_none() && args.html.is_none();
    let to_standard = check_outputs(&[
        ("--markdown", args.markdown.as_deref()),
        ("--html", args.html.as_deref()),
    ])?;
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
        to_standard,
    };
    let document = match kind.as_str() {
        "plan" => {
            let report: acquest::report::PlanReport = saved(value, path, &kind)?;
            if terminal {
                print!("{}", render::plan_text(&report));
                return Ok(());
            }
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
    if terminal {
        if args.detail {
            print!("{}", document.plain_detailed());
        } else {
            print!("{}", document.plain());
        }
        return Ok(());
    }
    documents.write_with(|| document.markdown(), || document.html(), &output)
}

fn run_plan(
    choices: Choices,
    advise: bool,
    documents: &Documents,
    output: &OutputArgs,
) -> anyhow::Result<()> {
    let settings = Settings::from_choices(choices.clone())?;
    let appraisal = AppraisalSettings::from_choices(&choices)?;
    let rules = acquest::settings::plan_rules(&choices)?;
    let budgets = acquest::settings::frontier_budgets(&choices)?;
    let bar = progress_bar(output.quiet);
    let show = shown_on(&bar);
    let report = plan::run(&settings, &appraisal, &rules, &budgets, advise, &show)?;
    bar.finish_and_clear();
    write_outputs(&report, render::plan_text(&report), output)?;
    documents.write(&report, output)
}

fn run_saved_plan(
    path: &Path,
    choices: &Choices,
    advise: bool,
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
    let report = plan::run_on_saved(appraisal, &rules, &budgets, advise)?;
    write_outputs(&report, render::plan_text(&report), output)?;
    documents.write(&report, output)
}

/// Reads a JSON report written by acquest, checking that this acquest reads its format.
fn read_report(path: &Path) -> anyhow::Result<serde_json::Value> {
    let format_error = |reason: String| acquest::Error::Format {
        path: path.to_path_buf(),
        reason,
    };
    let text = files::read_text(path).map_err(|e| acquest::Error::File {
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
    choices.check_growth = args.check_growth.or(choices.check_growth);
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
    write_outputs(&report, render::curves_text(&report), output)?;
    if let Some(path) = svg {
        write_file(path, &render::svg::curves_svg(&report), "Chart", output)?;
    }
    Ok(())
}

/// A line about files written: on stdout, unless an output goes there.
fn status(output: &OutputArgs, line: &str) {
    if output.to_standard {
        eprintln!("{line}");
    } else {
        println!("{line}");
    }
}

/// Writes one output whole (or to standard output for `-`), and says so.
fn write_file(path: &Path, contents: &str, what: &str, output: &OutputArgs) -> anyhow::Result<()> {
    if files::is_standard(path) {
        print!("{contents}");
        return Ok(());
    }
    files::write_text(path, contents).with_context(|| {
        format!(
            "cannot write the {} to {}",
            what.to_lowercase(),
            path.display()
        )
    })?;
    status(output, &format!("{what} written to {}", path.display()));
    Ok(())
}

/// Checks every output before any work: each can be written, and at most one goes to standard
/// output. Returns whether one does.
fn check_outputs(outputs: &[(&str, Option<&Path>)]) -> anyhow::Result<bool> {
    let mut standard: Option<&str> = None;
    for (flag, path) in outputs {
        let Some(path) = path else { continue };
        files::check_writable(path, flag)?;
        if files::is_standard(path) {
            if let Some(other) = standard {
                return Err(acquest::Error::setting(
                    flag,
                    format!("{other} already writes to standard output ('-'); only one output can"),
                )
                .into());
            }
            standard = Some(flag);
        }
    }
    Ok(standard.is_some())
}

fn write_outputs<T: serde::Serialize>(
    report: &T,
    text: String,
    output: &OutputArgs,
) -> anyhow::Result<()> {
    if !output.to_standard {
        print!("{text}");
    }
    if let Some(path) = output.json.as_deref() {
        if !files::is_standard(path) && !output.to_standard {
            println!();
        }
        write_file(path, &render::json(report), "JSON report", output)?;
    }
    if output.timings {
        eprint!("{}", CLOCK.report(*STARTED));
    }
    Ok(())
}

fn run(cli: Cli) -> anyhow::Result<()> {
    match cli.command {
        Command::Baseline(mut args) => {
            args.output.to_standard = check_outputs(&[("--json", args.output.json.as_deref())])?;
            let choices = args.data.choices(args.trials)?;
            run_baseline(choices, args.detail, &args.output)
        }
        Command::Curves(args) => {
            let mut args = *args;
            args.output.to_standard = check_outputs(&[
                ("--json", args.output.json.as_deref()),
                ("--svg", args.svg.as_deref()),
            ])?;
            let mut choices = args.data.choices(args.trials)?;
            choices.at = args.at.or(choices.at.take());
            choices.smallest = args.smallest.or(choices.smallest);
            run_curves(choices, args.svg.as_deref(), &args.output)
        }
        Command::Appraise(args) => {
            let mut args = *args;
            args.output.to_standard = check_outputs(&[("--json", args.output.json.as_deref())])?;
            let choices = args.choices()?;
            run_appraise(choices, &args.output)
        }
        Command::Plan(args) => {
            let mut args = *args;
            args.appraise.output.to_standard = check_outputs(&[
                ("--json", args.appraise.output.json.as_deref()),
                ("--markdown", args.markdown.as_deref()),
                ("--html", args.html.as_deref()),
            ])?;
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
            let advise = !args.no_pilot_advice;
            match args.appraisal {
                Some(path) => run_saved_plan(&path, &choices, advise, &documents, &output),
                None => run_plan(choices, advise, &documents, &output),
            }
        }
        Command::Backtest(args) => {
            let mut args = *args;
            args.output.to_standard = check_outputs(&[("--json", args.output.json.as_deref())])?;
            run_backtest(args)
        }
        Command::Render(args) => run_render(args),
        Command::Demo(args) => {
            let folder = args
                .out
                .unwrap_or_else(|| std::env::temp_dir().join("acquest-demo"));
            let size = demo::DemoSize {
                rows: args.rows.unwrap_or(demo::DEMO_ROWS),
                extra_columns: args.extra_columns.unwrap_or(0),
            };
            files::check_folder(&folder, "--out")?;
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
                to_standard: false,
            };
            run_baseline(choices.clone(), false, &output("baseline.json"))?;
            println!();
            run_curves(
                choices.clone(),
                Some(&folder.join("curves.svg")),
                &output("curves.json"),
            )?;
            println!();
            run_plan(
                choices,
                true,
                &Documents {
                    markdown: Some(folder.join("report.md")),
                    html: Some(folder.join("report.html")),
                },
                &output("report.json"),
            )
        }
    }
}

/// On Ctrl-C (or a termination signal) the files being written are removed before the run
/// ends, so that no partial file is left; nothing else is written then.
fn clean_up_when_interrupted() {
    use signal_hook::consts::{SIGINT, SIGTERM};
    let Ok(mut signals) = signal_hook::iterator::Signals::new([SIGINT, SIGTERM]) else {
        return;
    };
    std::thread::spawn(move || {
        if let Some(signal) = signals.forever().next() {
            files::remove_partial_files();
            eprintln!("\ninterrupted: nothing half-written is left");
            std::process::exit(128 + signal);
        }
    });
}

/// Runs the command line and returns the exit code.
pub fn main() -> ExitCode {
    std::sync::LazyLock::force(&STARTED);
    clean_up_when_interrupted();
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
