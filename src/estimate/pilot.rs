//! Feature options: a candidate column measured on its pilot, without and with it on the same
//! splits (paired), its difference fitted as curves and anchored on today's curve, or carried
//! over from the pilot's own size when the pilot is too small for a curve.

use super::score::{anchored, difference_of, option_flags, OptionReadings, Scorer, Valuation};
use crate::data::costs::{self, CostOption};
use crate::data::{Column, Dataset};
use crate::engine::streams::{stream_rng, Stream};
use crate::engine::trial::{self, Arm, ProgressSink, Rows, Sizes, TrialDesign, TrialOutcome};
use crate::error::{Error, Result};
use crate::estimate::learning::{self, CurvePlan, Quantities, Reading};
use crate::report::*;
use crate::settings::Settings;
use crate::stats::fairness::{self};
use crate::stats::metrics::{self, estimate};

/// A pilot smaller than this many training rows is flagged as small.
pub const SMALL_PILOT_ROWS: usize = 300;

/// Trial outcomes as `[repeat][size]`.
pub(super) type Outcomes = Vec<Vec<TrialOutcome>>;

/// A feature option: its pilot measured without and with the candidate, the difference
/// anchored on today's curve at today's rows and at every step of the rows options for any
/// group, with the pilot's own summary and flags.
pub(super) fn feature_value(
    v: &Valuation,
    option: &CostOption,
    column: &str,
    index: usize,
    progress: ProgressSink,
    warnings: &mut Vec<String>,
) -> Result<(OptionValue, OptionReadings)> {
    let (data, settings, scorer) = (v.data, v.settings, &v.scorer);
    let (full, now, overall_steps) = (v.curves, &v.now, &v.overall_steps);
    let training_at = |new_rows: usize| v.training_at(new_rows);
    let trials = &settings.trials;
    let rows = data.rows();
    let pilot = costs::pilot_rows(data, column);
    let candidate = data
        .candidates
        .iter()
        .find(|c| c.name == column)
        .ok_or_else(|| Error::Internal(format!("candidate '{column}' vanished")))?;
    let mut with_columns: Vec<Column> = data.features.clone();
    with_columns.push(candidate.clone());
    let stream = Stream::PilotCurves(index);

    // Is the pilot like the rest? Compare its group × label mix with the other rows.
    let cells = data.group_list.len() * 2;
    let mut table = vec![vec![0u64; cells], vec![0u64; cells]];
    let mut in_pilot = vec![false; rows];
    for &i in &pilot {
        in_pilot[i] = true;
    }
    for i in 0..rows {
        table[usize::from(!in_pilot[i])]
            [data.groups[i] as usize * 2 + usize::from(data.labels[i])] += 1;
    }
    let mix = metrics::chi_square_independence(&table);

    let training_now = training_at(0);
    let measured = measure_pilot(
        data,
        settings,
        &pilot,
        &with_columns,
        (stream, "pilot curves"),
        training_now,
        progress,
    )?;
    let mut flags = Vec::new();
    // The with-minus-without difference at the pilot's full size (the last anchor), and at any
    // training size: its fitted curve, or that last difference carried over unchanged.
    let at_pilot_size = measured.difference_at_pilot_size(data, trials.seed);
    let difference_at = |at: f64| match &measured {
        PilotMeasurement::Curves { difference, .. } => difference.read(at),
        PilotMeasurement::AtPilotSize { .. } => at_pilot_size.clone(),
    };
    let last_anchor = anchored(now, &at_pilot_size);
    // How far the pilot was measured, and its with-feature curve read directly at today's rows.
    let (reach, direct_reading) = match &measured {
        PilotMeasurement::Curves { with, .. } => (
            with.fitted.largest() as f64,
            Some(with.fitted.read(training_now)),
        ),
        PilotMeasurement::AtPilotSize { reason, .. } => {
            warnings.push(format!(
                "option '{}': the pilot of {} rows is too small for a learning curve ({reason}); its gain is the difference measured at the pilot's size, not extrapolated",
                option.name,
                crate::report::thousands(pilot.len())
            ));
            flags.push("pilot too small for a curve: gain measured at pilot size".into());
            (f64::INFINITY, None)
        }
    };
    let direct = direct_reading.as_ref().map(|reading| {
        scorer.purchase(
            now,
            reading,
            0,
            option.feature_cost(rows),
            training_now,
            reach,
        )
    });
    let purchase = |new_rows: usize| {
        let at = training_at(new_rows);
        let after = anchored(&full.read(at), &difference_at(at));
        scorer.purchase(
            now,
            &after,
            new_rows,
            option.feature_cost(rows + new_rows),
            at,
            reach,
        )
    };
    let estimate = purchase(0);
    let (without_outcomes, with_outcomes) = measured.outcomes();
    let pilot_training = with_outcomes
        .first()
        .and_then(|r| r.last())
        .map_or(0.0, |t| t.train_rows as f64);
    let anchor_only = scorer.purchase(
        now,
        &last_anchor,
        0,
        option.feature_cost(rows),
        training_now,
        reach,
    );
    let growth = super::growth::pilot_growth(
        pilot.len(),
        (pilot_training, training_now),
        option.pilot.max_rows.map_or(rows, |most| most.min(rows)),
        &estimate,
        &anchor_only,
    );
    let mut pilot_summary = pilot_summary(
        data,
        scorer,
        &pilot,
        (without_outcomes, with_outcomes),
        mix,
        matches!(measured, PilotMeasurement::Curves { .. }),
        growth,
    );
    pilot_summary.curves = measured.curves(scorer.measure);
    let readings = OptionReadings {
        now: now.clone(),
        after: anchored(&full.read(training_now), &difference_at(training_now)),
        last_anchor,
        direct: direct_reading,
    };
    let steps: Vec<Purchase> = overall_steps.iter().map(|&d| purchase(d)).collect();
    if pilot_summary.training_rows < SMALL_PILOT_ROWS {
        flags.push(format!(
            "small pilot ({} training rows)",
            pilot_summary.training_rows
        ));
    }
    if pilot_summary.mix_p_value.is_some_and(|p| p < 0.05) {
        flags.push(
            "pilot unlike the rest (its group and label mix differs, chi-square p < 0.05)".into(),
        );
    }
    if !estimate.unfairness_reduction.is_measured() {
        let groups = pilot_groups(data, &pilot);
        warnings.push(format!(
            "option '{}': its effect on unfairness is not measured, since a group's rates cannot be read on its pilot (the pilot's rows by group: {groups}); its utility weighs the accuracy gain alone. A pilot that holds every group, with both labels, measures it",
            option.name
        ));
        flags.push(format!("pilot rows by group: {groups}"));
    }
    flags.extend(option_flags(option, &estimate, trials.confidence));
    flags.extend(evidence_flag(&pilot_summary, &estimate, trials.confidence));
    let value = OptionValue {
        name: option.name.clone(),
        kind: OptionKind::Feature,
        target: Some(column.to_string()),
        sensitive: option.sensitive,
        note: option.note.clone(),
        estimate,
        steps,
        direct,
        pilot: Some(pilot_summary),
        first_parts: Vec::new(),
        flags,
    };
    Ok((value, readings))
}

/// A candidate feature measured on its pilot, without and with it on the same splits and
/// orders (paired): as learning curves where the pilot is large enough for one, else at the
/// pilot's own size only.
pub(super) enum PilotMeasurement {
    Curves {
        without: Box<learning::MeasuredCurves>,
        with: Box<learning::MeasuredCurves>,
        /// The paired with-minus-without difference, fitted as curves.
        difference: learning::DifferenceCurves,
    },
    AtPilotSize {
        /// Why there are no curves.
        reason: String,
        without: Outcomes,
        with: Outcomes,
    },
}

impl PilotMeasurement {
    /// The trials without and with the candidate, `[repeat][size]`.
    pub(super) fn outcomes(&self) -> (&Outcomes, &Outcomes) {
        match self {
            PilotMeasurement::Curves { without, with, .. } => (&without.outcomes, &with.outcomes),
            PilotMeasurement::AtPilotSize { without, with, .. } => (without, with),
        }
    }

    /// The pilot's curves as reports show them: accuracy and the fairness measure `measure`
    /// without and with the candidate (`None` without curves, or where accuracy has no fit).
    fn curves(&self, measure: FairnessMeasure) -> Option<PilotCurves> {
        let PilotMeasurement::Curves { without, with, .. } = self else {
            return None;
        };
        let accuracy = |m: &learning::MeasuredCurves| {
            m.fitted
                .curves
                .iter()
                .find(|c| c.quantity == "accuracy" && c.chosen.is_some())
                .cloned()
        };
        let disparity = |m: &learning::MeasuredCurves| {
            m.fitted
                .disparities
                .iter()
                .filter(|d| d.measure == measure.full_name())
                .cloned()
                .collect()
        };
        Some(PilotCurves {
            accuracy_without: accuracy(without)?,
            accuracy_with: accuracy(with)?,
            disparity_without: disparity(without),
            disparity_with: disparity(with),
        })
    }

    /// The with-minus-without difference measured at the pilot's full size (the last anchor).
    pub(super) fn difference_at_pilot_size(&self, data: &Dataset, seed: u64) -> Reading {
        let (without, with) = self.outcomes();
        difference_of(
            &reading_from_outcomes(data, with, seed),
            &reading_from_outcomes(data, without, seed),
        )
    }
}

/// The pilot's rows by group, with their favourable labels: "'none' 509 (212 favourable),
/// 'declared' 0".
fn pilot_groups(data: &Dataset, pilot: &[usize]) -> String {
    let groups = data.group_list.len();
    let (mut rows, mut favourable) = (vec![0usize; groups], vec![0usize; groups]);
    for &i in pilot {
        let g = data.groups[i] as usize;
        rows[g] += 1;
        favourable[g] += usize::from(data.labels[i]);
    }
    data.group_list
        .iter()
        .enumerate()
        .map(|(g, group)| match rows[g] {
            0 => format!("'{}' 0", group.name),
            n => format!(
                "'{}' {} ({} favourable)",
                group.name,
                thousands(n),
                thousands(favourable[g])
            ),
        })
        .collect::<Vec<_>>()
        .join(", ")
}

/// Measures `with_columns` against today's features on the `pilot` rows (on `stream`, shown
/// as `stage` in progress), its curves read out to `reach` training rows for charts.
pub(super) fn measure_pilot(
    data: &Dataset,
    settings: &Settings,
    pilot: &[usize],
    with_columns: &[Column],
    (stream, stage): (Stream, &'static str),
    reach: f64,
    progress: ProgressSink,
) -> Result<PilotMeasurement> {
    let trials = &settings.trials;
    let plan = CurvePlan {
        rows: pilot,
        arms: vec![&data.features, with_columns],
        stream,
        stage,
        smallest: None,
    };
    match learning::measure_curves(data, settings, &plan, &|_| vec![reach], progress) {
        Ok(mut measured) => {
            let with = measured.swap_remove(1);
            let without = measured.swap_remove(0);
            let difference = learning::DifferenceCurves::fit(
                &with.outcomes,
                &without.outcomes,
                &with.schedule.sizes,
                data.group_list.len(),
                trials.seed,
                super::score::overlap_spread(trials),
            );
            Ok(PilotMeasurement::Curves {
                without: Box::new(without),
                with: Box::new(with),
                difference,
            })
        }
        Err(error) => {
            // Too small for a curve: the trials at the pilot's full size only.
            let split =
                trial::draw_split(data, pilot, trials, &mut stream_rng(trials.seed, stream, 0));
            if split.train.len() < 10 {
                return Err(Error::NotEnoughData(format!(
                    "a pilot of {} rows is too small to train on",
                    pilot.len()
                )));
            }
            let sizes = [split.train.len()];
            let design = TrialDesign {
                stage: "pilot trials",
                rows: Rows::Drawn {
                    rows: pilot,
                    stream,
                    sizes: Sizes::Nested {
                        sizes: &sizes,
                        vary: None,
                    },
                },
                arms: vec![Arm::of(&data.features), Arm::of(with_columns)],
            };
            let mut outcomes = learning::by_arm(trial::run(data, trials, &design, progress)?, 2);
            let with = outcomes.swap_remove(1);
            let without = outcomes.swap_remove(0);
            Ok(PilotMeasurement::AtPilotSize {
                reason: error.to_string(),
                without,
                with,
            })
        }
    }
}

/// A reading from measured outcomes at one size: the mean over repeats, and bootstrap draws of
/// it over repeats.
pub(super) fn reading_from_outcomes(
    data: &Dataset,
    outcomes: &[Vec<TrialOutcome>],
    seed: u64,
) -> Reading {
    let groups = data.group_list.len();
    let mean = |draw: &[usize]| -> Quantities {
        let last: Vec<&TrialOutcome> = draw.iter().filter_map(|&r| outcomes[r].last()).collect();
        Quantities::mean_of(&last, groups)
    };
    let repeats = outcomes.len();
    let all: Vec<usize> = (0..repeats).collect();
    let mut rng = stream_rng(seed, Stream::PilotBootstrap, 0);
    use rand::Rng;
    let draws = (0..learning::BOOTSTRAP_DRAWS)
        .map(|_| {
            mean(
                &(0..repeats)
                    .map(|_| rng.gen_range(0..repeats))
                    .collect::<Vec<_>>(),
            )
        })
        .collect();
    Reading {
        point: mean(&all),
        draws,
    }
}

/// Where the pilot's own paired difference is significant but the headline at full size is
/// not, the doubt lies in carrying the difference to the full size, not in the difference: the
/// flag says so, with the pilot's p-values, so that "not significant" is not read as "no
/// effect seen".
fn evidence_flag(pilot: &PilotSummary, headline: &Purchase, confidence: f64) -> Option<String> {
    let seen: Vec<String> = [
        (
            "accuracy",
            &pilot.accuracy_difference,
            &headline.accuracy_gain,
        ),
        (
            "unfairness",
            &pilot.unfairness_difference,
            &headline.unfairness_reduction,
        ),
    ]
    .into_iter()
    .filter_map(|(name, measured, carried)| {
        let p = measured.as_ref()?.p_value?;
        (p < 1.0 - confidence && !carried.differs_from_zero(confidence))
            .then(|| format!("{name} p = {}", short_p(p)))
    })
    .collect();
    (!seen.is_empty()).then(|| {
        format!(
            "significant on the pilot at its own size ({}); the doubt is in carrying it to the full size",
            seen.join(", ")
        )
    })
}

/// A p-value in a flag: three decimals, or a power of ten below 0.001.
fn short_p(p: f64) -> String {
    if p < 1e-16 {
        "< 1e-16".into()
    } else if p < 0.001 {
        format!("{p:.0e}")
    } else {
        format!("{p:.3}")
    }
}

/// The pilot's own evidence (its paired differences at its size, the mix check, the ANOVA
/// across its sizes), with what a bigger pilot would tell (`growth`).
fn pilot_summary(
    data: &Dataset,
    scorer: &Scorer,
    pilot: &[usize],
    (without, with): (&Outcomes, &Outcomes),
    mix: Option<(f64, usize, f64)>,
    extrapolated: bool,
    growth: PilotGrowth,
) -> PilotSummary {
    let confidence = scorer.confidence;
    let last = |o: &[Vec<TrialOutcome>]| -> Vec<TrialOutcome> {
        o.iter().filter_map(|r| r.last().cloned()).collect()
    };
    let (w, o) = (last(with), last(without));
    let test_to_train = w
        .first()
        .map_or(0.0, |t| t.test_rows as f64 / t.train_rows.max(1) as f64);
    let unfairness =
        |t: &TrialOutcome| fairness::worst_of_counts(scorer.measure, &t.counts, data.reference);
    let accuracy_diff: Vec<f64> = w
        .iter()
        .zip(&o)
        .map(|(a, b)| a.accuracy - b.accuracy)
        .collect();
    let unfair_diff: Vec<f64> = w
        .iter()
        .zip(&o)
        .filter_map(|(a, b)| Some(unfairness(a)? - unfairness(b)?))
        .collect();
    let by_attribute = data
        .more_attributes
        .iter()
        .enumerate()
        .map(|(k, attribute)| {
            let unfairness = |t: &TrialOutcome| {
                fairness::worst_of_counts(scorer.measure, &t.more_counts[k], attribute.reference)
            };
            let differences: Vec<f64> = w
                .iter()
                .zip(&o)
                .filter_map(|(a, b)| Some(unfairness(a)? - unfairness(b)?))
                .collect();
            AttributeDifference {
                attribute: attribute.name.clone(),
                difference: estimate(&differences, confidence, test_to_train, Some(0.0)),
            }
        })
        .collect();
    let sizes = with.first().map_or(0, Vec::len);
    let per_size: Vec<Vec<f64>> = (0..sizes)
        .map(|i| {
            with.iter()
                .zip(without)
                .map(|(a, b)| a[i].accuracy - b[i].accuracy)
                .collect()
        })
        .collect();
    PilotSummary {
        rows: pilot.len(),
        training_rows: w.first().map_or(0, |t| t.train_rows),
        mix_chi_square: mix.map(|m| m.0),
        mix_p_value: mix.map(|m| m.2),
        accuracy_difference: estimate(&accuracy_diff, confidence, test_to_train, Some(0.0)),
        unfairness_difference: estimate(&unfair_diff, confidence, test_to_train, Some(0.0)),
        unfairness_difference_by_attribute: by_attribute,
        size_anova_p: metrics::one_way_anova(&per_size).map(|a| a.1),
        extrapolated,
        growth,
        curves: None,
    }
}
