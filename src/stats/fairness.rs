//! The one definition of each disparity measure (statistical parity difference, disparate
//! impact, equal opportunity difference, average odds difference), of unfairness on a
//! 0-is-fair scale, and of the worst compared group. Every estimate, curve and report reads the
//! measures from here.

use crate::report::FairnessMeasure;
use crate::stats::metrics::GroupCounts;

/// Where the rates of one group come from: counts of one trial, rates read off fitted curves,
/// or the labels alone. A rate is `None` where it is undefined (nothing to divide by).
pub trait RateSource {
    /// P(ŷ = 1).
    fn selection(&self) -> Option<f64>;
    /// P(ŷ = 1 | y = 1).
    fn true_positive(&self) -> Option<f64>;
    /// P(ŷ = 1 | y = 0).
    fn false_positive(&self) -> Option<f64>;
}

/// A group's three rates, all defined (read off curves, say).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Rates {
    /// P(ŷ = 1).
    pub selection: f64,
    /// P(ŷ = 1 | y = 1).
    pub true_positive: f64,
    /// P(ŷ = 1 | y = 0).
    pub false_positive: f64,
}

impl Rates {
    /// The rates of one trial's counts, where all three are defined.
    pub fn of_counts(counts: &GroupCounts) -> Option<Rates> {
        Some(Rates {
            selection: counts.selection_rate()?,
            true_positive: counts.true_positive_rate()?,
            false_positive: counts.false_positive_rate()?,
        })
    }
}

impl RateSource for Rates {
    fn selection(&self) -> Option<f64> {
        Some(self.selection)
    }
    fn true_positive(&self) -> Option<f64> {
        Some(self.true_positive)
    }
    fn false_positive(&self) -> Option<f64> {
        Some(self.false_positive)
    }
}

impl RateSource for GroupCounts {
    fn selection(&self) -> Option<f64> {
        self.selection_rate()
    }
    fn true_positive(&self) -> Option<f64> {
        self.true_positive_rate()
    }
    fn false_positive(&self) -> Option<f64> {
        self.false_positive_rate()
    }
}

/// The labels of a group as if they were predictions: its "selection rate" is its favourable
/// label rate, the bias already in the data. Only SPD and DI are defined on labels.
pub struct Labels<'a>(pub &'a GroupCounts);

impl RateSource for Labels<'_> {
    fn selection(&self) -> Option<f64> {
        self.0.label_rate()
    }
    fn true_positive(&self) -> Option<f64> {
        None
    }
    fn false_positive(&self) -> Option<f64> {
        None
    }
}

/// Unfairness of a disparate impact ratio on a 0-is-fair scale: 1 − min(DI, 1/DI).
pub fn impact_unfairness(disparate_impact: f64) -> f64 {
    if disparate_impact <= 0.0 {
        1.0
    } else {
        1.0 - disparate_impact.min(1.0 / disparate_impact)
    }
}

impl FairnessMeasure {
    /// Every measure, in the order they are reported.
    pub const ALL: [FairnessMeasure; 4] = [
        FairnessMeasure::Spd,
        FairnessMeasure::Di,
        FairnessMeasure::Eod,
        FairnessMeasure::Aod,
    ];

    /// The measure of the compared group `u` against the reference `r`, signed:
    /// SPD = P(ŷ=1|u) − P(ŷ=1|r) (ideal 0); DI = P(ŷ=1|u) / P(ŷ=1|r) (ideal 1; `None` when the
    /// reference rate is not above 0); EOD = TPR_u − TPR_r (ideal 0);
    /// AOD = ½[(FPR_u − FPR_r) + (TPR_u − TPR_r)] (ideal 0). `None` where a rate it needs is
    /// undefined.
    pub fn value(self, u: &impl RateSource, r: &impl RateSource) -> Option<f64> {
        match self {
            FairnessMeasure::Spd => Some(u.selection()? - r.selection()?),
            FairnessMeasure::Di => {
                let reference = r.selection()?;
                (reference > 0.0).then_some(u.selection()? / reference)
            }
            FairnessMeasure::Eod => Some(u.true_positive()? - r.true_positive()?),
            FairnessMeasure::Aod => Some(
                ((u.false_positive()? - r.false_positive()?)
                    + (u.true_positive()? - r.true_positive()?))
                    / 2.0,
            ),
        }
    }

    /// The ideal value of the measure: 1 for disparate impact, 0 for the differences.
    pub fn ideal(self) -> f64 {
        match self {
            FairnessMeasure::Di => 1.0,
            _ => 0.0,
        }
    }

    /// A value of the measure on a 0-is-fair scale: |value| for the differences,
    /// 1 − min(DI, 1/DI) for disparate impact.
    pub fn unfairness_of(self, value: f64) -> f64 {
        match self {
            FairnessMeasure::Di => impact_unfairness(value),
            _ => value.abs(),
        }
    }

    /// Unfairness of `u` against `r` on a 0-is-fair scale; `None` where undefined or not finite.
    pub fn unfairness(self, u: &impl RateSource, r: &impl RateSource) -> Option<f64> {
        let value = self.unfairness_of(self.value(u, r)?);
        value.is_finite().then_some(value)
    }

    /// The same from one trial's counts, where all three rates of both groups are defined.
    pub fn unfairness_of_counts(self, u: &GroupCounts, r: &GroupCounts) -> Option<f64> {
        self.unfairness(&Rates::of_counts(u)?, &Rates::of_counts(r)?)
    }
}

/// The worst of a set of candidates: the highest unfairness among those where it is defined
/// (the last of equals), with its key.
pub fn worst<K>(candidates: impl IntoIterator<Item = (K, Option<f64>)>) -> Option<(K, f64)> {
    candidates
        .into_iter()
        .filter_map(|(key, unfairness)| Some((key, unfairness?)))
        .max_by(|a, b| a.1.total_cmp(&b.1))
}

/// The worst compared group: among the groups other than `reference`, the one whose
/// `unfairness` is highest, with that unfairness.
pub fn worst_group(
    group_count: usize,
    reference: usize,
    unfairness: impl Fn(usize) -> Option<f64>,
) -> Option<(usize, f64)> {
    worst(
        (0..group_count)
            .filter(|&g| g != reference)
            .map(|g| (g, unfairness(g))),
    )
}

/// Unfairness of the worst compared group in one trial's counts under `measure`.
pub fn worst_of_counts(
    measure: FairnessMeasure,
    counts: &[GroupCounts],
    reference: usize,
) -> Option<f64> {
    worst_group(counts.len(), reference, |g| {
        measure.unfairness_of_counts(&counts[g], &counts[reference])
    })
    .map(|(_, u)| u)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rates(selection: f64, true_positive: f64, false_positive: f64) -> Rates {
        Rates {
            selection,
            true_positive,
            false_positive,
        }
    }

    #[test]
    fn each_measure_from_rates() {
        // Worked by hand from the definitions above.
        let (u, r) = (rates(0.2, 0.5, 0.1), rates(0.4, 0.7, 0.2));
        let close = |a: Option<f64>, b: f64| (a.unwrap() - b).abs() < 1e-12;
        assert!(close(FairnessMeasure::Spd.value(&u, &r), -0.2));
        assert!(close(FairnessMeasure::Di.value(&u, &r), 0.5));
        assert!(close(FairnessMeasure::Eod.value(&u, &r), -0.2));
        assert!(close(FairnessMeasure::Aod.value(&u, &r), -0.15));
        assert_eq!(FairnessMeasure::Di.value(&u, &rates(0.0, 0.7, 0.2)), None);
        assert!(close(FairnessMeasure::Spd.unfairness(&u, &r), 0.2));
        assert!(close(FairnessMeasure::Di.unfairness(&u, &r), 0.5));
        assert!(close(FairnessMeasure::Eod.unfairness(&u, &r), 0.2));
        assert!(close(FairnessMeasure::Aod.unfairness(&u, &r), 0.15));
        // DI of 2 is as unfair as DI of 1/2.
        assert!(close(FairnessMeasure::Di.unfairness(&r, &u), 0.5));
    }

    #[test]
    fn the_worst_group_leaves_the_reference_out_and_takes_the_last_of_equals() {
        let unfairness = [Some(0.9), Some(0.1), None, Some(0.3), Some(0.3)];
        assert_eq!(worst_group(5, 0, |g| unfairness[g]), Some((4, 0.3)));
        assert_eq!(worst_group(1, 0, |g| unfairness[g]), None);
    }
}
