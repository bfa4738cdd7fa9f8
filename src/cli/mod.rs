//! Command-line front end: clap types with no logic, progress bars, output files, exit codes
//! (0 done, 1 failure, 2 bad input or usage).

use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::Context;
use clap::{Args, Parser, Subcommand};
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

use acquest::decide::plan;
use acquest::engine::trial::Progress;
use acquest::estimate::{appraise, baseline, learning};
use acquest::settings::{AppraisalSettings, Choices, CurveSettings, Settings, PROJECT_FILE};
use acquest::{demo, render};

#[derive(Parser)]
#[command(
    name = "acquest",
    version,
    args_override_self = true,
    about = "Should the data budget buy a new attribute or more records? Estimates accuracy and \
             group-fairness gains per unit of cost, with intervals."
)]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Data summary, groups, bias in the labels, and the current model's accuracy and fairness
    /// with intervals.
    Baseline(Box<BaselineArgs>),
    /// Learning curves of accuracy and of each group's rates, fitted and extrapolated, with the
    /// disparities they imply.
    Curves(Box<CurvesArgs>),
    /// Every option of a cost sheet valued: accuracy and fairness gains with intervals, cost,
    /// gain per 1,000; and what each feature already held does.
    Appraise(Box<AppraiseArgs>),
    /// The budgeted plan: which options to buy within the budget, and the best plan at other
    /// budgets.
    Plan(Box<PlanArgs>),
    /// How far the appraisal can be trusted on this data: hold rows and features back, appraise
    /// buying them, buy them for real, and compare predicted with realised gains.
    Backtest(Box<BacktestArgs>),
    /// Write the invented demo scenario to a folder and run it.
    Demo(DemoArgs),
    /// Render a saved plan report (JSON) as Markdown or HTML.
    Render(RenderArgs),
}

#[derive(Args)]
struct PlanArgs {
    #[command(flatten)]
    appraise: AppraiseArgs,
    /// The budget, in the cost sheet's currency.
    #[arg(long, value_name = "AMOUNT")]
    budget: Option<f64>,
    /// Score plans by the lower end of each utility interval.
    #[arg(long)]
    cautious: bool,
    /// Only plans whose accuracy gain is not negative.
    #[arg(long)]
    keep_accuracy: bool,
    /// Only plans after which no group's predicted selection rate is below four-fifths of the
    /// highest group's.
    #[arg(long)]
    no_adverse_impact: bool,
    /// Write the plan as Markdown to FILE, to paste into a proposal.
    #[arg(long, value_name = "FILE")]
    markdown: Option<PathBuf>,
    /// Write the plan as one self-contained HTML file with charts.
    #[arg(long, value_name = "FILE")]
    html: Option<PathBuf>,
}

#[derive(Args)]
struct BacktestArgs {
    #[command(flatten)]
    data: DataArgs,
    #[command(flatten)]
    trials: TrialArgs,
    /// Share of the rows to hold back and offer as an option to buy [default: 0.5].
    #[arg(long, value_name = "SHARE")]
    hold_rows: Option<f64>,
    /// Features to blank outside a random pilot and offer as options, comma-separated.
    #[arg(long, value_delimiter = ',', value_name = "COLUMNS")]
    hold_features: Option<Vec<String>>,
    /// Share of the remaining rows on which a held feature stays filled [default: 0.2].
    #[arg(long, value_name = "SHARE")]
    pilot: Option<f64>,
    /// Also offer the held-back rows of this group alone.
    #[arg(long, value_name = "GROUP")]
    hold_group: Option<String>,
    /// Random hold-outs to run [default: 3].
    #[arg(long, value_name = "N")]
    rounds: Option<usize>,
    /// Fairness measure the best option by fairness is named by: spd, di, eod or aod
    /// [default: eod]. All four are measured.
    #[arg(long, value_name = "MEASURE")]
    fairness: Option<String>,
    #[command(flatten)]
    output: OutputArgs,
}

#[derive(Args)]
struct RenderArgs {
    /// A JSON report written by `acquest plan --json` (or by the demo).
    report: PathBuf,
    /// Write it as Markdown to FILE.
    #[arg(long, value_name = "FILE")]
    markdown: Option<PathBuf>,
    /// Write it as self-contained HTML to FILE.
    #[arg(long, value_name = "FILE")]
    html: Option<PathBuf>,
}

#[derive(Args)]
struct AppraiseArgs {
    #[command(flatten)]
    data: DataArgs,
    #[command(flatten)]
    trials: TrialArgs,
    /// The cost sheet: CSV or JSON, one acquisition option a line.
    #[arg(long, value_name = "FILE")]
    costs: Option<PathBuf>,
    /// Name of the currency the costs are in.
    #[arg(long, value_name = "NAME")]
    currency: Option<String>,
    /// Fairness measure the utility counts: spd, di, eod or aod [default: eod].
    #[arg(long, value_name = "MEASURE")]
    fairness: Option<String>,
    /// Weight of the accuracy gain in the utility [default: 1].
    #[arg(long, value_name = "W")]
    weigh_accuracy: Option<f64>,
    /// Weight of the unfairness reduction in the utility [default: 1].
    #[arg(long, value_name = "W")]
    weigh_fairness: Option<f64>,
    #[command(flatten)]
    output: OutputArgs,
}

#[derive(Args)]
struct CurvesArgs {
    #[command(flatten)]
    data: DataArgs,
    #[command(flatten)]
    trials: TrialArgs,
    /// Training sizes to read the curves at: multiples of today's training rows (2x) or row
    /// counts, comma-separated [default: 2x,4x].
    #[arg(long, value_delimiter = ',', value_name = "SIZES")]
    at: Option<Vec<String>>,
    /// Smallest training size [default: the smallest at which every group and label has 10 rows].
    #[arg(long, value_name = "ROWS")]
    smallest: Option<usize>,
    /// Write a chart of the curves to FILE (SVG).
    #[arg(long, value_name = "FILE")]
    svg: Option<PathBuf>,
    #[command(flatten)]
    output: OutputArgs,
}

#[derive(Args)]
struct BaselineArgs {
    #[command(flatten)]
    data: DataArgs,
    #[command(flatten)]
    trials: TrialArgs,
    #[command(flatten)]
    output: OutputArgs,
}

#[derive(Args)]
struct DemoArgs {
    /// Folder to write the scenario into [default: acquest-demo in the system's temporary folder].
    #[arg(long)]
    out: Option<PathBuf>,
    /// Only write the files; run nothing.
    #[arg(long)]
    no_run: bool,
    /// No progress bars.
    #[arg(long)]
    quiet: bool,
    /// Draw this many applications instead of the scenario's 3,000 (pilots and the rows on
    /// offer scale with them), to try acquest on a large file.
    #[arg(long, value_name = "N")]
    rows: Option<usize>,
    /// Add this many invented survey columns to the data file.
    #[arg(long, value_name = "K")]
    extra_columns: Option<usize>,
    /// Also write the data as Parquet (applications.parquet).
    #[arg(long)]
    parquet: bool,
}

#[derive(Args, Default)]
struct DataArgs {
    /// Data file: CSV (any common separator) or Parquet.
    #[arg(long, value_name = "FILE")]
    data: Option<PathBuf>,
    /// Field separator: one character, or tab / space / comma / semicolon [default: sniffed].
    #[arg(long, value_name = "CHAR")]
    delimiter: Option<String>,
    /// The file has no header line; name the columns with --columns.
    #[arg(long)]
    no_header: bool,
    /// Column names for a file without a header, comma-separated.
    #[arg(long, value_delimiter = ',', value_name = "A,B,C")]
    columns: Option<Vec<String>>,
    /// More cell texts that mean "missing" (besides empty, ?, NA, N/A), comma-separated.
    #[arg(long, value_delimiter = ',', value_name = "TOKENS")]
    na: Option<Vec<String>>,
    /// Lines to skip at the top of the file.
    #[arg(long, value_name = "N")]
    skip_lines: Option<usize>,
    /// Skip lines that start with this text.
    #[arg(long, value_name = "PREFIX")]
    comment: Option<String>,
    /// The label column (binary).
    #[arg(long, value_name = "COLUMN")]
    target: Option<String>,
    /// The favourable label value (a trailing full stop on labels is ignored), or a threshold
    /// such as '>=10' for a numeric target.
    #[arg(long, value_name = "VALUE")]
    favourable: Option<String>,
    /// The protected attribute column.
    #[arg(long, value_name = "COLUMN")]
    protected: Option<String>,
    /// Reference group [default: the group with the highest favourable rate in the labels].
    #[arg(long, value_name = "GROUP")]
    reference: Option<String>,
    /// Form groups from the protected column: 'female=A92,A95;male=*' (codes, * for the rest)
    /// or 'young=<=25;older=>25' (a numeric threshold).
    #[arg(long, value_name = "RULES")]
    groups: Option<String>,
    /// Train on these columns only, comma-separated [default: every other column].
    #[arg(long, value_delimiter = ',', value_name = "COLUMNS")]
    features: Option<Vec<String>>,
    /// Leave these columns out, comma-separated.
    #[arg(long, value_delimiter = ',', value_name = "COLUMNS")]
    exclude: Option<Vec<String>>,
    /// Read these columns as categories even if their values look like numbers.
    #[arg(long, value_delimiter = ',', value_name = "COLUMNS")]
    categorical: Option<Vec<String>>,
    /// Let the model see the protected attribute.
    #[arg(long)]
    use_protected: bool,
    /// Project file with default settings [default: ./acquest.toml when present].
    #[arg(long, value_name = "FILE")]
    project: Option<PathBuf>,
    /// Do not read ./acquest.toml.
    #[arg(long, conflicts_with = "project")]
    no_project: bool,
}

#[derive(Args, Default)]
struct TrialArgs {
    /// Model family: logistic or tree [default: logistic].
    #[arg(long, value_name = "FAMILY")]
    model: Option<String>,
    /// Repeated train/test trials [default: 10].
    #[arg(long, value_name = "R")]
    repeats: Option<usize>,
    /// Share of rows held out for testing in each trial [default: 0.3].
    #[arg(long, value_name = "SHARE")]
    test_fraction: Option<f64>,
    /// Master seed; the same inputs and seed give the same report.
    #[arg(long, value_name = "N")]
    seed: Option<u64>,
    /// Confidence level of the intervals [default: 0.9].
    #[arg(long, value_name = "LEVEL")]
    confidence: Option<f64>,
    /// Most training rows any one trial uses; larger data are subsampled per trial and today's
    /// size is read off the curves by extrapolation [default: 40000].
    #[arg(long, value_name = "ROWS")]
    max_train_rows: Option<usize>,
}

#[derive(Args)]
struct OutputArgs {
    /// Write the JSON report to FILE ('-' for standard output, in place of the table).
    #[arg(long, value_name = "FILE")]
    json: Option<PathBuf>,
    /// No progress bars.
    #[arg(long)]
    quiet: bool,
    /// When done, print the wall time of each stage and the models fitted to standard error.
    #[arg(long)]
    timings: bool,
}

impl DataArgs {
    fn choices(self, trials: TrialArgs) -> anyhow::Result<Choices> {
        let flags = Choices {
            data: self.data,
            delimiter: self.delimiter,
            no_header: self.no_header.then_some(true),
            columns: self.columns,
            na: self.na,
            skip_lines: self.skip_lines,
            comment: self.comment,
            target: self.target,
            favourable: self.favourable,
            protected: self.protected,
            reference: self.reference,
            groups: self.groups,
            features: self.features,
            exclude: self.exclude,
            categorical: self.categorical,
            use_protected: self.use_protected.then_some(true),
            model: trials.model,
            repeats: trials.repeats,
            test_fraction: trials.test_fraction,
            seed: trials.seed,
            confidence: trials.confidence,
            max_train_rows: trials.max_train_rows,
            ..Choices::default()
        };
        let project = match (self.project, self.no_project) {
            (Some(path), _) => Some(path),
            (None, false) if Path::new(PROJECT_FILE).is_file() => Some(PathBuf::from(PROJECT_FILE)),
            _ => None,
        };
        Ok(match project {
            Some(path) => flags.over(Choices::from_project_file(&path)?),
            None => flags,
        })
    }
}

/// Wall time per stage, for `--timings`.
#[derive(Default)]
struct StageClock {
    /// Stages in the order they started, with their total time.
    stages: std::sync::Mutex<Vec<(&'static str, std::time::Duration)>>,
    current: std::sync::Mutex<Option<(&'static str, std::time::Instant)>>,
}

impl StageClock {
    fn enter(&self, stage: &'static str) {
        let Ok(mut current) = self.current.lock() else {
            return;
        };
        if current.is_some_and(|(s, _)| s == stage) {
            return;
        }
        if let Some((previous, since)) = current.take() {
            self.add(previous, since.elapsed());
        }
        *current = Some((stage, std::time::Instant::now()));
    }

    fn add(&self, stage: &'static str, time: std::time::Duration) {
        if let Ok(mut stages) = self.stages.lock() {
            match stages.iter_mut().find(|(s, _)| *s == stage) {
                Some((_, total)) => *total += time,
                None => stages.push((stage, time)),
            }
        }
    }

    /// The report printed by `--timings`.
    fn report(&self, started: std::time::Instant) -> String {
        if let Ok(mut current) = self.current.lock() {
            if let Some((stage, since)) = current.take() {
                self.add(stage, since.elapsed());
            }
        }
        let mut out = format!(
            "timings: {:.1} s in all, {} models fitted ({:.1} a second)\n",
            started.elapsed().as_secs_f64(),
            acquest::engine::model::fits_so_far(),
            acquest::engine::model::fits_so_far() as f64
                / started.elapsed().as_secs_f64().max(1e-9)
        );
        if let Ok(stages) = self.stages.lock() {
            for (stage, time) in stages.iter() {
                out.push_str(&format!("  {stage:>20}: {:.1} s\n", time.as_secs_f64()));
            }
        }
        out
    }
}

static CLOCK: std::sync::LazyLock<StageClock> = std::sync::LazyLock::new(StageClock::default);
static STARTED: std::sync::LazyLock<std::time::Instant> =
    std::sync::LazyLock::new(std::time::Instant::now);

/// A progress bar on stderr, hidden when stderr is not a terminal or with --quiet.
fn progress_bar(quiet: bool) -> ProgressBar {
    let bar = ProgressBar::with_draw_target(
        None,
        if quiet {
            ProgressDrawTarget::hidden()
        } else {
            ProgressDrawTarget::stderr()
        },
    );
    bar.set_style(
        ProgressStyle::with_template(
            "{msg:>20} [{bar:30}] {pos}/{len} ({eta} left in this stage; {elapsed} in all)",
        )
        .unwrap_or_else(|_| ProgressStyle::default_bar())
        .progress_chars("=> "),
    );
    bar
}

/// A progress sink that moves `bar`.
fn shown_on(bar: &ProgressBar) -> impl Fn(Progress) + Sync + '_ {
    move |p: Progress| {
        CLOCK.enter(p.stage);
        bar.set_message(p.stage);
        bar.set_length(p.total as u64);
        bar.set_position(p.done as u64);
    }
}

fn run_baseline(choices: Choices, output: &OutputArgs) -> anyhow::Result<()> {
    let settings = Settings::from_choices(choices)?;
    let bar = progress_bar(output.quiet);
    let show = shown_on(&bar);
    let report = baseline::run(&settings, &show)?;
    bar.finish_and_clear();
    write_outputs(&report, render::baseline_text(&report), output)
}

impl AppraiseArgs {
    fn choices(&mut self) -> anyhow::Result<Choices> {
        let data = std::mem::take(&mut self.data);
        let trials = std::mem::take(&mut self.trials);
        let mut choices = data.choices(trials)?;
        choices.costs = self.costs.take().or(choices.costs.take());
        choices.currency = self.currency.take().or(choices.currency.take());
        choices.fairness = self.fairness.take().or(choices.fairness.take());
        choices.weigh_accuracy = self.weigh_accuracy.or(choices.weigh_accuracy);
        choices.weigh_fairness = self.weigh_fairness.or(choices.weigh_fairness);
        Ok(choices)
    }
}

/// Documents to write beside the JSON report.
struct Documents {
    markdown: Option<PathBuf>,
    html: Option<PathBuf>,
}

impl Documents {
    fn write(
        &self,
        report: &acquest::report::PlanReport,
        output: &OutputArgs,
    ) -> anyhow::Result<()> {
        if let Some(path) = &self.markdown {
            std::fs::write(path, render::plan_markdown(report)).with_context(|| {
                format!("cannot write the Markdown report to {}", path.display())
            })?;
            status(
                output,
                &format!("Markdown report written to {}", path.display()),
            );
        }
        if let Some(path) = &self.html {
            std::fs::write(path, render::html::plan_html(report))
                .with_context(|| format!("cannot write the HTML report to {}", path.display()))?;
            status(
                output,
                &format!("HTML report written to {}", path.display()),
            );
        }
        Ok(())
    }
}

fn run_plan(choices: Choices, documents: &Documents, output: &OutputArgs) -> anyhow::Result<()> {
    let settings = Settings::from_choices(choices.clone())?;
    let appraisal = AppraisalSettings::from_choices(&choices)?;
    let rules = acquest::settings::plan_rules(&choices)?;
    let bar = progress_bar(output.quiet);
    let show = shown_on(&bar);
    let report = plan::run(&settings, &appraisal, &rules, &show)?;
    bar.finish_and_clear();
    write_outputs(&report, render::plan_text(&report), output)?;
    documents.write(&report, output)
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
            choices.cautious = args.cautious.then_some(true).or(choices.cautious);
            choices.keep_accuracy = args.keep_accuracy.then_some(true).or(choices.keep_accuracy);
            choices.no_adverse_impact = args
                .no_adverse_impact
                .then_some(true)
                .or(choices.no_adverse_impact);
            let output = args.appraise.output;
            run_plan(
                choices,
                &Documents {
                    markdown: args.markdown,
                    html: args.html,
                },
                &output,
            )
        }
        Command::Backtest(args) => run_backtest(*args),
        Command::Render(args) => {
            let text = std::fs::read_to_string(&args.report).map_err(|e| acquest::Error::File {
                path: args.report.clone(),
                reason: e.to_string(),
            })?;
            let report: acquest::report::PlanReport =
                serde_json::from_str(&text).map_err(|e| acquest::Error::Format {
                    path: args.report.clone(),
                    reason: format!("not a plan report written by `acquest plan --json`: {e}"),
                })?;
            if args.markdown.is_none() && args.html.is_none() {
                return Err(acquest::Error::setting(
                    "--markdown",
                    "name --markdown FILE or --html FILE (or both)",
                )
                .into());
            }
            let documents = Documents {
                markdown: args.markdown,
                html: args.html,
            };
            documents.write(
                &report,
                &OutputArgs {
                    json: None,
                    quiet: true,
                    timings: false,
                },
            )
        }
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
