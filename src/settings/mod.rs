//! Validated settings: what to read, how to form groups, how to run trials. Built from plain
//! choices (flags, and the project file `acquest.toml`), checked once, then used everywhere below.

use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

use crate::error::{Error, Result};

mod commands;

pub use commands::*;

/// Name of the project file read from the working folder.
pub const PROJECT_FILE: &str = "acquest.toml";

/// Raw choices as a user gives them, in flags or in the project file. No field is checked here.
#[derive(Debug, Clone, Default, Deserialize, Serialize)]
#[serde(deny_unknown_fields, rename_all = "kebab-case")]
pub struct Choices {
    /// `--data` (or `data` in the project file).
    pub data: Option<PathBuf>,
    /// `--delimiter` (or `delimiter` in the project file).
    pub delimiter: Option<String>,
    /// `--no-header` (or `no-header` in the project file).
    pub no_header: Option<bool>,
    /// `--columns` (or `columns` in the project file).
    pub columns: Option<Vec<String>>,
    /// `--na` (or `na` in the project file).
    pub na: Option<Vec<String>>,
    /// `--skip-lines` (or `skip-lines` in the project file).
    pub skip_lines: Option<usize>,
    /// `--comment` (or `comment` in the project file).
    pub comment: Option<String>,
    /// `--target` (or `target` in the project file).
    pub target: Option<String>,
    /// `--favourable` (or `favourable` in the project file).
    pub favourable: Option<String>,
    /// `--protected` (or `protected` in the project file: a name, names separated by commas,
    /// or a list of names).
    #[serde(default, deserialize_with = "names::joined")]
    pub protected: Option<String>,
    /// `--reference`, once per attribute (or `reference` in the project file: one, or a list).
    #[serde(default, deserialize_with = "names::one_or_many")]
    pub reference: Option<Vec<String>>,
    /// `--groups`, once per attribute (or `groups` in the project file: one, or a list).
    #[serde(default, deserialize_with = "names::one_or_many")]
    pub groups: Option<Vec<String>>,
    /// `--intersections` (or `intersections` in the project file).
    pub intersections: Option<bool>,
    /// `--features` (or `features` in the project file).
    pub features: Option<Vec<String>>,
    /// `--exclude` (or `exclude` in the project file).
    pub exclude: Option<Vec<String>>,
    /// `--categorical` (or `categorical` in the project file).
    pub categorical: Option<Vec<String>>,
    /// `--use-protected` (or `use-protected` in the project file).
    pub use_protected: Option<bool>,
    /// `--model` (or `model` in the project file).
    pub model: Option<String>,
    /// `--repeats` (or `repeats` in the project file).
    pub repeats: Option<usize>,
    /// `--test-fraction` (or `test-fraction` in the project file).
    pub test_fraction: Option<f64>,
    /// `--seed` (or `seed` in the project file).
    pub seed: Option<u64>,
    /// `--confidence` (or `confidence` in the project file).
    pub confidence: Option<f64>,
    /// `--max-train-rows` (or `max-train-rows` in the project file).
    pub max_train_rows: Option<usize>,
    /// `--costs` (or `costs` in the project file).
    pub costs: Option<PathBuf>,
    /// `--budget` (or `budget` in the project file).
    pub budget: Option<f64>,
    /// `--budgets` (or `budgets` in the project file).
    pub budgets: Option<Vec<f64>>,
    /// `--currency` (or `currency` in the project file).
    pub currency: Option<String>,
    /// `--at` (or `at` in the project file).
    pub at: Option<Vec<String>>,
    /// `--smallest` (or `smallest` in the project file).
    pub smallest: Option<usize>,
    /// `--fairness` (or `fairness` in the project file).
    pub fairness: Option<String>,
    /// `--weigh-accuracy` (or `weigh-accuracy` in the project file).
    pub weigh_accuracy: Option<f64>,
    /// `--weigh-fairness` (or `weigh-fairness` in the project file).
    pub weigh_fairness: Option<f64>,
    /// `--cautious` (or `cautious` in the project file).
    pub cautious: Option<bool>,
    /// `--keep-accuracy` (or `keep-accuracy` in the project file).
    pub keep_accuracy: Option<bool>,
    /// `--no-adverse-impact` (or `no-adverse-impact` in the project file).
    pub no_adverse_impact: Option<bool>,
    /// `--hold-rows` (or `hold-rows` in the project file).
    pub hold_rows: Option<f64>,
    /// `--hold-features` (or `hold-features` in the project file).
    pub hold_features: Option<Vec<String>>,
    /// `--pilot` (or `pilot` in the project file).
    pub pilot: Option<f64>,
    /// `--hold-group` (or `hold-group` in the project file).
    pub hold_group: Option<String>,
    /// `--rounds` (or `rounds` in the project file).
    pub rounds: Option<usize>,
    /// `--check-growth` on `backtest` (or `check-growth` in the project file).
    pub check_growth: Option<usize>,
    /// `--held-features` on `plan` (or `held-features` in the project file).
    pub held_features: Option<bool>,
}

macro_rules! overlay {
    ($base:ident, $top:ident, $($field:ident),*) => {
        Choices { $($field: $top.$field.or($base.$field)),* }
    };
}

impl Choices {
    /// Reads a project file. Relative paths in it are taken relative to its folder.
    pub fn from_project_file(path: &Path) -> Result<Self> {
        let text = crate::files::read_text(path).map_err(|e| Error::File {
            path: path.to_path_buf(),
            reason: e.to_string(),
        })?;
        Choices::from_project_text(&text, path)
    }

    /// A project file's text read as choices, with `path` named in errors and relative paths
    /// taken relative to its folder.
    pub fn from_project_text(text: &str, path: &Path) -> Result<Self> {
        let mut choices: Choices = toml::from_str(text).map_err(|e| Error::Format {
            path: path.to_path_buf(),
            reason: e.to_string().trim().to_string(),
        })?;
        let folder = path.parent().unwrap_or(Path::new("."));
        for file in [&mut choices.data, &mut choices.costs]
            .into_iter()
            .flatten()
        {
            if file.is_relative() {
                *file = folder.join(&*file);
            }
        }
        Ok(choices)
    }

    /// These choices, with every choice left open filled from `base`.
    pub fn over(self, base: Choices) -> Choices {
        let top = self;
        overlay!(
            base,
            top,
            data,
            delimiter,
            no_header,
            columns,
            na,
            skip_lines,
            comment,
            target,
            favourable,
            protected,
            reference,
            groups,
            intersections,
            features,
            exclude,
            categorical,
            use_protected,
            model,
            repeats,
            test_fraction,
            seed,
            confidence,
            max_train_rows,
            costs,
            budget,
            budgets,
            currency,
            at,
            smallest,
            fairness,
            weigh_accuracy,
            weigh_fairness,
            cautious,
            keep_accuracy,
            no_adverse_impact,
            hold_rows,
            hold_features,
            pilot,
            hold_group,
            rounds,
            check_growth,
            held_features
        )
    }
}

/// The model family fitted in every trial.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum ModelKind {
    /// L2-regularised logistic regression (linfa-logistic).
    Logistic,
    /// Decision tree, Gini splits (linfa-trees).
    Tree,
}

impl ModelKind {
    /// The name used on the command line and in reports.
    pub fn name(self) -> &'static str {
        match self {
            ModelKind::Logistic => "logistic",
            ModelKind::Tree => "tree",
        }
    }
}

/// How to read a CSV file.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CsvSettings {
    /// Field separator; `None` means sniff it from the first lines.
    pub delimiter: Option<u8>,
    /// Whether the first line names the columns.
    pub has_header: bool,
    /// Column names when the file has no header.
    pub columns: Option<Vec<String>>,
    /// Cell texts (after trimming) that mean "missing".
    pub missing_tokens: Vec<String>,
    /// Lines to skip at the top of the file before the header or data.
    pub skip_lines: usize,
    /// Lines starting with this text are skipped.
    pub comment: Option<String>,
}

/// Missing-value tokens understood without being asked.
pub const DEFAULT_MISSING_TOKENS: [&str; 4] = ["", "?", "NA", "N/A"];

/// One group as the user forms it from the protected column.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GroupRule {
    /// Name of the group in reports.
    pub name: String,
    /// Which values belong to it.
    pub member: Membership,
}

/// Which values of the protected column belong to a group.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Membership {
    /// Any of these values (codes), compared as text after trimming.
    Values(Vec<String>),
    /// Every value no other group claims.
    Rest,
    /// A numeric comparison, e.g. `<= 25`.
    Compare {
        /// The operator.
        op: Comparison,
        /// The number compared with.
        value: f64,
    },
}

/// A numeric comparison operator.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub enum Comparison {
    /// `<`
    #[serde(rename = "<")]
    Less,
    /// `<=`
    #[serde(rename = "<=")]
    LessOrEqual,
    /// `>`
    #[serde(rename = ">")]
    Greater,
    /// `>=`
    #[serde(rename = ">=")]
    GreaterOrEqual,
}

impl Comparison {
    /// Whether `x op value` holds.
    pub fn holds(self, x: f64, value: f64) -> bool {
        match self {
            Comparison::Less => x < value,
            Comparison::LessOrEqual => x <= value,
            Comparison::Greater => x > value,
            Comparison::GreaterOrEqual => x >= value,
        }
    }

    /// The operator as written.
    pub fn symbol(self) -> &'static str {
        match self {
            Comparison::Less => "<",
            Comparison::LessOrEqual => "<=",
            Comparison::Greater => ">",
            Comparison::GreaterOrEqual => ">=",
        }
    }
}

/// Splits "<=25" into the operator and the number; `None` when the text is not of that form.
pub fn parse_comparison(text: &str) -> Option<(Comparison, f64)> {
    let text = text.trim();
    let (op, rest) = if let Some(r) = text.strip_prefix("<=") {
        (Comparison::LessOrEqual, r)
    } else if let Some(r) = text.strip_prefix(">=") {
        (Comparison::GreaterOrEqual, r)
    } else if let Some(r) = text.strip_prefix('<') {
        (Comparison::Less, r)
    } else if let Some(r) = text.strip_prefix('>') {
        (Comparison::Greater, r)
    } else {
        return None;
    };
    let value: f64 = rest.trim().parse().ok()?;
    value.is_finite().then_some((op, value))
}

/// Which columns mean what.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SchemaSettings {
    /// The label column.
    pub target: String,
    /// The favourable label value, or a comparison such as `>=10` for a numeric target.
    pub favourable: String,
    /// The protected attributes, in the order given: the first is the one every command
    /// assesses; the baseline reports every one.
    pub protected: Vec<ProtectedAttribute>,
    /// Whether the baseline also reports the intersections of every pair of attributes.
    pub intersections: bool,
    /// Columns to train on, when given (else every other column).
    pub features: Option<Vec<String>>,
    /// Columns left out.
    pub exclude: Vec<String>,
    /// Columns read as categories even when their values look like numbers.
    pub categorical: Vec<String>,
    /// Whether the model sees the protected column.
    pub use_protected: bool,
}

/// One protected attribute: its column, how its groups are formed, and its reference group.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ProtectedAttribute {
    /// The protected column.
    pub column: String,
    /// The reference group, when given.
    pub reference: Option<String>,
    /// Groups formed from the column; `None` means one group per distinct value.
    pub groups: Option<Vec<GroupRule>>,
}

impl SchemaSettings {
    /// The first protected attribute, the one every command assesses.
    pub fn primary(&self) -> &ProtectedAttribute {
        &self.protected[0]
    }
}

/// The protected attributes of `--protected a,b,c`, each with its `--groups` and `--reference`.
/// With one attribute these take their plain forms (`--groups 'f=A92;m=*'`, `--reference f`);
/// with several, each names its attribute: `--groups 'age:young=<=25;older=>25'` (a prefix
/// before the first '=' ending in ':'), `--reference age=older` (an attribute before '='); an
/// unprefixed one belongs to the first attribute.
fn protected_attributes(
    columns: &str,
    groups: &[String],
    references: &[String],
) -> Result<Vec<ProtectedAttribute>> {
    let names = trimmed(&columns.split(',').map(String::from).collect::<Vec<_>>());
    if names.is_empty() {
        return Err(Error::setting("--protected", "is required"));
    }
    if let Some(name) = first_repeat(&names) {
        return Err(Error::setting(
            "--protected",
            format!("names '{name}' twice"),
        ));
    }
    let mut attributes: Vec<ProtectedAttribute> = names
        .iter()
        .map(|column| ProtectedAttribute {
            column: column.clone(),
            reference: None,
            groups: None,
        })
        .collect();
    let listed = names.join(", ");
    let attribute = |flag: &str, name: &str| {
        names.iter().position(|n| n == name).ok_or_else(|| {
            Error::setting(
                flag,
                format!("'{name}' is not a protected attribute (--protected: {listed})"),
            )
        })
    };
    for text in groups {
        let (index, rules) = match text.split_once('=').and_then(|(head, _)| head.find(':')) {
            Some(colon) if names.len() > 1 || text[..colon].trim() == names[0] => (
                attribute("--groups", text[..colon].trim())?,
                &text[colon + 1..],
            ),
            _ => (0, text.as_str()),
        };
        if attributes[index].groups.is_some() {
            return Err(Error::setting(
                "--groups",
                format!("gives the groups of '{}' twice", names[index]),
            ));
        }
        attributes[index].groups = Some(parse_groups(rules)?);
    }
    for text in references {
        let (index, group) = match text.split_once('=') {
            Some((name, group)) if names.len() > 1 => {
                (attribute("--reference", name.trim())?, group)
            }
            _ => (0, text.as_str()),
        };
        if attributes[index].reference.is_some() {
            return Err(Error::setting(
                "--reference",
                format!("names the reference of '{}' twice", names[index]),
            ));
        }
        attributes[index].reference = Some(group.trim().to_string());
    }
    Ok(attributes)
}

/// Project-file values that may be one string or a list of them.
mod names {
    use serde::{Deserialize, Deserializer};

    #[derive(Deserialize)]
    #[serde(untagged)]
    enum OneOrMany {
        One(String),
        Many(Vec<String>),
    }

    /// One string, or a list of strings joined with commas.
    pub fn joined<'de, D: Deserializer<'de>>(d: D) -> Result<Option<String>, D::Error> {
        Ok(Option::<OneOrMany>::deserialize(d)?.map(|v| match v {
            OneOrMany::One(s) => s,
            OneOrMany::Many(list) => list.join(","),
        }))
    }

    /// One string, or a list of strings.
    pub fn one_or_many<'de, D: Deserializer<'de>>(d: D) -> Result<Option<Vec<String>>, D::Error> {
        Ok(Option::<OneOrMany>::deserialize(d)?.map(|v| match v {
            OneOrMany::One(s) => vec![s],
            OneOrMany::Many(list) => list,
        }))
    }
}

/// How trials are run.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TrialSettings {
    /// The model family.
    pub model: ModelKind,
    /// Repeated train/test trials.
    pub repeats: usize,
    /// Share of rows held out for testing in each trial.
    pub test_fraction: f64,
    /// The master seed.
    pub seed: u64,
    /// Confidence level of the intervals.
    pub confidence: f64,
    /// No trial trains on more rows than this (a stratified subsample, with the test part cut
    /// in proportion); today's full size is then read off the curves by extrapolation.
    pub max_train_rows: usize,
}

/// Default cap on the training rows of one trial: beyond it learning curves are read by
/// extrapolation. Large enough that every open dataset in the tests runs uncapped.
pub const DEFAULT_MAX_TRAIN_ROWS: usize = 40_000;

/// Everything `acquest baseline` needs, checked.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Settings {
    /// The data file.
    pub data: PathBuf,
    /// How to read it, when it is CSV.
    pub csv: CsvSettings,
    /// Which columns mean what.
    pub schema: SchemaSettings,
    /// How trials are run.
    pub trials: TrialSettings,
}

/// Default number of repeated trials.
pub const DEFAULT_REPEATS: usize = 10;
/// Default master seed.
pub const DEFAULT_SEED: u64 = 20_261_202;

impl Settings {
    /// Checks the choices and builds the settings.
    pub fn from_choices(choices: Choices) -> Result<Self> {
        let data = choices
            .data
            .ok_or_else(|| Error::setting("--data", "no data file given"))?;
        let required = |value: Option<String>, flag: &str| {
            value
                .filter(|v| !v.trim().is_empty())
                .ok_or_else(|| Error::setting(flag, "is required"))
        };
        let target = required(choices.target, "--target")?;
        let favourable = required(choices.favourable, "--favourable")?;
        let protected = required(choices.protected, "--protected")?;
        let protected = protected_attributes(
            &protected,
            choices.groups.as_deref().unwrap_or_default(),
            choices.reference.as_deref().unwrap_or_default(),
        )?;

        let delimiter = choices
            .delimiter
            .as_deref()
            .map(parse_delimiter)
            .transpose()?;
        let has_header = !choices.no_header.unwrap_or(false);
        let columns = choices.columns.map(|c| trimmed(&c));
        if !has_header && columns.is_none() {
            return Err(Error::setting(
                "--no-header",
                "needs --columns a,b,c to name the columns",
            ));
        }
        if let Some(columns) = &columns {
            if has_header {
                return Err(Error::setting(
                    "--columns",
                    "names the columns of a file without a header; add --no-header",
                ));
            }
            if let Some(name) = first_repeat(columns) {
                return Err(Error::setting("--columns", format!("names '{name}' twice")));
            }
        }
        let mut missing_tokens: Vec<String> = DEFAULT_MISSING_TOKENS
            .iter()
            .map(|s| s.to_string())
            .collect();
        missing_tokens.extend(
            choices
                .na
                .unwrap_or_default()
                .into_iter()
                .map(|t| t.trim().to_string()),
        );

        let model = match choices.model.as_deref().unwrap_or("logistic") {
            "logistic" => ModelKind::Logistic,
            "tree" => ModelKind::Tree,
            other => {
                return Err(Error::setting(
                    "--model",
                    format!("unknown model '{other}' (choose logistic or tree)"),
                ))
            }
        };
        let repeats = choices.repeats.unwrap_or(DEFAULT_REPEATS);
        if repeats < 2 {
            return Err(Error::setting(
                "--repeats",
                format!(
                    "must be at least 2 for an interval, not {repeats} (10 or more gives useful ones)"
                ),
            ));
        }
        let test_fraction = choices.test_fraction.unwrap_or(0.3);
        if !(test_fraction > 0.0 && test_fraction < 1.0) {
            return Err(Error::setting(
                "--test-fraction",
                format!("must lie strictly between 0 and 1, not {test_fraction}"),
            ));
        }
        let max_train_rows = choices.max_train_rows.unwrap_or(DEFAULT_MAX_TRAIN_ROWS);
        if max_train_rows < 1_000 {
            return Err(Error::setting(
                "--max-train-rows",
                format!("must be at least 1000, not {max_train_rows}"),
            ));
        }
        let confidence = choices.confidence.unwrap_or(0.9);
        if !(confidence > 0.0 && confidence < 1.0) {
            return Err(Error::setting(
                "--confidence",
                format!("must lie strictly between 0 and 1, not {confidence}"),
            ));
        }

        Ok(Settings {
            data,
            csv: CsvSettings {
                delimiter,
                has_header,
                columns,
                missing_tokens,
                skip_lines: choices.skip_lines.unwrap_or(0),
                comment: choices.comment.filter(|c| !c.is_empty()),
            },
            schema: SchemaSettings {
                target: target.trim().to_string(),
                favourable: favourable.trim().to_string(),
                protected,
                intersections: choices.intersections.unwrap_or(false),
                features: choices.features.map(|f| trimmed(&f)),
                exclude: trimmed(&choices.exclude.unwrap_or_default()),
                categorical: trimmed(&choices.categorical.unwrap_or_default()),
                use_protected: choices.use_protected.unwrap_or(false),
            },
            trials: TrialSettings {
                model,
                repeats,
                test_fraction,
                seed: choices.seed.unwrap_or(DEFAULT_SEED),
                confidence,
                max_train_rows,
            },
        })
    }
}

fn trimmed(names: &[String]) -> Vec<String> {
    names
        .iter()
        .map(|n| n.trim().to_string())
        .filter(|n| !n.is_empty())
        .collect()
}

fn first_repeat(names: &[String]) -> Option<&str> {
    names
        .iter()
        .enumerate()
        .find(|(i, n)| names[..*i].contains(n))
        .map(|(_, n)| n.as_str())
}

/// Reads a delimiter given as one character or as a name (`tab`, `space`, `comma`, `semicolon`).
pub fn parse_delimiter(text: &str) -> Result<u8> {
    let byte = match text {
        "tab" | "\\t" | "\t" => b'\t',
        "space" | " " => b' ',
        "comma" => b',',
        "semicolon" => b';',
        "pipe" => b'|',
        t if t.len() == 1 && t.is_ascii() => t.as_bytes()[0],
        t => {
            return Err(Error::setting(
                "--delimiter",
                format!("'{t}' is not one character (use e.g. ';', tab or space)"),
            ))
        }
    };
    if byte == b'"' || byte == b'\n' || byte == b'\r' {
        return Err(Error::setting(
            "--delimiter",
            "cannot be a quote or a line break",
        ));
    }
    Ok(byte)
}

/// Parses `--groups`: `name=value,value;name=value` for codes, `name=*` for every other value,
/// `name=<=25;name=>25` for a numeric threshold.
pub fn parse_groups(text: &str) -> Result<Vec<GroupRule>> {
    let mut rules = Vec::new();
    for part in text.split(';').map(str::trim).filter(|p| !p.is_empty()) {
        let Some((name, spec)) = part.split_once('=') else {
            return Err(Error::setting(
                "--groups",
                format!("'{part}' should read name=values (e.g. female=A92,A95) or name=<=25"),
            ));
        };
        let name = name.trim();
        if name.is_empty() {
            return Err(Error::setting(
                "--groups",
                format!("'{part}' has no group name"),
            ));
        }
        if rules.iter().any(|r: &GroupRule| r.name == name) {
            return Err(Error::setting(
                "--groups",
                format!("group '{name}' is named twice"),
            ));
        }
        let spec = spec.trim();
        let member = if spec == "*" {
            Membership::Rest
        } else if spec.starts_with('<') || spec.starts_with('>') {
            let (op, value) = parse_comparison(spec).ok_or_else(|| {
                Error::setting(
                    "--groups",
                    format!("'{spec}' is not a comparison such as <=25"),
                )
            })?;
            Membership::Compare { op, value }
        } else {
            let values: Vec<String> = spec
                .split(',')
                .map(|v| v.trim().to_string())
                .filter(|v| !v.is_empty())
                .collect();
            if values.is_empty() {
                return Err(Error::setting(
                    "--groups",
                    format!("group '{name}' lists no values"),
                ));
            }
            Membership::Values(values)
        };
        rules.push(GroupRule {
            name: name.to_string(),
            member,
        });
    }
    if rules.len() < 2 {
        return Err(Error::setting("--groups", "needs at least two groups"));
    }
    if rules
        .iter()
        .filter(|r| r.member == Membership::Rest)
        .count()
        > 1
    {
        return Err(Error::setting(
            "--groups",
            "only one group can take the rest (=*)",
        ));
    }
    Ok(rules)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn minimal() -> Choices {
        Choices {
            data: Some("x.csv".into()),
            target: Some("y".into()),
            favourable: Some("1".into()),
            protected: Some("g".into()),
            ..Choices::default()
        }
    }

    #[test]
    fn defaults_are_filled() {
        let s = Settings::from_choices(minimal()).unwrap();
        assert_eq!(s.trials.repeats, DEFAULT_REPEATS);
        assert_eq!(s.trials.model, ModelKind::Logistic);
        assert!(s.csv.missing_tokens.contains(&"?".to_string()));
    }

    #[test]
    fn zero_repeats_is_refused() {
        let mut c = minimal();
        c.repeats = Some(0);
        let e = Settings::from_choices(c.clone()).unwrap_err();
        assert!(e.to_string().contains("--repeats"));
        c.repeats = Some(1);
        let e = Settings::from_choices(c).unwrap_err();
        assert!(
            e.to_string().contains("at least 2"),
            "one trial gives no interval"
        );
    }

    #[test]
    fn flags_override_the_project_file() {
        let file = Choices {
            repeats: Some(5),
            seed: Some(1),
            ..minimal()
        };
        let flags = Choices {
            repeats: Some(7),
            ..Choices::default()
        };
        let merged = flags.over(file);
        assert_eq!(merged.repeats, Some(7));
        assert_eq!(merged.seed, Some(1));
    }

    #[test]
    fn groups_from_codes_and_thresholds() {
        let rules = parse_groups("female=A92,A95; male=*").unwrap();
        assert_eq!(
            rules[0].member,
            Membership::Values(vec!["A92".into(), "A95".into()])
        );
        assert_eq!(rules[1].member, Membership::Rest);
        let rules = parse_groups("25 or younger=<=25;over 25=>25").unwrap();
        assert_eq!(
            rules[0].member,
            Membership::Compare {
                op: Comparison::LessOrEqual,
                value: 25.0
            }
        );
        assert!(parse_groups("only=1").is_err());
        assert!(parse_groups("a=<x;b=*").is_err());
    }

    #[test]
    fn delimiter_names() {
        assert_eq!(parse_delimiter("tab").unwrap(), b'\t');
        assert_eq!(parse_delimiter(";").unwrap(), b';');
        assert!(parse_delimiter(";;").is_err());
    }
}
