//! The command line as clap types, with no logic beyond gathering the flags into
//! [`Choices`] (over the project file).

use std::path::{Path, PathBuf};

use clap::{Args, Parser, Subcommand};

use acquest::settings::{Choices, PROJECT_FILE};

#[derive(Parser)]
#[command(
    name = "acquest",
    version,
    args_override_self = true,
    about = "Should the data budget buy a new attribute or more records? Estimates accuracy and \
             group-fairness gains per unit of cost, with intervals."
)]
pub(super) struct Cli {
    #[command(subcommand)]
    pub(super) command: Command,
}

#[derive(Subcommand)]
pub(super) enum Command {
    /// Data summary, groups, bias in the labels, and the current model's accuracy and fairness
    /// with intervals.
    #[command(allow_negative_numbers = true)]
    Baseline(Box<BaselineArgs>),
    /// Learning curves of accuracy and of each group's rates, fitted and extrapolated, with the
    /// disparities they imply.
    #[command(allow_negative_numbers = true)]
    Curves(Box<CurvesArgs>),
    /// Every option of a cost sheet valued: accuracy and fairness gains with intervals, cost,
    /// gain per 1,000; and what each feature already held does.
    #[command(allow_negative_numbers = true)]
    Appraise(Box<AppraiseArgs>),
    /// The budgeted plan: which options to buy within the budget, and the best plan at other
    /// budgets.
    #[command(allow_negative_numbers = true)]
    Plan(Box<PlanArgs>),
    /// How far the appraisal can be trusted on this data: hold rows and features back, appraise
    /// buying them, buy them for real, and compare predicted with realised gains.
    #[command(allow_negative_numbers = true)]
    Backtest(Box<BacktestArgs>),
    /// Write the invented demo scenario to a folder and run it.
    #[command(allow_negative_numbers = true)]
    Demo(DemoArgs),
    /// Render a saved report (JSON) of any command as Markdown or HTML, or print its terminal view.
    #[command(allow_negative_numbers = true)]
    Render(RenderArgs),
}

#[derive(Args)]
pub(super) struct PlanArgs {
    #[command(flatten)]
    pub(super) appraise: AppraiseArgs,
    /// The budget, in the cost sheet's currency.
    #[arg(long, value_name = "AMOUNT")]
    pub(super) budget: Option<f64>,
    /// Budgets to show the best plan at, comma-separated [default: round budgets from the
    /// cheapest purchase to everything].
    #[arg(long, value_name = "A,B,C", value_delimiter = ',')]
    pub(super) budgets: Option<Vec<f64>>,
    /// Score plans by the lower end of each utility interval.
    #[arg(long)]
    pub(super) cautious: bool,
    /// Only plans whose accuracy gain is not negative.
    #[arg(long)]
    pub(super) keep_accuracy: bool,
    /// Only plans after which no group's predicted selection rate is below four-fifths of the
    /// highest group's.
    #[arg(long)]
    pub(super) no_adverse_impact: bool,
    /// Write the plan as Markdown to FILE, to paste into a proposal ('-' for standard output).
    #[arg(long, value_name = "FILE")]
    pub(super) markdown: Option<PathBuf>,
    /// Write the plan as one self-contained HTML file with charts ('-' for standard output).
    #[arg(long, value_name = "FILE")]
    pub(super) html: Option<PathBuf>,
    /// Plan on a saved appraisal (the JSON of `acquest appraise`, or of an earlier plan) instead
    /// of measuring again: any budget and rules in well under a second; the data and the cost
    /// sheet are not read, and plans are not re-scored with their options together.
    #[arg(long, value_name = "FILE")]
    pub(super) appraisal: Option<PathBuf>,
    /// Also measure what each feature held today does (ablation and permutation), as
    /// `acquest appraise` does; the plan does not need it.
    #[arg(long)]
    pub(super) held_features: bool,
    /// Do not value growing each feature's pilot before deciding (the advice "decide now" or
    /// "first grow pilot X").
    #[arg(long)]
    pub(super) no_pilot_advice: bool,
}

#[derive(Args)]
pub(super) struct BacktestArgs {
    #[command(flatten)]
    pub(super) data: DataArgs,
    #[command(flatten)]
    pub(super) trials: TrialArgs,
    /// Share of the rows to hold back and offer as an option to buy [default: 0.5].
    #[arg(long, value_name = "SHARE")]
    pub(super) hold_rows: Option<f64>,
    /// Features to blank outside a random pilot and offer as options, comma-separated.
    #[arg(long, value_delimiter = ',', value_name = "COLUMNS")]
    pub(super) hold_features: Option<Vec<String>>,
    /// Share of the remaining rows on which a held feature stays filled [default: 0.2].
    #[arg(long, value_name = "SHARE")]
    pub(super) pilot: Option<f64>,
    /// Also offer the held-back rows of this group alone.
    #[arg(long, value_name = "GROUP")]
    pub(super) hold_group: Option<String>,
    /// Random hold-outs to run [default: 3].
    #[arg(long, value_name = "N")]
    pub(super) rounds: Option<usize>,
    /// Also grow each held feature's pilot K times (2 or 4), appraise it again, and set the
    /// interval widths it gives against those predicted from the smaller pilot.
    #[arg(long, value_name = "K")]
    pub(super) check_growth: Option<usize>,
    /// Fairness measure the best option by fairness is named by: spd, di, eod or aod
    /// [default: eod]. All four are measured.
    #[arg(long, value_name = "MEASURE")]
    pub(super) fairness: Option<String>,
    #[command(flatten)]
    pub(super) output: OutputArgs,
}

#[derive(Args)]
pub(super) struct RenderArgs {
    /// A JSON report written by any command's --json (baseline, curves, appraise, plan, backtest) or by the demo; with neither --markdown nor --html, its terminal view is printed.
    pub(super) report: PathBuf,
    /// Write it as Markdown to FILE ('-' for standard output).
    #[arg(long, value_name = "FILE")]
    pub(super) markdown: Option<PathBuf>,
    /// Write it as self-contained HTML to FILE ('-' for standard output).
    #[arg(long, value_name = "FILE")]
    pub(super) html: Option<PathBuf>,
    /// In the terminal view, the full tables a summary line stands for (a baseline's further
    /// protected attributes).
    #[arg(long)]
    pub(super) detail: bool,
}

#[derive(Args)]
pub(super) struct AppraiseArgs {
    #[command(flatten)]
    pub(super) data: DataArgs,
    #[command(flatten)]
    pub(super) trials: TrialArgs,
    /// The cost sheet: CSV or JSON, one acquisition option a line.
    #[arg(long, value_name = "FILE")]
    pub(super) costs: Option<PathBuf>,
    /// Name of the currency the costs are in.
    #[arg(long, value_name = "NAME")]
    pub(super) currency: Option<String>,
    /// Fairness measure the utility counts: spd, di, eod or aod [default: eod].
    #[arg(long, value_name = "MEASURE")]
    pub(super) fairness: Option<String>,
    /// Weight of the accuracy gain in the utility [default: 1].
    #[arg(long, value_name = "W")]
    pub(super) weigh_accuracy: Option<f64>,
    /// Weight of the unfairness reduction in the utility [default: 1].
    #[arg(long, value_name = "W")]
    pub(super) weigh_fairness: Option<f64>,
    #[command(flatten)]
    pub(super) output: OutputArgs,
}

#[derive(Args)]
pub(super) struct CurvesArgs {
    #[command(flatten)]
    pub(super) data: DataArgs,
    #[command(flatten)]
    pub(super) trials: TrialArgs,
    /// Training sizes to read the curves at: multiples of today's training rows (2x) or row
    /// counts, comma-separated [default: 2x,4x].
    #[arg(long, value_delimiter = ',', value_name = "SIZES")]
    pub(super) at: Option<Vec<String>>,
    /// Smallest training size [default: the smallest at which every group and label has 10 rows].
    #[arg(long, value_name = "ROWS")]
    pub(super) smallest: Option<usize>,
    /// Write a chart of the curves to FILE (SVG; '-' for standard output).
    #[arg(long, value_name = "FILE")]
    pub(super) svg: Option<PathBuf>,
    #[command(flatten)]
    pub(super) output: OutputArgs,
}

#[derive(Args)]
pub(super) struct BaselineArgs {
    #[command(flatten)]
    pub(super) data: DataArgs,
    #[command(flatten)]
    pub(super) trials: TrialArgs,
    /// Print the full tables of every further protected attribute and intersection, not only
    /// their summary lines (the Markdown and HTML always hold them).
    #[arg(long)]
    pub(super) detail: bool,
    #[command(flatten)]
    pub(super) output: OutputArgs,
}

#[derive(Args)]
pub(super) struct DemoArgs {
    /// Folder to write the scenario into [default: acquest-demo in the system's temporary folder].
    #[arg(long)]
    pub(super) out: Option<PathBuf>,
    /// Only write the files; run nothing.
    #[arg(long)]
    pub(super) no_run: bool,
    /// No progress bars.
    #[arg(long)]
    pub(super) quiet: bool,
    /// Draw this many applications instead of the scenario's 3,000 (pilots and the rows on
    /// offer scale with them), to try acquest on a large file.
    #[arg(long, value_name = "N")]
    pub(super) rows: Option<usize>,
    /// Add this many invented survey columns to the data file.
    #[arg(long, value_name = "K")]
    pub(super) extra_columns: Option<usize>,
    /// Also write the data as Parquet (applications.parquet).
    #[arg(long)]
    pub(super) parquet: bool,
}

#[derive(Args, Default)]
pub(super) struct DataArgs {
    /// Data file: CSV (any common separator) or Parquet.
    #[arg(long, value_name = "FILE")]
    pub(super) data: Option<PathBuf>,
    /// Field separator: one character, or tab / space / comma / semicolon [default: sniffed].
    #[arg(long, value_name = "CHAR")]
    pub(super) delimiter: Option<String>,
    /// The file has no header line; name the columns with --columns.
    #[arg(long)]
    pub(super) no_header: bool,
    /// Column names for a file without a header, comma-separated.
    #[arg(long, value_delimiter = ',', value_name = "A,B,C")]
    pub(super) columns: Option<Vec<String>>,
    /// More cell texts that mean "missing" (besides empty, ?, NA, N/A), comma-separated.
    #[arg(long, value_delimiter = ',', value_name = "TOKENS")]
    pub(super) na: Option<Vec<String>>,
    /// Lines to skip at the top of the file.
    #[arg(long, value_name = "N")]
    pub(super) skip_lines: Option<usize>,
    /// Skip lines that start with this text.
    #[arg(long, value_name = "PREFIX")]
    pub(super) comment: Option<String>,
    /// The label column (binary).
    #[arg(long, value_name = "COLUMN")]
    pub(super) target: Option<String>,
    /// The favourable label value (a trailing full stop on labels is ignored), or a threshold
    /// such as '>=10' for a numeric target.
    #[arg(long, value_name = "VALUE")]
    pub(super) favourable: Option<String>,
    /// The protected attribute column, or several comma-separated (the first is the one the
    /// options' gains and the plan are read on; baseline and curves report each).
    #[arg(long, value_name = "COLUMNS")]
    pub(super) protected: Option<String>,
    /// Reference group [default: the group with the highest favourable rate in the labels];
    /// with several attributes, ATTRIBUTE=GROUP, once per attribute.
    #[arg(long, value_name = "GROUP")]
    pub(super) reference: Vec<String>,
    /// Form groups from the protected column: 'female=A92,A95;male=*' (codes, * for the rest)
    /// or 'young=<=25;older=>25' (a numeric threshold); with several attributes, prefixed by
    /// the attribute ('age:young=<=25;older=>25'), once per attribute.
    #[arg(long, value_name = "RULES")]
    pub(super) groups: Vec<String>,
    /// Also report the intersections of every pair of protected attributes (sex × race).
    #[arg(long)]
    pub(super) intersections: bool,
    /// Train on these columns only, comma-separated [default: every other column].
    #[arg(long, value_delimiter = ',', value_name = "COLUMNS")]
    pub(super) features: Option<Vec<String>>,
    /// Leave these columns out, comma-separated.
    #[arg(long, value_delimiter = ',', value_name = "COLUMNS")]
    pub(super) exclude: Option<Vec<String>>,
    /// Read these columns as categories even if their values look like numbers.
    #[arg(long, value_delimiter = ',', value_name = "COLUMNS")]
    pub(super) categorical: Option<Vec<String>>,
    /// Let the model see the protected attributes.
    #[arg(long)]
    pub(super) use_protected: bool,
    /// Project file with default settings [default: ./acquest.toml when present].
    #[arg(long, value_name = "FILE")]
    pub(super) project: Option<PathBuf>,
    /// Do not read ./acquest.toml.
    #[arg(long, conflicts_with = "project")]
    pub(super) no_project: bool,
}

#[derive(Args, Default)]
pub(super) struct TrialArgs {
    /// Model family: logistic or tree [default: logistic].
    #[arg(long, value_name = "FAMILY")]
    pub(super) model: Option<String>,
    /// Repeated train/test trials [default: 10].
    #[arg(long, value_name = "R")]
    pub(super) repeats: Option<usize>,
    /// Share of rows held out for testing in each trial [default: 0.3].
    #[arg(long, value_name = "SHARE")]
    pub(super) test_fraction: Option<f64>,
    /// Master seed; the same inputs and seed give the same report.
    #[arg(long, value_name = "N")]
    pub(super) seed: Option<u64>,
    /// Confidence level of the intervals [default: 0.9].
    #[arg(long, value_name = "LEVEL")]
    pub(super) confidence: Option<f64>,
    /// Most training rows any one trial uses; larger data are subsampled per trial and today's
    /// size is read off the curves by extrapolation [default: 40000].
    #[arg(long, value_name = "ROWS")]
    pub(super) max_train_rows: Option<usize>,
}

#[derive(Args)]
pub(super) struct OutputArgs {
    /// Write the JSON report to FILE ('-' for standard output, in place of the tables).
    #[arg(long, value_name = "FILE")]
    pub(super) json: Option<PathBuf>,
    /// No progress bars.
    #[arg(long)]
    pub(super) quiet: bool,
    /// When done, print the wall time of each stage and the models fitted to standard error.
    #[arg(long)]
    pub(super) timings: bool,
    /// Some output (this JSON, or a document) goes to standard output, so the tables do not.
    #[arg(skip)]
    pub(super) to_standard: bool,
}

impl DataArgs {
    pub(super) fn choices(self, trials: TrialArgs) -> anyhow::Result<Choices> {
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
            reference: (!self.reference.is_empty()).then_some(self.reference),
            groups: (!self.groups.is_empty()).then_some(self.groups),
            intersections: self.intersections.then_some(true),
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

impl AppraiseArgs {
    pub(super) fn choices(&mut self) -> anyhow::Result<Choices> {
        let data = std::mem::take(&mut self.data);
        let trials = std::mem::take(&mut self.trials);
        let mut choices = data.choices(trials)?;
        choices.costs = self.costs.take().or(choices.costs.take());
        let standard = |p: &Option<PathBuf>| p.as_deref() == Some(Path::new("-"));
        if standard(&choices.data) && standard(&choices.costs) {
            return Err(acquest::Error::setting(
                "--costs",
                "--data already reads standard input ('-'); only one input can",
            )
            .into());
        }
        choices.currency = self.currency.take().or(choices.currency.take());
        choices.fairness = self.fairness.take().or(choices.fairness.take());
        choices.weigh_accuracy = self.weigh_accuracy.or(choices.weigh_accuracy);
        choices.weigh_fairness = self.weigh_fairness.or(choices.weigh_fairness);
        Ok(choices)
    }
}
