//! `acquest backtest`: how far the appraisal can be trusted, measured on the user's own data.
//! From a full dataset, rows are held back and chosen features are blanked outside a random
//! pilot; the options of buying them back are appraised on what is left, then bought for real
//! (the held rows added to training, the feature filled on every row) and measured with the same
//! trial protocol. Predicted and realised gains are compared option by option and summarised,
//! beside two simpler estimators.

use std::path::PathBuf;

use rand::seq::SliceRandom;

use crate::data::costs::{Acquisition, CostOption};
use crate::data::{Column, Dataset};
use crate::engine::streams::{stream_rng, Stream};
use crate::engine::trial::{self, Arm, GivenSplit, ProgressSink, Rows, TrialDesign, TrialOutcome};
use crate::error::{nearest_hint, Error, Result};
use crate::estimate::appraise::{self, AppraisalInput};
use crate::estimate::baseline;
use crate::estimate::score::OptionReadings;
use crate::report::*;
use crate::settings::{self, AppraisalSettings, Settings};
use crate::stats::fairness;
use crate::stats::metrics::{self, estimate};

/// A realised gain counts as different from zero, and two realised gains as different from
/// each other, below this p-value (common practice, no source).
pub const SIGNIFICANCE: f64 = 0.05;

/// What each estimator compared does.
fn description(method: Method) -> &'static str {
    match method {
        Method::Acquest => {
            "the appraisal as it stands: rows read off today's learning curves, a feature's paired \
             pilot difference fitted as a curve and added to today's curve"
        }
        Method::LastAnchor => {
            "no extrapolation: what the last measured anchor shows (rows: no change, since nothing is \
             measured beyond today; a feature: the with-minus-without difference at the pilot's full \
             size)"
        }
        Method::PilotAlone => {
            "the pilot's with-feature curve alone, read at today's training rows, against today's \
             curve (rows options have no pilot and read today's curves as acquest does; a pilot too \
             small for a curve falls back to its last anchor)"
        }
    }
}

/// One round's hold-out, as indices into the full dataset.
#[derive(Debug, Clone, PartialEq)]
pub struct RoundSplit {
    /// Rows the appraisal sees, sorted.
    pub kept: Vec<usize>,
    /// Rows held back, sorted.
    pub held: Vec<usize>,
    /// For each held feature, the kept rows on which it stays filled, sorted.
    pub pilots: Vec<Vec<usize>>,
}

/// Draws round `round`'s hold-out: the held rows within every (group, label) cell so that the
/// rows kept keep the data's mix, and each held feature's pilot as a plain random sample of the
/// kept rows (as a real pilot would be).
pub fn split_round(
    data: &Dataset,
    settings: &BacktestSettings,
    seed: u64,
    round: usize,
) -> RoundSplit {
    let mut rng = stream_rng(seed, Stream::BacktestHoldOut, round as u64);
    let all: Vec<usize> = (0..data.rows()).collect();
    let (kept, held) = if settings.hold_rows > 0.0 {
        trial::stratified_split_of(
            &all,
            &data.labels,
            &data.groups,
            data.group_list.len(),
            settings.hold_rows,
            &mut rng,
        )
    } else {
        (all, Vec::new())
    };
    let pilot_rows = ((kept.len() as f64 * settings.pilot).round() as usize).max(1);
    let pilots = settings
        .hold_features
        .iter()
        .map(|_| {
            let mut pilot = kept.clone();
            pilot.shuffle(&mut rng);
            pilot.truncate(pilot_rows);
            pilot.sort_unstable();
            pilot
        })
        .collect();
    RoundSplit { kept, held, pilots }
}

/// The data the appraisal sees: the kept rows only, the held features taken out of the features
/// and made candidates filled on their pilots only.
pub fn reduced_dataset(data: &Dataset, split: &RoundSplit, held_features: &[String]) -> Dataset {
    let features = data
        .features
        .iter()
        .filter(|c| !held_features.contains(&c.name))
        .map(|c| c.take(&split.kept))
        .collect();
    let mut position = vec![usize::MAX; data.rows()];
    for (j, &i) in split.kept.iter().enumerate() {
        position[i] = j;
    }
    let candidates = held_features
        .iter()
        .zip(&split.pilots)
        .filter_map(|(name, pilot)| {
            let column = data.features.iter().find(|c| &c.name == name)?;
            let mut filled = vec![false; split.kept.len()];
            for &i in pilot {
                filled[position[i]] = true;
            }
            Some(column.take(&split.kept).masked(&filled))
        })
        .collect();
    Dataset {
        labels: split.kept.iter().map(|&i| data.labels[i]).collect(),
        groups: split.kept.iter().map(|&i| data.groups[i]).collect(),
        features,
        candidates,
        rows_read: split.kept.len(),
        dropped_missing_label: 0,
        dropped_missing_group: 0,
        warnings: Vec::new(),
        group_list: data.group_list.clone(),
        reference: data.reference,
        reference_rule: data.reference_rule.clone(),
        protected: data.protected.clone(),
        more_attributes: data
            .more_attributes
            .iter()
            .map(|a| a.take(&split.kept))
            .collect(),
        favourable: data.favourable.clone(),
        unfavourable: data.unfavourable.clone(),
    }
}

/// The options of buying back what a round held: the held rows, the held rows of one group, and
/// each held feature, at a unit cost of 1 per row (costs do not enter the gains compared).
fn round_options(
    data: &Dataset,
    split: &RoundSplit,
    settings: &BacktestSettings,
    group: Option<&(String, String)>,
) -> Vec<CostOption> {
    let option = |name: String, acquisition, max_rows| CostOption {
        name,
        acquisition,
        per_row: 1.0,
        fixed: 0.0,
        max_rows,
        step: None,
        sensitive: false,
        note: String::new(),
        pilot: Default::default(),
    };
    let mut options = Vec::new();
    if !split.held.is_empty() {
        options.push(option(
            "held-back rows".into(),
            Acquisition::Rows { filter: None },
            Some(split.held.len()),
        ));
    }
    if let Some((column, name)) = group {
        let marked = data.group_rows(column, name).unwrap_or_default();
        let count = split
            .held
            .iter()
            .filter(|&&i| marked.get(i) == Some(&true))
            .count();
        options.push(option(
            format!("held-back rows of {name}"),
            Acquisition::Rows {
                filter: Some((column.clone(), name.clone())),
            },
            Some(count),
        ));
    }
    for column in &settings.hold_features {
        options.push(option(
            format!("feature {column}"),
            Acquisition::Feature {
                column: column.clone(),
            },
            None,
        ));
    }
    options
}

/// The rows of one realised trial, as indices into the full dataset.
#[derive(Debug, Clone, PartialEq)]
pub struct RealisedSplit {
    /// Training part of the kept rows (what the appraisal's "today" trains on).
    pub train: Vec<usize>,
    /// Test part of the kept rows: every realised model of the repeat is scored on it.
    pub test: Vec<usize>,
    /// The held rows' training share, split at the same test fraction, so that buying them
    /// grows the training rows as the appraisal assumes (`today × (rows + new) / rows`).
    pub held_train: Vec<usize>,
    /// The held rows' test share, not used: the test rows stay those of today.
    pub held_test: Vec<usize>,
}

/// Repeat `repeat` of round `round`: one stratified split of the kept rows and one of the held
/// rows.
pub fn realised_split(
    data: &Dataset,
    split: &RoundSplit,
    test_fraction: f64,
    seed: u64,
    round: usize,
    repeat: usize,
) -> RealisedSplit {
    let mut rng = stream_rng(
        seed,
        Stream::BacktestRealised,
        (round * 1_000 + repeat) as u64,
    );
    let group_count = data.group_list.len();
    let (train, test) = trial::stratified_split_of(
        &split.kept,
        &data.labels,
        &data.groups,
        group_count,
        test_fraction,
        &mut rng,
    );
    let (held_train, held_test) = trial::stratified_split_of(
        &split.held,
        &data.labels,
        &data.groups,
        group_count,
        test_fraction,
        &mut rng,
    );
    RealisedSplit {
        train,
        test,
        held_train,
        held_test,
    }
}

/// The training rows of an option bought for real: today's plus the held rows' training share
/// (all of it, or one group's), or today's alone for a feature.
pub fn realised_training(data: &Dataset, option: &CostOption, rows: &RealisedSplit) -> Vec<usize> {
    let mut train = rows.train.clone();
    match &option.acquisition {
        Acquisition::Rows { filter: None } => train.extend_from_slice(&rows.held_train),
        Acquisition::Rows {
            filter: Some((column, name)),
        } => {
            let marked = data.group_rows(column, name).unwrap_or_default();
            train.extend(
                rows.held_train
                    .iter()
                    .filter(|&&i| marked.get(i) == Some(&true)),
            );
        }
        Acquisition::Feature { .. } => {}
    }
    train.sort_unstable();
    train
}

impl QuantityRecord {
    fn predicted(&self, method: Method) -> &Change {
        match method {
            Method::Acquest => &self.acquest,
            Method::LastAnchor => &self.last_anchor,
            Method::PilotAlone => &self.pilot_alone,
        }
    }
}

/// Runs `acquest backtest`.
pub fn run(
    settings: &Settings,
    backtest: &BacktestSettings,
    progress: ProgressSink,
) -> Result<BacktestReport> {
    settings::check_backtest(backtest)?;
    let (table, data) = Dataset::load(settings)?;
    for name in &backtest.hold_features {
        if !data.features.iter().any(|c| &c.name == name) {
            return Err(Error::UnknownColumn {
                flag: "--hold-features".into(),
                name: name.clone(),
                hint: nearest_hint(name, data.features.iter().map(|c| c.name.as_str())),
            });
        }
    }
    if backtest.hold_features.len() >= data.features.len() {
        return Err(Error::setting(
            "--hold-features",
            "holds every feature back; at least one must stay for today's model",
        ));
    }
    // The held group: a group of the first protected attribute by name, or as a rows option
    // names one (`race=Black`, or a cell `sex=Female&race=Black`).
    let group = match &backtest.hold_group {
        Some(text) if text.contains('=') => Some(
            crate::data::costs::rows_target(&data, &data.protected, text)
                .map_err(|reason| Error::setting("--hold-group", reason))?,
        ),
        Some(name) => {
            if !data.group_list.iter().any(|g| &g.name == name) {
                return Err(Error::UnknownValue {
                    flag: "--hold-group".into(),
                    column: data.protected.clone(),
                    value: name.clone(),
                    hint: nearest_hint(name, data.group_list.iter().map(|g| g.name.as_str())),
                });
            }
            Some((data.protected.clone(), name.clone()))
        }
        None => None,
    };
    let appraisal = AppraisalSettings {
        costs: PathBuf::from("(built by the backtest: unit cost 1 per row)"),
        currency: "units".into(),
        fairness: backtest.fairness,
        weigh_accuracy: 1.0,
        weigh_fairness: 1.0,
        held_features: false,
    };
    let inputs = baseline::inputs(settings, &table, &data);
    drop(table);
    let mut rounds = Vec::new();
    for round in 0..backtest.rounds {
        rounds.push(run_round(
            &data,
            settings,
            backtest,
            &appraisal,
            &inputs,
            group.as_ref(),
            round,
            progress,
        )?);
    }
    let test_fraction = settings.trials.test_fraction;
    let summary: Vec<QuantitySummary> = Gain::ALL
        .into_iter()
        .map(|q| {
            summarise(
                &rounds,
                q,
                settings.trials.confidence,
                test_fraction / (1.0 - test_fraction),
            )
        })
        .collect();
    let targets = check_targets(&summary, backtest.fairness);
    let growth_check = backtest
        .check_growth
        .map(|factor| growth_summary(&rounds, factor));
    let mut warnings = data.warnings.clone();
    warnings.extend(data.first_attribute_only());
    if data.rows() < 2_000 {
        warnings.push(format!(
            "{} rows: realised gains on test parts this small are noisy, so few of them differ \
             significantly from zero and coverage and rank figures rest on few cases",
            crate::report::thousands(data.rows())
        ));
    }
    Ok(BacktestReport {
        format: FORMAT.into(),
        format_version: FORMAT_VERSION,
        tool_version: env!("CARGO_PKG_VERSION").into(),
        command: "backtest".into(),
        inputs,
        backtest: backtest.clone(),
        significance: SIGNIFICANCE,
        methods: Method::ALL
            .into_iter()
            .map(|method| MethodNote {
                method,
                description: description(method).to_string(),
            })
            .collect(),
        rounds,
        summary,
        targets,
        growth_check,
        warnings,
        cautions: CAUTIONS.iter().map(|c| c.to_string()).collect(),
    })
}

#[allow(clippy::too_many_arguments)]
fn run_round(
    data: &Dataset,
    settings: &Settings,
    backtest: &BacktestSettings,
    appraisal: &AppraisalSettings,
    inputs: &Inputs,
    group: Option<&(String, String)>,
    round: usize,
    progress: ProgressSink,
) -> Result<RoundRecord> {
    let trials = &settings.trials;
    let split = split_round(data, backtest, trials.seed, round);
    let reduced = reduced_dataset(data, &split, &backtest.hold_features);
    let options = round_options(data, &split, backtest, group);
    let (report, appraiser) = appraise::appraise_dataset(
        AppraisalInput {
            data: reduced.clone(),
            options: options.clone(),
            inputs: inputs.clone(),
            costs_sha256: String::new(),
            held_features: false,
        },
        settings,
        appraisal,
        progress,
    )?;
    let outcomes = realise(data, &split, backtest, &options, settings, round, progress)?;
    let mut growth_checks = match backtest.check_growth {
        Some(factor) => {
            let grown = grown_pilots(data, &split, backtest, factor, trials.seed, round);
            let grown_data = reduced_dataset(data, &grown, &backtest.hold_features);
            report
                .options
                .iter()
                .enumerate()
                .map(|(k, now)| growth_check(&appraiser, k, now, &grown_data, progress))
                .collect::<Result<Vec<_>>>()?
        }
        None => vec![None; options.len()],
    };
    let test_to_train = trials.test_fraction / (1.0 - trials.test_fraction);
    let records = options
        .iter()
        .enumerate()
        .map(|(k, option)| {
            let readings = &appraiser.readings()[k];
            let quantities = Gain::ALL
                .into_iter()
                .map(|q| {
                    let realised =
                        realised_gain(data, q, &outcomes, k, trials.confidence, test_to_train);
                    let predict = |after: &crate::estimate::learning::Reading| {
                        predicted(&reduced, q, trials, readings, after)
                    };
                    QuantityRecord {
                        quantity: q,
                        acquest: predict(&readings.after),
                        last_anchor: predict(&readings.last_anchor),
                        pilot_alone: predict(readings.direct.as_ref().unwrap_or(
                            if matches!(option.acquisition, Acquisition::Feature { .. }) {
                                &readings.last_anchor
                            } else {
                                &readings.after
                            },
                        )),
                        realised,
                    }
                })
                .collect();
            OptionRecord {
                option: option.name.clone(),
                kind: option.kind(),
                rows: option.max_rows.unwrap_or(split.kept.len()),
                quantities,
                growth_check: growth_checks[k].take(),
            }
        })
        .collect();
    Ok(RoundRecord {
        round,
        kept_rows: split.kept.len(),
        held_rows: split.held.len(),
        pilots: backtest
            .hold_features
            .iter()
            .zip(&split.pilots)
            .map(|(f, p)| PilotRows {
                feature: f.clone(),
                rows: p.len(),
            })
            .collect(),
        options: records,
        warnings: report.warnings,
    })
}

/// The round's pilots grown `factor` times for the narrowing check: each keeps its rows and
/// gains kept rows outside it on which the feature is filled, drawn at random, until it holds
/// `factor` times the filled rows it had (or every filled kept row), as collecting the feature
/// on more records would.
fn grown_pilots(
    data: &Dataset,
    split: &RoundSplit,
    backtest: &BacktestSettings,
    factor: usize,
    seed: u64,
    round: usize,
) -> RoundSplit {
    let mut rng = stream_rng(seed, Stream::BacktestGrownPilots, round as u64);
    let pilots = backtest
        .hold_features
        .iter()
        .zip(&split.pilots)
        .map(|(name, pilot)| {
            let filled = |i: &usize| {
                data.features
                    .iter()
                    .find(|c| &c.name == name)
                    .is_some_and(|c| !c.is_missing(*i))
            };
            let mut inside = vec![false; data.rows()];
            for &i in pilot {
                inside[i] = true;
            }
            let mut outside: Vec<usize> = split
                .kept
                .iter()
                .copied()
                .filter(|i| !inside[*i] && filled(i))
                .collect();
            outside.shuffle(&mut rng);
            let had = pilot.iter().filter(|i| filled(i)).count();
            let mut grown = pilot.clone();
            grown.extend(outside.into_iter().take(had * (factor - 1)));
            grown.sort_unstable();
            grown
        })
        .collect();
    RoundSplit {
        kept: split.kept.clone(),
        held: split.held.clone(),
        pilots,
    }
}

/// Option `k` of a round under the narrowing check (features only): valued again on
/// `grown_data`, its interval widths set beside those the first appraisal predicted for a pilot
/// of that many rows.
fn growth_check(
    appraiser: &appraise::Appraiser,
    k: usize,
    now: &OptionValue,
    grown_data: &Dataset,
    progress: ProgressSink,
) -> Result<Option<GrowthCheck>> {
    let Some(pilot) = now
        .pilot
        .as_ref()
        .filter(|_| now.kind == OptionKind::Feature)
    else {
        return Ok(None);
    };
    let later = appraiser.value_feature(k, grown_data, progress)?;
    let grown_rows = later.pilot.as_ref().map_or(0, |p| p.rows);
    let predicted = pilot.growth.sizes.iter().find(|s| s.rows == grown_rows);
    let width = |c: &Change| Some(c.high? - c.low?).filter(|w| w.is_finite());
    let expected = |e: Option<&ExpectedGain>| e.map(|e| e.high - e.low);
    Ok(Some(GrowthCheck {
        pilot_rows: pilot.rows,
        grown_rows,
        accuracy: WidthCheck {
            now: width(&now.estimate.accuracy_gain),
            predicted: predicted.and_then(|s| expected(s.accuracy_gain.as_ref())),
            realised: width(&later.estimate.accuracy_gain),
        },
        unfairness: WidthCheck {
            now: width(&now.estimate.unfairness_reduction),
            predicted: predicted.and_then(|s| expected(s.unfairness_reduction.as_ref())),
            realised: width(&later.estimate.unfairness_reduction),
        },
    }))
}

/// The narrowing check over every round: predicted against realised widths.
fn growth_summary(rounds: &[RoundRecord], factor: usize) -> GrowthSummary {
    let checks: Vec<&GrowthCheck> = rounds
        .iter()
        .flat_map(|r| &r.options)
        .filter_map(|o| o.growth_check.as_ref())
        .collect();
    let summary = |width: fn(&GrowthCheck) -> &WidthCheck| {
        let median = |mut values: Vec<f64>| crate::stats::curve::quantile(&mut values, 0.5);
        let pairs: Vec<(f64, f64, Option<f64>)> = checks
            .iter()
            .filter_map(|c| {
                let w = width(c);
                Some((w.predicted?, w.realised?, w.now)).filter(|p| p.1 > 0.0)
            })
            .collect();
        let ratios: Vec<f64> = pairs.iter().map(|(p, r, _)| p / r).collect();
        let within = ratios.iter().filter(|&&x| (x - 1.0).abs() <= 0.25).count();
        WidthSummary {
            checks: pairs.len(),
            median_ratio: median(ratios.clone()),
            within_25_percent: (!ratios.is_empty()).then(|| within as f64 / ratios.len() as f64),
            median_ratio_unchanged: median(
                pairs
                    .iter()
                    .filter_map(|(_, r, n)| Some(n.as_ref()? / r))
                    .collect(),
            ),
        }
    };
    GrowthSummary {
        factor,
        accuracy: summary(|c| &c.accuracy),
        unfairness: summary(|c| &c.unfairness),
    }
}

/// The predicted change of quantity `q` from the readings' `now` to `after`.
fn predicted(
    reduced: &Dataset,
    q: Gain,
    trials: &crate::settings::TrialSettings,
    readings: &OptionReadings,
    after: &crate::estimate::learning::Reading,
) -> Change {
    let measure = match q {
        Gain::Accuracy => FairnessMeasure::Eod,
        Gain::Fairness(m) => m,
    };
    let (accuracy, fairness) =
        crate::estimate::score::score_readings(reduced, measure, trials, &readings.now, after);
    match q {
        Gain::Accuracy => accuracy,
        Gain::Fairness(_) => fairness,
    }
}

/// Realised trials: for every repeat, today's model and one model per option, all scored on
/// the repeat's test part of the kept rows. Returns `[repeat][0 today, 1.. options]`.
fn realise(
    data: &Dataset,
    split: &RoundSplit,
    backtest: &BacktestSettings,
    options: &[CostOption],
    settings: &Settings,
    round: usize,
    progress: ProgressSink,
) -> Result<Vec<Vec<TrialOutcome>>> {
    let trials = &settings.trials;
    let today: Vec<Column> = data
        .features
        .iter()
        .filter(|c| !backtest.hold_features.contains(&c.name))
        .cloned()
        .collect();
    // Each option's columns: today's, with a feature option's column filled on every row.
    let columns: Vec<Vec<Column>> = options
        .iter()
        .map(|option| match &option.acquisition {
            Acquisition::Feature { column } => {
                let mut with = today.clone();
                with.extend(data.features.iter().find(|c| &c.name == column).cloned());
                with
            }
            Acquisition::Rows { .. } => today.clone(),
        })
        .collect();
    let splits: Vec<GivenSplit> = (0..trials.repeats)
        .map(|repeat| {
            let rows = realised_split(
                data,
                split,
                trials.test_fraction,
                trials.seed,
                round,
                repeat,
            );
            let mut train = vec![rows.train.clone()];
            train.extend(options.iter().map(|o| realised_training(data, o, &rows)));
            GivenSplit {
                test: rows.test,
                train,
            }
        })
        .collect();
    let mut arms = vec![Arm::of(&today)];
    arms.extend(columns.iter().map(|c| Arm::of(c)));
    let design = TrialDesign {
        stage: "realised trials",
        rows: Rows::Given(&splits),
        arms,
    };
    Ok(trial::run(data, trials, &design, progress)?
        .into_iter()
        .map(|arms| arms.into_iter().filter_map(|mut a| a.sizes.pop()).collect())
        .collect())
}

/// The realised gain of option `k` in quantity `q`: accuracy after minus before, or unfairness
/// before minus after, paired repeat by repeat.
fn realised_gain(
    data: &Dataset,
    q: Gain,
    outcomes: &[Vec<TrialOutcome>],
    k: usize,
    confidence: f64,
    test_to_train: f64,
) -> RealisedGain {
    let per_repeat: Vec<Option<f64>> = outcomes
        .iter()
        .map(|repeat| {
            let (before, after) = (&repeat[0], &repeat[k + 1]);
            match q {
                Gain::Accuracy => Some(after.accuracy - before.accuracy),
                Gain::Fairness(measure) => Some(
                    fairness::worst_of_counts(measure, &before.counts, data.reference)?
                        - fairness::worst_of_counts(measure, &after.counts, data.reference)?,
                ),
            }
        })
        .collect();
    let values: Vec<f64> = per_repeat.iter().flatten().copied().collect();
    let e = estimate(&values, confidence, test_to_train, Some(0.0));
    let standard_error = e.as_ref().and_then(|e| {
        let n = e.trials as f64;
        e.std_dev
            .map(|s| (s * s * (1.0 / n + test_to_train)).sqrt())
    });
    RealisedGain {
        mean: e.as_ref().map_or(f64::NAN, |e| e.mean),
        low: e.as_ref().and_then(|e| e.low),
        high: e.as_ref().and_then(|e| e.high),
        p_value: e.as_ref().and_then(|e| e.p_value),
        standard_error,
        per_repeat,
    }
}

/// One option-round of one quantity, flattened for the summary.
struct Entry<'a> {
    round: usize,
    record: &'a QuantityRecord,
    test_to_train: f64,
}

/// Whether two option-rounds' realised gains differ significantly: paired over repeats within
/// a round (they share today's trials), independent normal test across rounds.
fn differ(a: &Entry, b: &Entry, confidence: f64) -> bool {
    let (ra, rb) = (&a.record.realised, &b.record.realised);
    if a.round == b.round {
        let d: Vec<f64> = ra
            .per_repeat
            .iter()
            .zip(&rb.per_repeat)
            .filter_map(|(x, y)| Some((*x)? - (*y)?))
            .collect();
        estimate(&d, confidence, a.test_to_train, Some(0.0))
            .and_then(|e| e.p_value)
            .is_some_and(|p| p < SIGNIFICANCE)
    } else {
        match (ra.standard_error, rb.standard_error) {
            (Some(sa), Some(sb)) if sa > 0.0 || sb > 0.0 => {
                let z = (ra.mean - rb.mean).abs() / (sa * sa + sb * sb).sqrt();
                // Two-sided 5% point of the standard normal (statrs, as metrics uses).
                z > 1.959_963_984_540_054
            }
            _ => (ra.mean - rb.mean).abs() > 0.0,
        }
    }
}

fn summarise(
    rounds: &[RoundRecord],
    quantity: Gain,
    confidence: f64,
    test_to_train: f64,
) -> QuantitySummary {
    let entries: Vec<Entry> = rounds
        .iter()
        .flat_map(|r| {
            r.options.iter().filter_map(move |o| {
                o.quantities
                    .iter()
                    .find(|q| q.quantity == quantity)
                    .map(|record| Entry {
                        round: r.round,
                        record,
                        test_to_train,
                    })
            })
        })
        .filter(|e| e.record.realised.mean.is_finite())
        .collect();
    let chains = distinct_chains(rounds, &entries, confidence);
    let methods = Method::ALL
        .into_iter()
        .map(|m| method_summary(m, rounds, &entries, &chains, confidence))
        .collect();
    QuantitySummary {
        quantity,
        nominal_coverage: confidence,
        methods,
    }
}

/// In every round, a chain of options whose realised gains differ significantly from each
/// other: walk them from the lowest realised gain up, keeping each that differs from every one
/// kept.
fn distinct_chains(rounds: &[RoundRecord], entries: &[Entry], confidence: f64) -> Vec<Vec<usize>> {
    rounds
        .iter()
        .map(|round| {
            let mut here: Vec<usize> = (0..entries.len())
                .filter(|&i| entries[i].round == round.round)
                .collect();
            here.sort_by(|&a, &b| {
                entries[a]
                    .record
                    .realised
                    .mean
                    .total_cmp(&entries[b].record.realised.mean)
            });
            let mut chain: Vec<usize> = Vec::new();
            for i in here {
                if chain
                    .iter()
                    .all(|&j| differ(&entries[i], &entries[j], confidence))
                {
                    chain.push(i);
                }
            }
            chain
        })
        .collect()
}

/// How well one method did over every option-round of one quantity: errors, coverage, signs,
/// rank correlation within rounds, and the best option named.
fn method_summary(
    m: Method,
    rounds: &[RoundRecord],
    entries: &[Entry],
    chains: &[Vec<usize>],
    confidence: f64,
) -> MethodSummary {
    let predicted = |e: &Entry| e.record.predicted(m).mean;
    let realised = |e: &Entry| e.record.realised.mean;
    let errors: Vec<f64> = entries
        .iter()
        .map(|e| (predicted(e) - realised(e)).abs() * 100.0)
        .collect();
    let net = {
        let squared: Vec<f64> = entries
            .iter()
            .map(|e| {
                let se = e.record.realised.standard_error.unwrap_or(0.0);
                (predicted(e) - realised(e)).powi(2) - se * se
            })
            .collect();
        (!squared.is_empty()).then(|| {
            (squared.iter().sum::<f64>() / squared.len() as f64)
                .max(0.0)
                .sqrt()
                * 100.0
        })
    };
    let with_interval: Vec<&Entry> = entries
        .iter()
        .filter(|e| {
            let c = e.record.predicted(m);
            c.low.is_some() && c.high.is_some()
        })
        .collect();
    let covered = with_interval
        .iter()
        .filter(|e| {
            let c = e.record.predicted(m);
            let r = realised(e);
            c.low.is_some_and(|l| l <= r) && c.high.is_some_and(|h| r <= h)
        })
        .count();
    let z = statrs::distribution::Normal::new(0.0, 1.0)
        .map(|n| {
            use statrs::distribution::ContinuousCDF;
            n.inverse_cdf(0.5 + confidence / 2.0)
        })
        .unwrap_or(1.645);
    let covered_allowing_noise = with_interval
        .iter()
        .filter(|e| {
            let c = e.record.predicted(m);
            let r = realised(e);
            let noise = z * e.record.realised.standard_error.unwrap_or(0.0);
            let widen = |side: f64| (side * side + noise * noise).sqrt();
            match (c.low, c.high) {
                (Some(l), Some(h)) => {
                    c.mean - widen(c.mean - l) <= r && r <= c.mean + widen(h - c.mean)
                }
                _ => false,
            }
        })
        .count();
    let significant: Vec<&Entry> = entries
        .iter()
        .filter(|e| e.record.realised.p_value.is_some_and(|p| p < SIGNIFICANCE))
        .collect();
    let sign_correct = significant
        .iter()
        .filter(|e| predicted(e).signum() == realised(e).signum() && predicted(e) != 0.0)
        .count();
    // Detection: a significant realised gain whose predicted interval excludes zero on its side.
    let detected = significant
        .iter()
        .filter(|e| {
            let c = e.record.predicted(m);
            match (c.low, c.high) {
                (Some(l), Some(_)) if realised(e) > 0.0 => l > 0.0,
                (Some(_), Some(h)) if realised(e) < 0.0 => h < 0.0,
                _ => false,
            }
        })
        .count();
    let intervals: Vec<(f64, f64, f64)> = with_interval
        .iter()
        .filter_map(|e| {
            let c = e.record.predicted(m);
            Some((c.low?, c.high?, realised(e)))
        })
        .collect();
    let mean_pp = |values: Vec<f64>| -> Option<f64> {
        (!values.is_empty()).then(|| values.iter().sum::<f64>() / values.len() as f64 * 100.0)
    };
    let alpha = 1.0 - confidence;
    // Spearman's correlation within each round (the options a user would rank), averaged
    // over the rounds where it is defined.
    let within = |sets: &mut dyn Iterator<Item = Vec<usize>>| -> Option<f64> {
        let values: Vec<f64> = sets
            .filter_map(|set| {
                let (p, r): (Vec<f64>, Vec<f64>) = set
                    .iter()
                    .map(|&i| (predicted(&entries[i]), realised(&entries[i])))
                    .unzip();
                metrics::spearman(&p, &r)
            })
            .collect();
        (!values.is_empty()).then(|| values.iter().sum::<f64>() / values.len() as f64)
    };
    let spearman_all = within(&mut rounds.iter().map(|round| {
        (0..entries.len())
            .filter(|&i| entries[i].round == round.round)
            .collect()
    }));
    let spearman_distinct = within(&mut chains.iter().cloned());
    let (mut named, mut tied, mut compared) = (0, 0, 0);
    for round in rounds {
        let here: Vec<&Entry> = entries.iter().filter(|e| e.round == round.round).collect();
        if here.len() < 2 {
            continue;
        }
        compared += 1;
        let best = |f: &dyn Fn(&Entry) -> f64| {
            (0..here.len())
                .max_by(|&a, &b| f(here[a]).total_cmp(&f(here[b])).then(b.cmp(&a)))
                .unwrap_or(0)
        };
        let (chosen, truly) = (best(&predicted), best(&realised));
        if chosen == truly {
            named += 1;
            tied += 1;
        } else if !differ(here[chosen], here[truly], confidence) {
            tied += 1;
        }
    }
    MethodSummary {
        method: m,
        entries: entries.len(),
        mean_absolute_error_pp: (!errors.is_empty())
            .then(|| errors.iter().sum::<f64>() / errors.len() as f64),
        error_net_of_noise_pp: net,
        with_interval: with_interval.len(),
        covered,
        coverage: (!with_interval.is_empty()).then(|| covered as f64 / with_interval.len() as f64),
        covered_allowing_noise,
        coverage_allowing_noise: (!with_interval.is_empty())
            .then(|| covered_allowing_noise as f64 / with_interval.len() as f64),
        significant: significant.len(),
        sign_correct,
        spearman_all,
        spearman_distinct,
        distinct_entries: chains.iter().map(Vec::len).sum(),
        distinct_rounds: chains.iter().filter(|c| c.len() >= 2).count(),
        best_named: named,
        interval_score_pp: mean_pp(
            intervals
                .iter()
                .map(|&(l, h, r)| interval_score(l, h, r, alpha))
                .collect(),
        ),
        mean_width_pp: mean_pp(intervals.iter().map(|&(l, h, _)| h - l).collect()),
        detected,
        detection: (!significant.is_empty()).then(|| detected as f64 / significant.len() as f64),
        best_named_or_tied: tied,
        rounds_compared: compared,
    }
}

/// The interval score of a central (1 − α) interval [low, high] against the value seen:
/// its width, plus 2/α times how far the value falls outside it (Gneiting and Raftery 2007,
/// "Strictly proper scoring rules, prediction, and estimation", JASA 102, section 6.2, from
/// memory). Lower is better; it rewards narrow intervals only as far as they still cover.
pub fn interval_score(low: f64, high: f64, seen: f64, alpha: f64) -> f64 {
    let below = (low - seen).max(0.0);
    let above = (seen - high).max(0.0);
    (high - low) + 2.0 / alpha * (below + above)
}

/// The quality targets of the backtest, for accuracy and the chosen fairness measure.
fn check_targets(summary: &[QuantitySummary], fairness: FairnessMeasure) -> Vec<TargetCheck> {
    let mut checks = Vec::new();
    for quantity in [Gain::Accuracy, Gain::Fairness(fairness)] {
        let Some(s) = summary.iter().find(|s| s.quantity == quantity) else {
            continue;
        };
        let label = quantity.label();
        let ours = &s.methods[0];
        let pct = |x: Option<f64>| x.map_or("n/a".into(), |x| format!("{:.0}%", x * 100.0));
        let num = |x: Option<f64>| x.map_or("n/a".into(), |x| format!("{x:.2}"));
        checks.push(TargetCheck {
            target: format!("best option by {label} named in every round"),
            met: ours.rounds_compared > 0 && ours.best_named == ours.rounds_compared,
            figure: format!(
                "{} of {} rounds ({} named or tied with the best)",
                ours.best_named, ours.rounds_compared, ours.best_named_or_tied
            ),
        });
        checks.push(TargetCheck {
            target: format!("sign of every significant realised {label} predicted"),
            met: ours.sign_correct == ours.significant,
            figure: format!("{} of {}", ours.sign_correct, ours.significant),
        });
        checks.push(TargetCheck {
            target: format!(
                "Spearman at least 0.8 over the options whose realised {label} differ significantly, within a round"
            ),
            met: ours.spearman_distinct.is_some_and(|r| r >= 0.8),
            figure: format!(
                "{} (mean over {} rounds, {} options in all; {} over all options)",
                num(ours.spearman_distinct),
                ours.distinct_rounds,
                ours.distinct_entries,
                num(ours.spearman_all),
            ),
        });
        checks.push(TargetCheck {
            target: format!(
                "{:.0}% intervals of the {label} cover 70% to 90% of realised values",
                s.nominal_coverage * 100.0
            ),
            met: ours.coverage.is_some_and(|c| (0.7..=0.9).contains(&c)),
            figure: format!(
                "{} ({} of {})",
                pct(ours.coverage),
                ours.covered,
                ours.with_interval
            ),
        });
        if quantity == Gain::Accuracy {
            checks.push(TargetCheck {
                target: "mean absolute error of accuracy gains at most 0.5 percentage points"
                    .into(),
                met: ours.mean_absolute_error_pp.is_some_and(|e| e <= 0.5),
                figure: format!(
                    "{} pp (root mean squared error net of the realised gains' noise: {} pp)",
                    num(ours.mean_absolute_error_pp),
                    num(ours.error_net_of_noise_pp)
                ),
            });
        }
        let mae = |m: &MethodSummary| m.mean_absolute_error_pp.unwrap_or(f64::INFINITY);
        let beaten: Vec<&MethodSummary> = s.methods[1..].iter().collect();
        checks.push(TargetCheck {
            target: format!("smaller mean absolute error of the {label} than both baselines"),
            met: beaten.iter().all(|b| mae(ours) < mae(b)),
            figure: format!(
                "{} pp against {}",
                num(ours.mean_absolute_error_pp),
                beaten
                    .iter()
                    .map(|b| format!("{} {} pp", b.method.name(), num(b.mean_absolute_error_pp)))
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
        });
    }
    checks
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn interval_score_is_width_plus_the_weighted_miss() {
        // Worked by hand from the definition (Gneiting and Raftery 2007, section 6.2, from
        // memory): an 80% interval [0, 1] (alpha 0.2, so misses weigh 2/0.2 = 10).
        assert!((interval_score(0.0, 1.0, 0.5, 0.2) - 1.0).abs() < 1e-12);
        assert!((interval_score(0.0, 1.0, 1.5, 0.2) - 6.0).abs() < 1e-12);
        assert!((interval_score(0.0, 1.0, -0.25, 0.2) - 3.5).abs() < 1e-12);
    }
    use crate::data::{Group, Values};

    /// 400 rows, two groups, an `id` feature that names each row and a second feature.
    fn small() -> Dataset {
        let rows = 400;
        let numeric = |name: &str, f: &dyn Fn(usize) -> f64| Column {
            name: name.into(),
            values: std::sync::Arc::new(Values::Numeric((0..rows).map(|i| Some(f(i))).collect())),
        };
        Dataset {
            labels: (0..rows).map(|i| i % 3 == 0).collect(),
            groups: (0..rows).map(|i| u32::from(i % 4 == 0)).collect(),
            group_list: vec![
                Group {
                    name: "a".into(),
                    definition: "g = a".into(),
                },
                Group {
                    name: "b".into(),
                    definition: "g = b".into(),
                },
            ],
            reference: 0,
            reference_rule: String::new(),
            protected: "g".into(),
            more_attributes: Vec::new(),
            features: vec![
                numeric("id", &|i| i as f64),
                numeric("x", &|i| (i % 7) as f64),
            ],
            candidates: Vec::new(),
            favourable: "yes".into(),
            unfavourable: "no".into(),
            rows_read: rows,
            dropped_missing_label: 0,
            dropped_missing_group: 0,
            warnings: Vec::new(),
        }
    }

    fn settings() -> BacktestSettings {
        BacktestSettings {
            hold_rows: 0.4,
            hold_features: vec!["x".into()],
            pilot: 0.25,
            hold_group: Some("b".into()),
            rounds: 2,
            fairness: FairnessMeasure::Eod,
            check_growth: None,
        }
    }

    fn ids(column: &Column) -> Vec<Option<f64>> {
        match &*column.values {
            Values::Numeric(v) => v.clone(),
            Values::Categorical { .. } => unreachable!(),
        }
    }

    #[test]
    fn held_rows_never_reach_the_reduced_data() {
        let data = small();
        for round in 0..3 {
            let split = split_round(&data, &settings(), 9, round);
            let mut both: Vec<usize> = split.kept.iter().chain(&split.held).copied().collect();
            both.sort_unstable();
            assert_eq!(
                both,
                (0..400).collect::<Vec<_>>(),
                "kept and held partition the rows"
            );
            assert_eq!(split.held.len(), 160, "40% held");
            let reduced = reduced_dataset(&data, &split, &settings().hold_features);
            let seen: Vec<usize> = ids(&reduced.features[0])
                .into_iter()
                .map(|v| v.unwrap() as usize)
                .collect();
            assert_eq!(
                seen, split.kept,
                "the reduced data holds exactly the kept rows"
            );
            assert!(seen.iter().all(|i| !split.held.contains(i)));
            let labels: Vec<bool> = split.kept.iter().map(|&i| data.labels[i]).collect();
            assert_eq!(reduced.labels, labels);
            assert_eq!(reduced.features.len(), 1, "x is taken out of the features");
            // The held feature is filled exactly on its pilot, and nowhere else.
            let candidate = &reduced.candidates[0];
            assert_eq!(candidate.name, "x");
            let filled: Vec<usize> = (0..reduced.rows())
                .filter(|&j| !candidate.is_missing(j))
                .map(|j| split.kept[j])
                .collect();
            assert_eq!(filled, split.pilots[0]);
            assert_eq!(filled.len(), 60, "a quarter of the 240 kept rows");
        }
        assert_ne!(
            split_round(&data, &settings(), 9, 0).held,
            split_round(&data, &settings(), 9, 1).held,
            "rounds hold back different rows"
        );
    }

    #[test]
    fn realised_runs_add_exactly_the_held_rows() {
        let data = small();
        let split = split_round(&data, &settings(), 9, 0);
        let options = round_options(
            &data,
            &split,
            &settings(),
            Some(&("g".to_string(), "b".to_string())),
        );
        assert_eq!(options.len(), 3);
        for repeat in 0..4 {
            let rows = realised_split(&data, &split, 0.3, 9, 0, repeat);
            let mut held: Vec<usize> = rows
                .held_train
                .iter()
                .chain(&rows.held_test)
                .copied()
                .collect();
            held.sort_unstable();
            assert_eq!(
                held, split.held,
                "the held rows' two shares are the held rows"
            );
            assert!(
                rows.test.iter().all(|i| split.kept.contains(i)),
                "tests on kept rows"
            );
            assert!(rows.train.iter().all(|i| split.kept.contains(i)));
            // Rows: today's training rows plus the held rows' training share, nothing else.
            let all = realised_training(&data, &options[0], &rows);
            let mut expected: Vec<usize> =
                rows.train.iter().chain(&rows.held_train).copied().collect();
            expected.sort_unstable();
            assert_eq!(all, expected);
            // Rows of group b: only b's held rows are added.
            let of_b = realised_training(&data, &options[1], &rows);
            let added: Vec<usize> = of_b
                .iter()
                .copied()
                .filter(|i| !rows.train.contains(i))
                .collect();
            let b_held: Vec<usize> = rows
                .held_train
                .iter()
                .copied()
                .filter(|&i| data.groups[i] == 1)
                .collect();
            assert_eq!(added, b_held);
            // A feature trains on today's rows.
            assert_eq!(realised_training(&data, &options[2], &rows), rows.train);
        }
        assert_eq!(
            options[0].max_rows,
            Some(split.held.len()),
            "the rows option buys every held row"
        );
        assert_eq!(
            options[1].max_rows,
            Some(split.held.iter().filter(|&&i| data.groups[i] == 1).count())
        );
    }
}
