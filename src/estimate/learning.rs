//! `acquest curves`: learning curves of accuracy and of each group's rates over nested training
//! sizes, fitted and chosen by forecast, with disparities derived from the fitted rates and bands
//! from a bootstrap over repeats.

use rand::Rng;

use crate::data::Dataset;
use crate::engine::streams::{stream_rng, Stream};
use crate::engine::trial::{
    self, Arm, ArmOutcome, ProgressSink, Rows, Sizes, TrialDesign, TrialOutcome,
};
use crate::error::{Error, Result};
use crate::estimate::baseline;
use crate::report::*;
use crate::settings::{CurveSettings, Settings, SizeRequest};
use crate::stats::curve::{self, Choice, Fit};
use crate::stats::fairness::{self, Rates};
use crate::stats::metrics::GroupCounts;
use crate::stats::trend;

/// Fewest rows of one (group, label) cell that the smallest anchor must hold.
pub const MIN_CELL_ROWS: usize = 10;
/// Fewest rows of the smallest anchor.
pub const MIN_ANCHOR_ROWS: usize = 100;
/// Ratio between successive anchor sizes.
pub const SIZE_RATIO: f64 = std::f64::consts::SQRT_2;
/// Fewest anchors a curve is fitted on.
pub const MIN_ANCHORS: usize = 6;
/// Bootstrap draws over repeats behind every band.
pub const BOOTSTRAP_DRAWS: usize = 200;
/// Sizes beyond this multiple of the largest anchor are flagged as unreliable.
pub const RELIABLE_MULTIPLE: f64 = 4.0;
/// Points of the chart grid.
const GRID_POINTS: usize = 40;

/// The anchor sizes: from `smallest` up by [`SIZE_RATIO`] to all `training` rows (a geometric
/// size within 10% of the top is dropped for the top). With fewer than [`MIN_ANCHORS`] that way,
/// [`MIN_ANCHORS`] sizes spread evenly on the log scale; `None` when the training part is less
/// than twice the smallest size.
pub fn anchor_sizes(smallest: usize, training: usize) -> Option<Vec<usize>> {
    if training < 2 * smallest {
        return None;
    }
    let mut sizes = Vec::new();
    let mut size = smallest as f64;
    while size < 0.9 * training as f64 {
        sizes.push(size.round() as usize);
        size *= SIZE_RATIO;
    }
    sizes.push(training);
    if sizes.len() < MIN_ANCHORS {
        let ratio = (training as f64 / smallest as f64).powf(1.0 / (MIN_ANCHORS - 1) as f64);
        sizes = (0..MIN_ANCHORS)
            .map(|k| (smallest as f64 * ratio.powi(k as i32)).round() as usize)
            .collect();
        *sizes.last_mut()? = training;
    }
    sizes.dedup();
    Some(sizes)
}

/// The quantities measured at every anchor, in report order: accuracy, then per group the
/// selection rate, true positive rate and false positive rate.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Quantity {
    Accuracy,
    Selection(usize),
    TruePositive(usize),
    FalsePositive(usize),
}

impl Quantity {
    fn all(groups: usize) -> Vec<Quantity> {
        let mut q = vec![Quantity::Accuracy];
        for g in 0..groups {
            q.extend([
                Quantity::Selection(g),
                Quantity::TruePositive(g),
                Quantity::FalsePositive(g),
            ]);
        }
        q
    }

    fn read(self, o: &TrialOutcome) -> Option<f64> {
        match self {
            Quantity::Accuracy => Some(o.accuracy),
            Quantity::Selection(g) => o.counts[g].selection_rate(),
            Quantity::TruePositive(g) => o.counts[g].true_positive_rate(),
            Quantity::FalsePositive(g) => o.counts[g].false_positive_rate(),
        }
    }

    fn name(self) -> &'static str {
        match self {
            Quantity::Accuracy => "accuracy",
            Quantity::Selection(_) => "selection rate",
            Quantity::TruePositive(_) => "true positive rate",
            Quantity::FalsePositive(_) => "false positive rate",
        }
    }

    /// Position in [`Quantity::all`].
    fn index(self) -> usize {
        match self {
            Quantity::Accuracy => 0,
            Quantity::Selection(g) => 1 + 3 * g,
            Quantity::TruePositive(g) => 2 + 3 * g,
            Quantity::FalsePositive(g) => 3 + 3 * g,
        }
    }

    fn group(self) -> Option<usize> {
        match self {
            Quantity::Accuracy => None,
            Quantity::Selection(g) | Quantity::TruePositive(g) | Quantity::FalsePositive(g) => {
                Some(g)
            }
        }
    }
}

/// A measure of group u against reference r from their (selection, TPR, FPR) rates.
fn derive(measure: FairnessMeasure, u: [f64; 3], r: [f64; 3]) -> Option<f64> {
    let rates = |[selection, true_positive, false_positive]: [f64; 3]| fairness::Rates {
        selection,
        true_positive,
        false_positive,
    };
    measure.value(&rates(u), &rates(r))
}

/// The curve-fitting part of the work, on trial outcomes already run: used by `curves` and, in
/// later stages, by the appraisal of options.
pub struct FittedCurves {
    /// The anchor sizes measured.
    pub sizes: Vec<usize>,
    /// Every quantity's curve, as reported.
    pub curves: Vec<CurveRecord>,
    /// Every compared group's disparity curves, as reported.
    pub disparities: Vec<DisparityCurve>,
    /// Largest anchors held back to score each family's forecast.
    pub held_back: usize,
    /// Quantities that could not be fitted.
    pub warnings: Vec<String>,
    fits: Vec<QuantityFit>,
}

/// Accuracy and each group's rates at one training size (NaN where a quantity has no value).
#[derive(Debug, Clone, PartialEq)]
pub struct Quantities {
    /// Accuracy.
    pub accuracy: f64,
    /// Each group's selection, true positive and false positive rates, in the dataset's order.
    pub groups: Vec<Rates>,
}

impl Quantities {
    /// Builds the quantities of `groups` groups from a value per quantity.
    fn from_fn(groups: usize, value: impl Fn(Quantity) -> f64) -> Quantities {
        Quantities {
            accuracy: value(Quantity::Accuracy),
            groups: (0..groups)
                .map(|g| Rates {
                    selection: value(Quantity::Selection(g)),
                    true_positive: value(Quantity::TruePositive(g)),
                    false_positive: value(Quantity::FalsePositive(g)),
                })
                .collect(),
        }
    }

    /// The means over `repeats` of what trials measured (each quantity over the repeats where
    /// it is defined; NaN where none defines it).
    pub fn mean_of(outcomes: &[&TrialOutcome], groups: usize) -> Quantities {
        Quantities::from_fn(groups, |q| {
            let values: Vec<f64> = outcomes.iter().filter_map(|o| q.read(o)).collect();
            if values.is_empty() {
                f64::NAN
            } else {
                values.iter().sum::<f64>() / values.len() as f64
            }
        })
    }

    /// The two combined value by value.
    pub fn zip(&self, other: &Quantities, f: impl Fn(f64, f64) -> f64) -> Quantities {
        Quantities {
            accuracy: f(self.accuracy, other.accuracy),
            groups: self
                .groups
                .iter()
                .zip(&other.groups)
                .map(|(a, b)| Rates {
                    selection: f(a.selection, b.selection),
                    true_positive: f(a.true_positive, b.true_positive),
                    false_positive: f(a.false_positive, b.false_positive),
                })
                .collect(),
        }
    }
}

/// Every quantity read off fitted curves at one size: the fit's value and the value under
/// every bootstrap draw (NaN where a quantity has no curve or a draw could not be fitted).
#[derive(Debug, Clone, PartialEq)]
pub struct Reading {
    /// The fitted curves' values.
    pub point: Quantities,
    /// One per bootstrap draw.
    pub draws: Vec<Quantities>,
}

impl Reading {
    /// The two combined quantity by quantity and draw by draw.
    pub fn zip(&self, other: &Reading, f: impl Fn(f64, f64) -> f64 + Copy) -> Reading {
        Reading {
            point: self.point.zip(&other.point, f),
            draws: self
                .draws
                .iter()
                .zip(&other.draws)
                .map(|(a, b)| a.zip(b, f))
                .collect(),
        }
    }

    /// Reads fits laid out as [`Quantity::all`] at size n, each value passed through `finish`.
    fn of_fits(fits: &[QuantityFit], n: f64, finish: impl Fn(f64) -> f64 + Copy) -> Reading {
        let groups = (fits.len() - 1) / 3;
        Reading {
            point: Quantities::from_fn(groups, |q| finish(fits[q.index()].value(n))),
            draws: (0..BOOTSTRAP_DRAWS)
                .map(|b| Quantities::from_fn(groups, |q| finish(fits[q.index()].draw_value(b, n))))
                .collect(),
        }
    }
}

impl FittedCurves {
    /// Reads every quantity at size `n`, clipped to [0, 1].
    pub fn read(&self, n: f64) -> Reading {
        Reading::of_fits(&self.fits, n, |v| v.clamp(0.0, 1.0))
    }

    /// The largest measured size.
    pub fn largest(&self) -> usize {
        *self.sizes.last().unwrap_or(&0)
    }
}

/// Runs `acquest curves`.
pub fn run(
    settings: &Settings,
    curve_settings: &CurveSettings,
    progress: ProgressSink,
) -> Result<CurvesReport> {
    let (table, data) = Dataset::load(settings)?;
    let all_rows: Vec<usize> = (0..data.rows()).collect();
    let plan = CurvePlan {
        rows: &all_rows,
        arms: vec![&data.features],
        stream: Stream::BaselineSplits,
        stage: "learning curves",
        smallest: curve_settings.smallest,
    };
    let requested = |training: usize| -> Vec<f64> {
        curve_settings
            .at
            .iter()
            .map(|r| match *r {
                SizeRequest::Times(t) => t * training as f64,
                SizeRequest::Rows(n) => n as f64,
            })
            .collect()
    };
    let measured = measure_curves(&data, settings, &plan, &requested, progress)?.swap_remove(0);
    let mut warnings = measured.warnings;
    warnings.extend(data.warnings.iter().cloned());
    let attributes = attribute_curves(
        &data,
        &measured.outcomes,
        &measured.fitted.sizes,
        &requested(measured.schedule.training_rows),
        &settings.trials,
    );
    let fitted = measured.fitted;
    warnings.extend(fitted.warnings.iter().cloned());
    let top = fitted.largest() as f64;
    for &n in &requested(measured.schedule.training_rows) {
        if n > RELIABLE_MULTIPLE * top {
            warnings.push(format!(
                "{} training rows is more than {RELIABLE_MULTIPLE}x the largest fitted size \
                 ({}): the curves are extrapolated too far there to be relied on",
                thousands(n.round() as usize),
                thousands(top.round() as usize)
            ));
        }
    }
    Ok(CurvesReport {
        format: FORMAT.into(),
        format_version: FORMAT_VERSION,
        tool_version: env!("CARGO_PKG_VERSION").into(),
        command: "curves".into(),
        inputs: baseline::inputs(settings, &table, &data),
        schedule: measured.schedule,
        groups: baseline::group_summaries(&data),
        reference: baseline::reference_group(&data),
        curves: fitted.curves,
        disparities: fitted.disparities,
        attributes,
        warnings,
        cautions: CAUTIONS.iter().map(|c| c.to_string()).collect(),
    })
}

/// The curves of every further protected attribute and intersection of `data`: the same
/// trials' `outcomes` (`[repeat][size]`) with each attribute's counts in place of the first's,
/// fitted as the first's are (accuracy is the first's own and not repeated).
fn attribute_curves(
    data: &Dataset,
    outcomes: &[Vec<TrialOutcome>],
    sizes: &[usize],
    requested: &[f64],
    trials: &crate::settings::TrialSettings,
) -> Vec<AttributeCurves> {
    (0..data.more_attributes.len())
        .map(|k| {
            let view = data.attribute_view(k);
            let by_attribute: Vec<Vec<TrialOutcome>> = outcomes
                .iter()
                .map(|repeat| repeat.iter().map(|o| o.for_attribute(k)).collect())
                .collect();
            let fitted = fit_curves(
                &view,
                &by_attribute,
                sizes,
                requested,
                trials.confidence,
                trials.seed,
                &baseline::label_counts(&view),
            );
            AttributeCurves {
                attribute: data.more_attributes[k].name.clone(),
                groups: baseline::group_summaries(&view),
                reference: baseline::reference_group(&view),
                curves: fitted
                    .curves
                    .into_iter()
                    .filter(|c| c.group.is_some())
                    .collect(),
                disparities: fitted.disparities,
            }
        })
        .collect()
}

/// Which rows and columns a set of learning curves is measured on.
pub struct CurvePlan<'a> {
    /// Rows taking part: all rows, or a pilot.
    pub rows: &'a [usize],
    /// The feature sets measured, on the same splits and orders (paired).
    pub arms: Vec<&'a [crate::data::Column]>,
    /// The random stream of the splits and nested orders.
    pub stream: Stream,
    /// Name of the stage in progress events.
    pub stage: &'static str,
    /// The smallest anchor, when `--smallest` sets it.
    pub smallest: Option<usize>,
}

/// Learning curves measured and fitted, with their schedule.
pub struct MeasuredCurves {
    /// The fitted curves.
    pub fitted: FittedCurves,
    /// The schedule they were measured on.
    pub schedule: CurveSchedule,
    /// What the reader should know about the schedule.
    pub warnings: Vec<String>,
    /// The trials behind the curves, `[repeat][size]`.
    pub outcomes: Vec<Vec<TrialOutcome>>,
}

/// Runs the nested trials of a plan and fits the curves of every arm; `requested` gives the
/// sizes to read them at from the number of training rows.
pub fn measure_curves(
    data: &Dataset,
    settings: &Settings,
    plan: &CurvePlan,
    requested: &dyn Fn(usize) -> Vec<f64>,
    progress: ProgressSink,
) -> Result<Vec<MeasuredCurves>> {
    let trials = &settings.trials;
    // The split of repeat 0 gives the sizes of every repeat (cells are cut the same way).
    let split = trial::draw_split(
        data,
        plan.rows,
        trials,
        &mut stream_rng(trials.seed, plan.stream, 0),
    );
    let (training_rows, test_rows) = (split.drawn_train.len(), split.drawn_test);
    let capped = split.capped();
    let train = split.train;
    let (smallest, smallest_rule, mut warnings) = smallest_size(data, &train, plan.smallest)?;
    if capped {
        warnings.push(format!(
            "{} training rows are more than the cap of {} a trial trains on (--max-train-rows): \
             the curves are measured up to {} rows and read beyond that by extrapolation",
            thousands(training_rows),
            thousands(trials.max_train_rows),
            thousands(train.len())
        ));
    }
    let sizes = anchor_sizes(smallest, train.len()).ok_or_else(|| {
        Error::NotEnoughData(format!(
            "too few rows for a learning curve: the training part holds {} rows and the smallest \
             learnable size is {smallest} ({smallest_rule}); a curve needs at least twice that",
            train.len()
        ))
    })?;
    let design = TrialDesign {
        stage: plan.stage,
        rows: Rows::Drawn {
            rows: plan.rows,
            stream: plan.stream,
            sizes: Sizes::Nested {
                sizes: &sizes,
                vary: None,
            },
        },
        arms: plan.arms.iter().map(|columns| Arm::of(columns)).collect(),
    };
    let outcomes = by_arm(
        trial::run(data, trials, &design, progress)?,
        plan.arms.len(),
    );
    if trials.repeats < 3 {
        warnings.push(format!(
            "bands come from a bootstrap over {} repeats; use --repeats 5 or more for bands that mean something",
            trials.repeats
        ));
    }
    let label_counts = baseline::label_counts(data);
    let top = *sizes.last().unwrap_or(&1) as f64;
    Ok(outcomes
        .into_iter()
        .map(|outcomes| {
            let fitted = fit_curves(
                data,
                &outcomes,
                &sizes,
                &requested(training_rows),
                trials.confidence,
                trials.seed,
                &label_counts,
            );
            MeasuredCurves {
                schedule: CurveSchedule {
                    training_rows,
                    test_rows,
                    sizes: sizes.clone(),
                    smallest_rule: smallest_rule.clone(),
                    repeats: trials.repeats,
                    held_back: fitted.held_back,
                    bootstrap_draws: BOOTSTRAP_DRAWS,
                    reliable_up_to: RELIABLE_MULTIPLE * top,
                    capped,
                },
                fitted,
                warnings: warnings.clone(),
                outcomes,
            }
        })
        .collect())
}

/// The outcomes of a run of nested trials regrouped as `[arm][repeat][size]`.
pub fn by_arm(outcomes: Vec<Vec<ArmOutcome>>, arms: usize) -> Vec<Vec<Vec<TrialOutcome>>> {
    let mut grouped: Vec<Vec<Vec<TrialOutcome>>> = (0..arms).map(|_| Vec::new()).collect();
    for repeat in outcomes {
        for (arm, outcome) in repeat.into_iter().enumerate() {
            grouped[arm].push(outcome.sizes);
        }
    }
    grouped
}

/// The smallest anchor for the training rows `train`: [`MIN_ANCHOR_ROWS`], or more so that every (group, label) cell holds
/// [`MIN_CELL_ROWS`] rows in a proportional sample, unless `--smallest` says otherwise.
pub fn smallest_size(
    data: &Dataset,
    train: &[usize],
    asked: Option<usize>,
) -> Result<(usize, String, Vec<String>)> {
    let group_count = data.group_list.len();
    let mut cells = vec![0usize; group_count * 2];
    for &i in train {
        cells[data.groups[i] as usize * 2 + usize::from(data.labels[i])] += 1;
    }
    let mut warnings = Vec::new();
    for (c, &count) in cells.iter().enumerate() {
        if count < MIN_CELL_ROWS {
            let label = if c % 2 == 1 {
                &data.favourable
            } else {
                &data.unfavourable
            };
            return Err(Error::NotEnoughData(format!(
                "group '{}' has {count} training rows with the label '{label}'; a learning curve \
                 needs at least {MIN_CELL_ROWS} in every group and label (merge groups with --groups)",
                data.group_list[c / 2].name
            )));
        }
    }
    let rarest = *cells.iter().min().unwrap_or(&1);
    let by_rule = MIN_ANCHOR_ROWS
        .max((MIN_CELL_ROWS as f64 * train.len() as f64 / rarest as f64).ceil() as usize);
    let rule = format!(
        "the smallest size at which every group and label has {MIN_CELL_ROWS} rows in a \
         proportional sample, and at least {MIN_ANCHOR_ROWS}: {by_rule}"
    );
    // A rare group and label would push the smallest size so high that too little of the
    // curve is left: then start at an eighth of the training rows and say what that costs.
    let span_limit = MIN_ANCHOR_ROWS.max(train.len() / 8);
    let (by_rule, rule) = if by_rule > span_limit && asked.is_none() {
        let thin: Vec<String> = cells
            .iter()
            .enumerate()
            .filter(|&(_, &count)| (count * span_limit) / train.len() < MIN_CELL_ROWS)
            .map(|(c, &count)| {
                let label = if c % 2 == 1 {
                    &data.favourable
                } else {
                    &data.unfavourable
                };
                format!(
                    "'{}' with label '{label}' (about {} rows at the smallest size)",
                    data.group_list[c / 2].name,
                    count * span_limit / train.len()
                )
            })
            .collect();
        warnings.push(format!(
            "some groups are too small for {MIN_CELL_ROWS} rows of each label at every size: {}; \
             their rates at the smaller sizes are noisy and their curves less certain",
            thin.join(", ")
        ));
        (
            span_limit,
            format!(
                "an eighth of the training rows ({span_limit}), since {MIN_CELL_ROWS} rows of \
                 every group and label would need {by_rule}"
            ),
        )
    } else {
        (by_rule, rule)
    };
    match asked {
        Some(n) if n >= train.len() => Err(Error::setting(
            "--smallest",
            format!("{n} is not below the {} training rows", train.len()),
        )),
        Some(n) => {
            if n < by_rule {
                warnings.push(format!(
                    "--smallest {n} is below the rule's {by_rule}: the rarest group and label has \
                     fewer than {MIN_CELL_ROWS} rows at the smallest anchors"
                ));
            }
            Ok((
                n,
                format!("set with --smallest (the rule gives {by_rule})"),
                warnings,
            ))
        }
        None => Ok((by_rule, rule, warnings)),
    }
}

/// One quantity's per-repeat values, fitted choice, and bootstrap refits.
struct QuantityFit {
    per_repeat: Vec<Vec<Option<f64>>>,
    choice: Option<Choice>,
    /// Bootstrap refits (one per draw; `None` where a draw could not fit).
    replicates: Vec<Option<Replicate>>,
}

/// One bootstrap refit. A draw that chooses no trend still carries the doubt about the trend:
/// the trend a log curve finds in the draw, less the one it finds in all repeats, is added, so
/// such draws centre on no change with the spread of a slope the data cannot tell from zero.
struct Replicate {
    fit: Fit,
    /// For a flat draw: the log fit on this draw and on all repeats.
    trend: Option<(Fit, Fit)>,
}

impl Replicate {
    fn predict(&self, n: f64) -> f64 {
        let doubt = self
            .trend
            .as_ref()
            .map_or(0.0, |(draw, all)| draw.predict(n) - all.predict(n));
        self.fit.predict(n) + doubt
    }
}

impl QuantityFit {
    /// The chosen fit's value at n (NaN without a curve).
    fn value(&self, n: f64) -> f64 {
        self.choice
            .as_ref()
            .map_or(f64::NAN, |c| c.fit().predict(n))
    }

    /// Draw b's value at n (NaN where the draw could not be fitted).
    fn draw_value(&self, b: usize, n: f64) -> f64 {
        self.replicates
            .get(b)
            .and_then(|r| r.as_ref())
            .map_or(f64::NAN, |r| r.predict(n))
    }
}

/// Bootstrap draws of repeat indices, seeded from the master seed.
fn bootstrap_draws(seed: u64, repeats: usize) -> Vec<Vec<usize>> {
    let mut rng = stream_rng(seed, Stream::CurveBootstrap, 0);
    (0..BOOTSTRAP_DRAWS)
        .map(|_| (0..repeats).map(|_| rng.gen_range(0..repeats)).collect())
        .collect()
}

/// Chooses a family for one quantity's per-repeat values by forecast, and refits it on every
/// bootstrap draw.
fn fit_quantity(
    per_repeat: Vec<Vec<Option<f64>>>,
    sizes: &[f64],
    held_back: usize,
    draws: &[Vec<usize>],
) -> QuantityFit {
    let all: Vec<usize> = (0..per_repeat.len()).collect();
    let (kept, means) = curve::means_over(&per_repeat, &all, sizes.len());
    let kept_sizes: Vec<f64> = kept.iter().map(|&i| sizes[i]).collect();
    // Standard error of the held-back anchors' means over repeats: the noise within which a
    // simpler family is preferred.
    let noise = {
        let errors: Vec<f64> = kept
            .iter()
            .rev()
            .take(held_back)
            .filter_map(|&i| {
                let v: Vec<f64> = per_repeat.iter().filter_map(|r| r[i]).collect();
                (v.len() > 1).then(|| {
                    let m = v.iter().sum::<f64>() / v.len() as f64;
                    let var = v.iter().map(|x| (x - m).powi(2)).sum::<f64>() / (v.len() - 1) as f64;
                    (var / v.len() as f64).sqrt()
                })
            })
            .collect();
        if errors.is_empty() {
            0.0
        } else {
            errors.iter().sum::<f64>() / errors.len() as f64
        }
    };
    let choice = curve::choose_with_noise(&kept_sizes, &means, held_back, noise);
    let trend_all = curve::fit(
        curve::Family::Logarithmic,
        &kept_sizes,
        &means,
        &curve::size_weights(&kept_sizes),
    );
    let replicates = match &choice {
        None => Vec::new(),
        Some(choice) => draws
            .iter()
            .map(|draw| {
                // Each draw chooses its family afresh, so the band carries the uncertainty of
                // the choice as well as of the fit (a flat choice alone would claim no change
                // with no doubt).
                let (kept, means) = curve::means_over(&per_repeat, draw, sizes.len());
                let s: Vec<f64> = kept.iter().map(|&i| sizes[i]).collect();
                let family = curve::choose_with_noise(&s, &means, held_back, noise)
                    .map_or(choice.fit().family, |c| c.fit().family);
                let weights = curve::size_weights(&s);
                let f = curve::fit(family, &s, &means, &weights);
                let trend = (family == curve::Family::Flat)
                    .then(|| curve::fit(curve::Family::Logarithmic, &s, &means, &weights))
                    .filter(|t| {
                        t.status != curve::FitStatus::Failed
                            && trend_all.status != curve::FitStatus::Failed
                    })
                    .map(|t| (t, trend_all.clone()));
                (f.status != curve::FitStatus::Failed).then_some(Replicate { fit: f, trend })
            })
            .collect(),
    };
    QuantityFit {
        per_repeat,
        choice,
        replicates,
    }
}

/// Paired differences (with − without, repeat by repeat and size by size) of every quantity,
/// from two sets of trials on the same splits and orders, and their extension beyond the largest
/// size measured. Pairing keeps the split-to-split noise the two share out of the difference.
pub struct DifferenceCurves {
    /// Per quantity (laid out as [`Quantity::all`]): the last anchor and the trend, on all
    /// repeats and on each bootstrap draw.
    trends: Vec<Trends>,
    groups: usize,
    largest: f64,
    /// The factor by which the scorer widens bootstrap spreads (the overlap of repeated
    /// splits); the increment's noise is weighed at that width.
    spread: f64,
}

/// One quantity's last anchor and log-size trend of its upper anchors (NaN where undefined),
/// on all repeats and per bootstrap draw: what [`extend_difference`] carries on. They do not
/// depend on the size read at, so they are measured once.
struct Trends {
    all: AnchorAndSlope,
    draws: Vec<AnchorAndSlope>,
}

#[derive(Clone, Copy)]
struct AnchorAndSlope {
    anchor: f64,
    /// Per unit of ln n; `None` where the upper anchors give no slope.
    slope: Option<f64>,
}

impl DifferenceCurves {
    /// The differences of `with` over `without` (both `[repeat][size]`, same sizes), with
    /// bootstrap draws over repeats from the master seed.
    pub fn fit(
        with: &[Vec<TrialOutcome>],
        without: &[Vec<TrialOutcome>],
        sizes: &[usize],
        group_count: usize,
        seed: u64,
        spread: f64,
    ) -> DifferenceCurves {
        let sizes_f: Vec<f64> = sizes.iter().map(|&n| n as f64).collect();
        let draws = bootstrap_draws(seed, with.len());
        let all: Vec<usize> = (0..with.len()).collect();
        let trends = Quantity::all(group_count)
            .into_iter()
            .map(|q| {
                let per_repeat: Vec<Vec<Option<f64>>> = with
                    .iter()
                    .zip(without)
                    .map(|(a, b)| {
                        a.iter()
                            .zip(b)
                            .map(|(x, y)| Some(q.read(x)? - q.read(y)?))
                            .collect()
                    })
                    .collect();
                let measure = |draw: &[usize]| anchor_and_slope(&per_repeat, &sizes_f, draw);
                Trends {
                    all: measure(&all),
                    draws: draws.iter().map(|d| measure(d)).collect(),
                }
            })
            .collect();
        DifferenceCurves {
            trends,
            groups: group_count,
            largest: sizes_f.last().copied().unwrap_or(f64::NAN),
            spread,
        }
    }

    /// Every quantity's difference carried to size n (see [`extend_difference`]; not clipped).
    pub fn read(&self, n: f64) -> Reading {
        let extended: Vec<(f64, Vec<f64>)> = self
            .trends
            .iter()
            .map(|t| extend_difference(t, (n / self.largest).ln(), self.spread))
            .collect();
        Reading {
            point: Quantities::from_fn(self.groups, |q| extended[q.index()].0),
            draws: (0..self.trends.first().map_or(0, |t| t.draws.len()))
                .map(|b| Quantities::from_fn(self.groups, |q| extended[q.index()].1[b]))
                .collect(),
        }
    }
}

/// The mean difference at the largest size (the last anchor; NaN where the repeats of `draw`
/// lack it) and the least-squares slope in ln n of the upper anchors' means.
fn anchor_and_slope(
    per_repeat: &[Vec<Option<f64>>],
    sizes: &[f64],
    draw: &[usize],
) -> AnchorAndSlope {
    let upper = trend::upper_anchors(sizes);
    let (kept, means) = curve::means_over(per_repeat, draw, sizes.len());
    let anchor = match kept.last() {
        Some(&i) if i + 1 == sizes.len() => means[means.len() - 1],
        _ => f64::NAN,
    };
    let (x, y): (Vec<f64>, Vec<f64>) = kept
        .iter()
        .zip(&means)
        .filter(|(&i, _)| upper.contains(&i))
        .map(|(&i, &m)| (sizes[i], m))
        .unzip();
    AnchorAndSlope {
        anchor,
        slope: trend::log_slope(&x, &y),
    }
}

/// One quantity's paired difference carried `distance` (ln of the size read at over the largest
/// measured) beyond the largest measured size: the last anchor plus the upper anchors' trend
/// times the distance, that increment shrunk towards none by its noise ([`trend::keep_share`],
/// its variance widened by `spread` as the scorer will widen it). Each bootstrap draw has its own
/// anchor and trend. A draw's deviation of the increment is scaled by √w, w the share kept: with
/// w = δ²/(δ² + v) the mean squared error of the shrunk increment w·b̂ is (1 − w)²δ² + w²v = w·v
/// (δ the true increment, δ² estimated as b̂² − v), so √w is the scale at which the draws carry
/// the shrunk increment's error (all of it when the trend is sure, none when the trend is within
/// its noise and the estimate is the last anchor's). Returns the point and one value per draw
/// (NaN where a draw lacks the last anchor).
fn extend_difference(trends: &Trends, distance: f64, spread: f64) -> (f64, Vec<f64>) {
    let increment_of = |t: &AnchorAndSlope| {
        if distance == 0.0 {
            0.0
        } else {
            t.slope.map_or(f64::NAN, |slope| slope * distance)
        }
    };
    let anchor = trends.all.anchor;
    let increment = increment_of(&trends.all);
    let parts: Vec<(f64, f64)> = trends
        .draws
        .iter()
        .map(|t| (t.anchor, increment_of(t)))
        .collect();
    let finite: Vec<f64> = parts
        .iter()
        .map(|p| p.1)
        .filter(|v| v.is_finite())
        .collect();
    let variance = if finite.len() > 1 {
        let m = finite.iter().sum::<f64>() / finite.len() as f64;
        finite.iter().map(|v| (v - m).powi(2)).sum::<f64>() / (finite.len() - 1) as f64
    } else {
        f64::NAN
    };
    let (increment, kept) = if increment.is_finite() {
        (
            increment,
            trend::keep_share(increment, spread * spread * variance),
        )
    } else {
        (0.0, 0.0)
    };
    let point = anchor + kept * increment;
    let scale = kept.sqrt();
    let values = parts
        .iter()
        .map(|&(a, i)| {
            let i = if i.is_finite() { i } else { increment };
            a + kept * increment + (i - increment) * scale
        })
        .collect();
    (point, values)
}

/// Fits every quantity, derives the disparities, and reads all curves at the grid and at the
/// requested sizes.
pub fn fit_curves(
    data: &Dataset,
    outcomes: &[Vec<TrialOutcome>],
    sizes: &[usize],
    requested: &[f64],
    confidence: f64,
    seed: u64,
    label_counts: &[GroupCounts],
) -> FittedCurves {
    let group_count = data.group_list.len();
    let repeats = outcomes.len();
    let sizes_f: Vec<f64> = sizes.iter().map(|&n| n as f64).collect();
    let held_back = if sizes.len() >= 9 { 3 } else { 2 };
    let mut warnings = Vec::new();

    // The same bootstrap draws serve every quantity, so derived measures keep the rates'
    // correlation.
    let draws = bootstrap_draws(seed, repeats);

    let quantities = Quantity::all(group_count);
    let fits: Vec<QuantityFit> = quantities
        .iter()
        .map(|&q| {
            let per_repeat: Vec<Vec<Option<f64>>> = outcomes
                .iter()
                .map(|row| row.iter().map(|o| q.read(o)).collect())
                .collect();
            fit_quantity(per_repeat, &sizes_f, held_back, &draws)
        })
        .collect();

    let top = *sizes_f.last().unwrap_or(&1.0);
    let reach = requested.iter().copied().fold(top, f64::max);
    let grid: Vec<f64> = (0..GRID_POINTS)
        .map(|k| sizes_f[0] * (reach / sizes_f[0]).powf(k as f64 / (GRID_POINTS - 1) as f64))
        .collect();
    let reader = PointReader {
        top,
        tail: (1.0 - confidence) / 2.0,
        grid,
        requested: requested.to_vec(),
    };
    let curves = quantities
        .iter()
        .zip(&fits)
        .map(|(&q, f)| curve_record(data, q, f, &reader, sizes, &mut warnings))
        .collect();
    let disparities = disparity_curves(data, &fits, &reader, outcomes, sizes, label_counts);
    FittedCurves {
        sizes: sizes.to_vec(),
        curves,
        disparities,
        held_back,
        warnings,
        fits,
    }
}

/// How curves are read for the report: at the chart grid and the requested sizes, each value
/// with its bootstrap band, flagged beyond the largest anchor (`top`) and beyond 4x it.
struct PointReader {
    top: f64,
    /// The share of draws left out at each end of a band.
    tail: f64,
    grid: Vec<f64>,
    requested: Vec<f64>,
}

impl PointReader {
    fn point(&self, size: f64, value: f64, band: Option<(f64, f64)>) -> CurvePoint {
        CurvePoint {
            size,
            value,
            low: band.map(|b| b.0),
            high: band.map(|b| b.1),
            extrapolated: size > self.top * 1.000_001,
            unreliable: size > RELIABLE_MULTIPLE * self.top,
        }
    }

    fn band(&self, mut values: Vec<f64>) -> Option<(f64, f64)> {
        if values.len() < 2 {
            return None;
        }
        Some((
            curve::quantile(&mut values, self.tail)?,
            curve::quantile(&mut values, 1.0 - self.tail)?,
        ))
    }
}

/// A quantity's values are rates or accuracy: clipped to [0, 1].
fn clip(q: Quantity, v: f64) -> f64 {
    if q == Quantity::Accuracy || q.group().is_some() {
        v.clamp(0.0, 1.0)
    } else {
        v
    }
}

/// One quantity's fitted curve as the report shows it (a warning where none could be fitted).
fn curve_record(
    data: &Dataset,
    q: Quantity,
    f: &QuantityFit,
    reader: &PointReader,
    sizes: &[usize],
    warnings: &mut Vec<String>,
) -> CurveRecord {
    let (top, point) = (reader.top, |n, v, b| reader.point(n, v, b));
    let band_of = |values| reader.band(values);
    let (grid, requested) = (&reader.grid, &reader.requested);
    let read_at = |at: &[f64]| -> Vec<CurvePoint> {
        let Some(choice) = &f.choice else {
            return Vec::new();
        };
        at.iter()
            .map(|&n| {
                let reps: Vec<f64> = f
                    .replicates
                    .iter()
                    .flatten()
                    .map(|r| clip(q, r.predict(n)))
                    .collect();
                point(n, clip(q, choice.fit().predict(n)), band_of(reps))
            })
            .collect()
    };
    if f.choice.is_none() {
        warnings.push(format!(
            "no curve could be fitted to the {}{}: too few sizes where it is defined",
            q.name(),
            q.group()
                .map(|g| format!(" of group '{}'", data.group_list[g].name))
                .unwrap_or_default()
        ));
    }
    CurveRecord {
        quantity: q.name().into(),
        group: q.group().map(|g| data.group_list[g].name.clone()),
        anchors: anchors(&f.per_repeat, sizes),
        families: f
            .choice
            .as_ref()
            .map(|c| {
                c.candidates
                    .iter()
                    .map(|(fit, error)| FamilyFit {
                        family: fit.family,
                        formula: fit.family.formula().into(),
                        parameters: fit
                            .parameters()
                            .map(|p| if p.is_finite() { p } else { 0.0 }),
                        rss: fit.rss.is_finite().then_some(fit.rss),
                        forecast_error: *error,
                        status: fit.status,
                    })
                    .collect()
            })
            .unwrap_or_default(),
        chosen: f.choice.as_ref().map(|c| c.fit().family),
        asymptote: f
            .choice
            .as_ref()
            .and_then(|c| c.fit().level_reached_from(top))
            .map(|a| clip(q, a)),
        grid: read_at(grid),
        at: read_at(requested),
    }
}

/// The disparity measures of each compared group against the reference, derived from the
/// fitted group rates (and measured at every anchor).
fn disparity_curves(
    data: &Dataset,
    fits: &[QuantityFit],
    reader: &PointReader,
    outcomes: &[Vec<TrialOutcome>],
    sizes: &[usize],
    label_counts: &[GroupCounts],
) -> Vec<DisparityCurve> {
    let group_count = data.group_list.len();
    let (top, point) = (reader.top, |n, v, b| reader.point(n, v, b));
    let band_of = |values| reader.band(values);
    let (grid, requested) = (&reader.grid, &reader.requested);
    // A group's three rates, as (selection, true positive, false positive) positions of `fits`.
    let rate_index = |g: usize, k: usize| {
        [
            Quantity::Selection(g),
            Quantity::TruePositive(g),
            Quantity::FalsePositive(g),
        ][k]
            .index()
    };
    let reference = data.reference;
    let mut disparities = Vec::new();
    for g in (0..group_count).filter(|&g| g != reference) {
        let usable = (0..3).all(|k| {
            fits[rate_index(g, k)].choice.is_some()
                && fits[rate_index(reference, k)].choice.is_some()
        });
        for m in FairnessMeasure::ALL {
            let at_point = |n: f64| -> Option<f64> {
                if !usable {
                    return None;
                }
                let rates = |h: usize| -> [f64; 3] {
                    std::array::from_fn(|k| {
                        fits[rate_index(h, k)]
                            .choice
                            .as_ref()
                            .map_or(f64::NAN, |c| c.fit().predict(n).clamp(0.0, 1.0))
                    })
                };
                derive(m, rates(g), rates(reference)).filter(|v| v.is_finite())
            };
            let replicate = |b: usize, n: f64| -> Option<f64> {
                let rates = |h: usize| -> Option<[f64; 3]> {
                    let mut out = [0.0; 3];
                    for (k, slot) in out.iter_mut().enumerate() {
                        *slot = fits[rate_index(h, k)]
                            .replicates
                            .get(b)?
                            .as_ref()?
                            .predict(n)
                            .clamp(0.0, 1.0);
                    }
                    Some(out)
                };
                derive(m, rates(g)?, rates(reference)?).filter(|v| v.is_finite())
            };
            let read_at = |at: &[f64]| -> Vec<CurvePoint> {
                at.iter()
                    .filter_map(|&n| {
                        let value = at_point(n)?;
                        let reps: Vec<f64> = (0..BOOTSTRAP_DRAWS)
                            .filter_map(|b| replicate(b, n))
                            .collect();
                        Some(point(n, value, band_of(reps)))
                    })
                    .collect()
            };
            let asymptote = if usable {
                let level = |h: usize| -> Option<[f64; 3]> {
                    let mut out = [0.0; 3];
                    for (k, slot) in out.iter_mut().enumerate() {
                        *slot = fits[rate_index(h, k)]
                            .choice
                            .as_ref()?
                            .fit()
                            .level_reached_from(top)?
                            .clamp(0.0, 1.0);
                    }
                    Some(out)
                };
                level(g)
                    .zip(level(reference))
                    .and_then(|(u, r)| derive(m, u, r))
            } else {
                None
            };
            let measured: Vec<Vec<Option<f64>>> = outcomes
                .iter()
                .map(|row| {
                    row.iter()
                        .map(|o| m.value(&o.counts[g], &o.counts[reference]))
                        .collect()
                })
                .collect();
            disparities.push(DisparityCurve {
                measure: m.full_name().to_string(),
                group: data.group_list[g].name.clone(),
                in_labels: m.value(
                    &fairness::Labels(&label_counts[g]),
                    &fairness::Labels(&label_counts[reference]),
                ),
                anchors: anchors(&measured, sizes),
                asymptote,
                grid: read_at(grid),
                at: read_at(requested),
            });
        }
    }
    disparities
}

/// Mean, spread and range over repeats at each size; sizes where no repeat defines the value
/// are left out.
fn anchors(per_repeat: &[Vec<Option<f64>>], sizes: &[usize]) -> Vec<AnchorPoint> {
    (0..sizes.len())
        .filter_map(|i| {
            let values: Vec<f64> = per_repeat.iter().filter_map(|r| r[i]).collect();
            if values.is_empty() {
                return None;
            }
            let n = values.len() as f64;
            let mean = values.iter().sum::<f64>() / n;
            let std_dev = (values.len() > 1).then(|| {
                (values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt()
            });
            Some(AnchorPoint {
                size: sizes[i],
                mean,
                std_dev,
                min: values.iter().copied().fold(f64::INFINITY, f64::min),
                max: values.iter().copied().fold(f64::NEG_INFINITY, f64::max),
                repeats: values.len(),
            })
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sizes_grow_by_root_two_to_all_training_rows() {
        // The benchmark schedule of the curves issue: 500·√2^k up to 26,048 rows, 13 sizes.
        let sizes = anchor_sizes(500, 26_048).unwrap();
        assert_eq!(sizes.len(), 13);
        assert_eq!(sizes[..4], [500, 707, 1000, 1414]);
        assert_eq!(*sizes.last().unwrap(), 26_048);
        let few = anchor_sizes(100, 300).unwrap();
        assert_eq!(few.len(), MIN_ANCHORS);
        assert_eq!((few[0], few[5]), (100, 300));
        assert!(anchor_sizes(100, 150).is_none());
    }

    #[test]
    fn disparities_from_rates() {
        let u = [0.2, 0.5, 0.1];
        let r = [0.4, 0.7, 0.2];
        use FairnessMeasure as M;
        assert!((derive(M::Spd, u, r).unwrap() + 0.2).abs() < 1e-12);
        assert!((derive(M::Di, u, r).unwrap() - 0.5).abs() < 1e-12);
        assert!((derive(M::Eod, u, r).unwrap() + 0.2).abs() < 1e-12);
        assert!((derive(M::Aod, u, r).unwrap() + 0.15).abs() < 1e-12);
        assert_eq!(derive(M::Di, u, [0.0, 0.7, 0.2]), None);
    }
}
