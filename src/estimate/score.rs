//! Readings turned into gains: a purchase's accuracy gain, unfairness reduction and utility
//! from the quantities before and after it, with bootstrap intervals and p-values widened for
//! overlapping repeats; the anchored estimate; the flags an option carries.

use crate::data::costs::CostOption;
use crate::data::Dataset;
use crate::estimate::learning::{self, FittedCurves, Quantities, Reading};
use crate::report::*;
use crate::settings::Settings;
use crate::stats::fairness::{self, Rates};
use crate::stats::metrics;

/// A gain computed from the quantities before and after.
pub(super) type GainOf<'a> = &'a dyn Fn(&Quantities, &Quantities) -> Option<f64>;

/// Everything the valuation needs to turn readings into gains.
pub(super) struct Scorer<'a> {
    pub(super) data: &'a Dataset,
    pub(super) measure: FairnessMeasure,
    pub(super) weigh_accuracy: f64,
    pub(super) weigh_fairness: f64,
    pub(super) confidence: f64,
    /// Factor by which the bootstrap spread of a gain is widened about its point (see
    /// [`overlap_spread`]).
    pub(super) spread: f64,
}

/// The bootstrap over repeats measures how much a mean over R overlapping train/test splits of
/// the same rows varies, σ²/R; repeated splits overlap, and the variance a new sample of people
/// would show is larger. As the baseline's intervals do, the variance is corrected by Nadeau and
/// Bengio's (2003) factor: σ²(1/R + n_test/n_train) in place of σ²/R, so the spread widens by
/// √(1 + R·n_test/n_train).
pub fn overlap_spread(trials: &crate::settings::TrialSettings) -> f64 {
    let test_to_train = trials.test_fraction / (1.0 - trials.test_fraction);
    (1.0 + trials.repeats as f64 * test_to_train).sqrt()
}

impl Scorer<'_> {
    /// Unfairness of the worst compared group, and that group.
    pub(super) fn unfairness(&self, v: &Quantities) -> Option<(f64, usize)> {
        let r = self.data.reference;
        fairness::worst_group(v.groups.len(), r, |g| {
            self.measure.unfairness(&v.groups[g], &v.groups[r])
        })
        .map(|(g, u)| (u, g))
    }

    pub(super) fn change(&self, point: f64, draws: Vec<f64>) -> Change {
        let centre = if point.is_finite() { point } else { 0.0 };
        let stretched = draws
            .into_iter()
            .map(|d| centre + self.spread * (d - centre))
            .collect();
        metrics::bootstrap_change(centre, stretched, self.confidence)
    }

    /// Values a purchase from the readings now and after.
    pub(super) fn purchase(
        &self,
        now: &Reading,
        after: &Reading,
        new_rows: usize,
        cost: f64,
        training_rows: f64,
        largest: f64,
    ) -> Purchase {
        let per_draw = |f: GainOf| -> Vec<f64> {
            now.draws
                .iter()
                .zip(&after.draws)
                .map(|(n, a)| f(n, a).unwrap_or(f64::NAN))
                .collect()
        };
        let accuracy = |n: &Quantities, a: &Quantities| Some(a.accuracy - n.accuracy);
        let fairness = |n: &Quantities, a: &Quantities| {
            Some(self.unfairness(n)?.0 - self.unfairness(a)?.0).filter(|x| x.is_finite())
        };
        // Where the fitted unfairness after the purchase cannot be measured (a group with no
        // test rows, or none of a label the measure needs), the reduction is "not measured" and
        // the utility weighs the accuracy gain alone.
        let fairness_point = fairness(&now.point, &after.point);
        let utility = |n: &Quantities, a: &Quantities| {
            let fair = match fairness_point {
                Some(_) => self.weigh_fairness * fairness(n, a)?,
                None => 0.0,
            };
            Some(self.weigh_accuracy * accuracy(n, a)? + fair)
        };
        let measured = |point: Option<f64>, f: GainOf| match point {
            Some(point) => self.change(point, per_draw(f)),
            None => Change::not_measured(),
        };
        let accuracy_gain = measured(accuracy(&now.point, &after.point), &accuracy);
        let unfairness_reduction = measured(fairness_point, &fairness);
        let utility_change = measured(utility(&now.point, &after.point), &utility);
        let per_1000 = |x: f64| if cost > 0.0 { x / cost * 1000.0 } else { 0.0 };
        let groups = self
            .data
            .group_list
            .iter()
            .enumerate()
            .map(|(g, group)| {
                let rate = |k: fn(&Rates) -> f64| {
                    let point = k(&after.point.groups[g]) - k(&now.point.groups[g]);
                    let change =
                        |n: &Quantities, a: &Quantities| Some(k(&a.groups[g]) - k(&n.groups[g]));
                    measured(Some(point).filter(|p| p.is_finite()), &change)
                };
                GroupChange {
                    group: group.name.clone(),
                    selection_rate: rate(|r| r.selection),
                    true_positive_rate: rate(|r| r.true_positive),
                    false_positive_rate: rate(|r| r.false_positive),
                }
            })
            .collect();
        Purchase {
            new_rows,
            cost,
            training_rows,
            accuracy_per_1000: per_1000(accuracy_gain.mean),
            fairness_per_1000: per_1000(unfairness_reduction.mean),
            utility_per_1000: per_1000(utility_change.mean),
            cautious_per_1000: utility_change.low.map(per_1000),
            accuracy_gain,
            unfairness_reduction,
            utility: utility_change,
            extrapolated_too_far: training_rows > learning::RELIABLE_MULTIPLE * largest,
            groups,
        }
    }
}

/// `full + difference`, clipped to [0, 1]: the full-data curve moved by the pilot's
/// with-feature difference.
pub(super) fn anchored(full: &Reading, difference: &Reading) -> Reading {
    full.zip(difference, |f, d| (f + d).clamp(0.0, 1.0))
}

/// `with − without` of two readings.
pub(super) fn difference_of(with: &Reading, without: &Reading) -> Reading {
    with.zip(without, |a, b| a - b)
}

/// Accuracy gain and unfairness reduction from `now` to `after` under `measure`, with intervals
/// at `confidence`.
pub fn score_readings(
    data: &Dataset,
    measure: FairnessMeasure,
    trials: &crate::settings::TrialSettings,
    now: &Reading,
    after: &Reading,
) -> (Change, Change) {
    let scorer = Scorer {
        data,
        measure,
        weigh_accuracy: 1.0,
        weigh_fairness: 1.0,
        confidence: trials.confidence,
        spread: overlap_spread(trials),
    };
    let p = scorer.purchase(now, after, 0, 0.0, 0.0, f64::INFINITY);
    (p.accuracy_gain, p.unfairness_reduction)
}

pub(super) fn option_flags(
    option: &CostOption,
    headline: &Purchase,
    confidence: f64,
) -> Vec<String> {
    let mut flags = Vec::new();
    if headline.extrapolated_too_far {
        flags.push("extrapolated beyond 4x the largest size measured".into());
    }
    let significant = |c: &Change| c.differs_from_zero(confidence);
    if !significant(&headline.accuracy_gain) && !significant(&headline.unfairness_reduction) {
        flags.push("neither gain differs significantly from zero".into());
    }
    if !headline.unfairness_reduction.is_measured() {
        flags.push("unfairness not measured: its utility weighs the accuracy gain alone, and plans leave it out of their unfairness sums".into());
    }
    let flat = |c: &Change| matches!((c.low, c.high), (Some(l), Some(h)) if (h - l).abs() < 1e-12);
    if flat(&headline.accuracy_gain) && flat(&headline.unfairness_reduction) {
        flags.push("no trend: the curves are flat here, so no change is estimated (which does not show the change is zero)".into());
    }
    let widened: Vec<&str> = [
        ("accuracy gain", &headline.accuracy_gain),
        ("unfairness reduction", &headline.unfairness_reduction),
    ]
    .into_iter()
    .filter(|(_, c)| c.widened_to_point)
    .map(|(name, _)| name)
    .collect();
    if !widened.is_empty() {
        flags.push(format!(
            "the fitted {} lay beyond the interval of its re-fitted draws, so the interval is widened to reach it: the draws disagree with the fit, read the interval rather than the point",
            widened.join(" and the fitted ")
        ));
    }
    if option.sensitive {
        flags.push("sensitive: needs a privacy or legal review".into());
    }
    flags
}

pub(super) fn empty_purchase() -> Purchase {
    let zero = Change {
        mean: 0.0,
        low: None,
        high: None,
        p_value: None,
        chance_positive: None,
        widened_to_point: false,
    };
    Purchase {
        new_rows: 0,
        cost: 0.0,
        training_rows: 0.0,
        accuracy_gain: zero.clone(),
        unfairness_reduction: zero.clone(),
        utility: zero,
        accuracy_per_1000: 0.0,
        fairness_per_1000: 0.0,
        utility_per_1000: 0.0,
        cautious_per_1000: None,
        extrapolated_too_far: false,
        groups: Vec::new(),
    }
}

/// The readings behind an option's headline estimate, kept so that the gains can be scored
/// again under another fairness measure (the backtest does), with two simpler estimates beside.
#[derive(Debug, Clone)]
pub struct OptionReadings {
    /// Before the purchase (today's curve, or for rows of one group that group's curve).
    pub now: Reading,
    /// After it, as acquest estimates.
    pub after: Reading,
    /// After it with no extrapolation: what the last measured anchor shows (for rows, nothing
    /// is measured beyond today, so no change; for a feature, the with-minus-without difference
    /// measured at the pilot's full size, carried over).
    pub last_anchor: Reading,
    /// After it by the pilot's with-feature curve alone, read at today's training rows (features
    /// with a pilot curve only).
    pub direct: Option<Reading>,
}

/// What every option is valued against: today's data and curves, read at today's training
/// rows, and the scorer that turns readings into gains.
pub(super) struct Valuation<'a> {
    pub(super) data: &'a Dataset,
    pub(super) settings: &'a Settings,
    pub(super) scorer: Scorer<'a>,
    /// Today's learning curves on all rows.
    pub(super) curves: &'a FittedCurves,
    /// Today's curves read at today's training rows.
    pub(super) now: Reading,
    /// Training rows of a trial today.
    pub(super) training_rows: f64,
    /// Row counts the rows options for any group can be bought in (a feature bought with rows
    /// is read at each).
    pub(super) overall_steps: Vec<usize>,
}

impl Valuation<'_> {
    /// Training rows of a trial after `new_rows` more rows (the test share stays the same).
    pub(super) fn training_at(&self, new_rows: usize) -> f64 {
        let rows = self.data.rows();
        self.training_rows * (rows + new_rows) as f64 / rows as f64
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn quantities(accuracy: f64, groups: &[[f64; 3]]) -> Quantities {
        Quantities {
            accuracy,
            groups: groups
                .iter()
                .map(|&[selection, true_positive, false_positive]| Rates {
                    selection,
                    true_positive,
                    false_positive,
                })
                .collect(),
        }
    }

    fn scorer(data: &Dataset, spread: f64) -> Scorer<'_> {
        Scorer {
            data,
            measure: FairnessMeasure::Eod,
            weigh_accuracy: 1.0,
            weigh_fairness: 2.0,
            confidence: 0.9,
            spread,
        }
    }

    #[test]
    fn a_purchase_is_scored_from_the_readings_before_and_after() {
        // Worked by hand. Reference r: TPR 0.8; compared u: TPR 0.6 today, 0.7 after, so the
        // equal-opportunity unfairness falls from 0.2 to 0.1; accuracy 0.80 -> 0.83. Utility
        // 1 x 0.03 + 2 x 0.1 = 0.23; at a cost of 460, 0.5 per 1,000.
        let data = Dataset::from_parts(vec![true, false], vec![0, 1], &["r", "u"], 0, Vec::new());
        let now = quantities(0.80, &[[0.5, 0.8, 0.2], [0.3, 0.6, 0.1]]);
        let after = quantities(0.83, &[[0.5, 0.8, 0.2], [0.35, 0.7, 0.1]]);
        // 20 draws whose accuracy gains are 0.03 + (b - 9.5)/1000.
        let draws = |q: &Quantities, shift: bool| -> Vec<Quantities> {
            (0..20)
                .map(|b| {
                    let mut d = q.clone();
                    if shift {
                        d.accuracy += (b as f64 - 9.5) / 1000.0;
                    }
                    d
                })
                .collect()
        };
        let now = Reading {
            draws: draws(&now, false),
            point: now,
        };
        let after = Reading {
            draws: draws(&after, true),
            point: after,
        };
        let close = |a: f64, b: f64| (a - b).abs() < 1e-12;
        let p = scorer(&data, 1.0).purchase(&now, &after, 100, 460.0, 1000.0, 500.0);
        assert!(close(p.accuracy_gain.mean, 0.03));
        assert!(close(p.unfairness_reduction.mean, 0.1));
        assert!(close(p.utility.mean, 0.23));
        assert!(close(p.utility_per_1000, 0.5));
        // Type-7 (linear) quantiles of the 20 gains: 5% at position 0.95, 95% at 18.05.
        assert!(close(p.accuracy_gain.low.unwrap(), 0.02145));
        assert!(close(p.accuracy_gain.high.unwrap(), 0.03855));
        assert_eq!(p.accuracy_gain.p_value, Some(0.0), "no draw at or below 0");
        assert_eq!(p.unfairness_reduction.p_value, Some(0.0));
        assert!(close(p.groups[1].selection_rate.mean, 0.05));
        assert!(close(p.groups[1].true_positive_rate.mean, 0.1));
        assert!(!p.extrapolated_too_far, "1,000 rows is within 4 x 500");
        // The spread widens the draws about the point: half-widths double.
        let wide = scorer(&data, 2.0).purchase(&now, &after, 100, 460.0, 1000.0, 200.0);
        assert!(close(wide.accuracy_gain.mean, 0.03));
        assert!(close(wide.accuracy_gain.low.unwrap(), 0.03 - 2.0 * 0.00855));
        assert!(close(
            wide.accuracy_gain.high.unwrap(),
            0.03 + 2.0 * 0.00855
        ));
        assert!(wide.extrapolated_too_far, "1,000 rows is beyond 4 x 200");
    }

    #[test]
    fn the_anchored_estimate_adds_the_pilot_difference_and_clips_to_rates() {
        // Worked by hand: 0.95 + 0.1 clips to 1; 0.2 - 0.3 clips to 0; 0.5 + 0.1 = 0.6.
        let full = quantities(0.95, &[[0.2, 0.5, 0.1]]);
        let difference = quantities(0.1, &[[-0.3, 0.1, 0.0]]);
        let reading = |q: Quantities| Reading {
            draws: vec![q.clone(), q.clone()],
            point: q,
        };
        let a = anchored(&reading(full), &reading(difference));
        for q in std::iter::once(&a.point).chain(&a.draws) {
            assert_eq!(q.accuracy, 1.0);
            assert_eq!(q.groups[0].selection, 0.0);
            assert!((q.groups[0].true_positive - 0.6).abs() < 1e-12);
            assert!((q.groups[0].false_positive - 0.1).abs() < 1e-12);
        }
    }
}
