//! Pure scoring: accuracy, rates per group, the four-fifths check and the
//! statistics (tests, intervals) they are reported with. Knows nothing of data frames or files.

pub use crate::report::Estimate;

use serde::{Deserialize, Serialize};
use statrs::distribution::{ChiSquared, ContinuousCDF, FisherSnedecor, Normal, StudentsT};
use statrs::function::factorial::ln_binomial;

/// Counts for one group on one set of rows: labels, predictions and their crossing.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct GroupCounts {
    /// Rows of the group.
    pub rows: u64,
    /// Rows whose label is favourable.
    pub favourable_labels: u64,
    /// Rows predicted favourable.
    pub selected: u64,
    /// Rows predicted favourable whose label is favourable.
    pub true_positives: u64,
    /// Rows predicted favourable whose label is unfavourable.
    pub false_positives: u64,
}

impl GroupCounts {
    /// P(ŷ = 1): the share of the group predicted favourable.
    pub fn selection_rate(&self) -> Option<f64> {
        ratio(self.selected, self.rows)
    }

    /// P(y = 1): the share of the group whose label is favourable.
    pub fn label_rate(&self) -> Option<f64> {
        ratio(self.favourable_labels, self.rows)
    }

    /// True positive rate P(ŷ = 1 | y = 1).
    pub fn true_positive_rate(&self) -> Option<f64> {
        ratio(self.true_positives, self.favourable_labels)
    }

    /// False positive rate P(ŷ = 1 | y = 0).
    pub fn false_positive_rate(&self) -> Option<f64> {
        ratio(self.false_positives, self.rows - self.favourable_labels)
    }
}

fn ratio(numerator: u64, denominator: u64) -> Option<f64> {
    (denominator > 0).then(|| numerator as f64 / denominator as f64)
}

/// Tallies labels and predictions per group. `groups[i]` is the group index of row `i`.
pub fn group_counts(
    labels: &[bool],
    predicted: &[bool],
    groups: &[u32],
    group_count: usize,
) -> Vec<GroupCounts> {
    let mut counts = vec![GroupCounts::default(); group_count];
    for ((&label, &prediction), &group) in labels.iter().zip(predicted).zip(groups) {
        // A row of no group counted here (a cell too small to assess) is skipped.
        let Some(c) = counts.get_mut(group as usize) else {
            continue;
        };
        c.rows += 1;
        c.favourable_labels += u64::from(label);
        c.selected += u64::from(prediction);
        c.true_positives += u64::from(label && prediction);
        c.false_positives += u64::from(!label && prediction);
    }
    counts
}

/// Share of rows whose prediction equals the label.
pub fn accuracy(labels: &[bool], predicted: &[bool]) -> f64 {
    let right = labels.iter().zip(predicted).filter(|(l, p)| l == p).count();
    right as f64 / labels.len().max(1) as f64
}

/// Mean of the true positive rate and the true negative rate; `None` when one label is absent.
pub fn balanced_accuracy(labels: &[bool], predicted: &[bool]) -> Option<f64> {
    let (mut tp, mut pos, mut tn, mut neg) = (0u64, 0u64, 0u64, 0u64);
    for (&l, &p) in labels.iter().zip(predicted) {
        if l {
            pos += 1;
            tp += u64::from(p);
        } else {
            neg += 1;
            tn += u64::from(!p);
        }
    }
    Some((ratio(tp, pos)? + ratio(tn, neg)?) / 2.0)
}

/// Area under the ROC curve, as the Mann-Whitney probability that a favourable row scores above an
/// unfavourable one (ties count one half). `None` when one label is absent.
pub fn area_under_curve(labels: &[bool], scores: &[f64]) -> Option<f64> {
    let mut order: Vec<usize> = (0..scores.len()).collect();
    order.sort_by(|&a, &b| scores[a].total_cmp(&scores[b]));
    let positives = labels.iter().filter(|&&l| l).count() as f64;
    let negatives = labels.len() as f64 - positives;
    if positives == 0.0 || negatives == 0.0 {
        return None;
    }
    // Sum of the ranks of the favourable rows, with tied scores sharing their mean rank.
    let mut rank_sum = 0.0;
    let mut start = 0;
    while start < order.len() {
        let mut end = start;
        while end + 1 < order.len() && scores[order[end + 1]] == scores[order[start]] {
            end += 1;
        }
        let mean_rank = (start + end) as f64 / 2.0 + 1.0;
        for &i in &order[start..=end] {
            if labels[i] {
                rank_sum += mean_rank;
            }
        }
        start = end + 1;
    }
    Some((rank_sum - positives * (positives + 1.0) / 2.0) / (positives * negatives))
}

/// The four-fifths rule threshold of 29 CFR 1607.4(D).
pub const FOUR_FIFTHS: f64 = 0.8;

/// One group's result under the four-fifths rule.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FourFifthsFinding {
    /// Index of the group.
    pub group: usize,
    /// Selection rate of the group.
    pub rate: f64,
    /// Its rate divided by the highest group's rate.
    pub impact_ratio: f64,
    /// Adverse impact is indicated: the ratio is strictly less than four-fifths.
    pub adverse_impact: bool,
    /// Moving one person of this group across the selection line would change the finding.
    pub one_person_flips: bool,
    /// Two-proportion z statistic against the highest-rate group (pooled variance).
    pub z: Option<f64>,
    /// Two-sided p-value of that z-test.
    pub z_p_value: Option<f64>,
    /// Two-sided p-value of Fisher's exact test, computed when a cell count is below
    /// [`FISHER_BELOW`] or the group is small.
    pub fisher_p_value: Option<f64>,
}

/// Fisher's exact test is reported when an expected or observed cell is below this count.
pub const FISHER_BELOW: u64 = 30;

/// Applies the four-fifths rule to selected / total counts per group: each group's selection rate
/// is compared with the highest group's rate (the yardstick group gets ratio 1). Groups with no
/// rows are left out.
pub fn four_fifths(selected: &[u64], totals: &[u64]) -> Vec<FourFifthsFinding> {
    let rates: Vec<Option<f64>> = selected
        .iter()
        .zip(totals)
        .map(|(&s, &n)| ratio(s, n))
        .collect();
    let Some(top) = (0..rates.len())
        .filter(|&g| rates[g].is_some())
        .max_by(|&a, &b| {
            rates[a]
                .unwrap_or(0.0)
                .total_cmp(&rates[b].unwrap_or(0.0))
                .then(b.cmp(&a))
        })
    else {
        return Vec::new();
    };
    let top_rate = rates[top].unwrap_or(0.0);
    let mut findings = Vec::new();
    for g in 0..rates.len() {
        let Some(rate) = rates[g] else { continue };
        let impact_ratio = if top_rate > 0.0 { rate / top_rate } else { 1.0 };
        let adverse_impact = impact_ratio < FOUR_FIFTHS;
        let one_person_flips = g != top && {
            let n = totals[g];
            let moved = if adverse_impact {
                selected[g] + 1
            } else {
                selected[g].saturating_sub(1)
            };
            let moved_rate = moved.min(n) as f64 / n as f64;
            let moved_ratio = if top_rate > 0.0 {
                moved_rate / top_rate
            } else {
                1.0
            };
            (moved_ratio < FOUR_FIFTHS) != adverse_impact
        };
        let (z, z_p_value, fisher_p_value) = if g == top {
            (None, None, None)
        } else {
            let (z, p) = two_proportion_z_test(selected[g], totals[g], selected[top], totals[top])
                .map_or((None, None), |(z, p)| (Some(z), Some(p)));
            let small = [
                selected[g],
                totals[g] - selected[g],
                selected[top],
                totals[top] - selected[top],
            ]
            .iter()
            .any(|&c| c < FISHER_BELOW);
            let fisher = small.then(|| {
                fisher_exact_two_sided(
                    selected[g],
                    totals[g] - selected[g],
                    selected[top],
                    totals[top] - selected[top],
                )
            });
            (z, p, fisher)
        };
        findings.push(FourFifthsFinding {
            group: g,
            rate,
            impact_ratio,
            adverse_impact,
            one_person_flips,
            z,
            z_p_value,
            fisher_p_value,
        });
    }
    findings
}

/// Two-proportion z-test with pooled variance: z and the two-sided p-value. `None` when the pooled
/// proportion is 0 or 1 (no variation) or a group is empty.
pub fn two_proportion_z_test(x1: u64, n1: u64, x2: u64, n2: u64) -> Option<(f64, f64)> {
    if n1 == 0 || n2 == 0 {
        return None;
    }
    let (n1f, n2f) = (n1 as f64, n2 as f64);
    let pooled = (x1 + x2) as f64 / (n1f + n2f);
    let variance = pooled * (1.0 - pooled) * (1.0 / n1f + 1.0 / n2f);
    if variance <= 0.0 {
        return None;
    }
    let z = (x1 as f64 / n1f - x2 as f64 / n2f) / variance.sqrt();
    let normal = Normal::standard();
    Some((z, 2.0 * normal.sf(z.abs())))
}

/// Fisher's exact test on the 2×2 table [[a, b], [c, d]], two-sided: the probability, under the
/// hypergeometric law with the table's margins, of every table as or less likely than the one seen.
pub fn fisher_exact_two_sided(a: u64, b: u64, c: u64, d: u64) -> f64 {
    let row1 = a + b;
    let col1 = a + c;
    let total = a + b + c + d;
    let low = col1.saturating_sub(total - row1);
    let high = row1.min(col1);
    let ln_denominator = ln_binomial(total, col1);
    let ln_p = |k: u64| ln_binomial(row1, k) + ln_binomial(total - row1, col1 - k) - ln_denominator;
    let observed = ln_p(a);
    // Tables within a relative 1e-7 of the observed probability count as equally likely.
    let limit = observed + (1.0f64 + 1e-7).ln();
    let p: f64 = (low..=high)
        .map(ln_p)
        .filter(|&lp| lp <= limit)
        .map(f64::exp)
        .sum();
    p.min(1.0)
}

/// Spearman's rank correlation: Pearson's correlation of the ranks, ties given their mean rank.
/// `None` with fewer than two pairs or when either side has no spread.
pub fn spearman(a: &[f64], b: &[f64]) -> Option<f64> {
    if a.len() != b.len() || a.len() < 2 {
        return None;
    }
    let ranks = |x: &[f64]| -> Vec<f64> {
        x.iter()
            .map(|v| {
                let below = x.iter().filter(|w| *w < v).count() as f64;
                let equal = x.iter().filter(|w| *w == v).count() as f64;
                below + (equal + 1.0) / 2.0
            })
            .collect()
    };
    let (ra, rb) = (ranks(a), ranks(b));
    let mean = |r: &[f64]| r.iter().sum::<f64>() / r.len() as f64;
    let (ma, mb) = (mean(&ra), mean(&rb));
    let cov: f64 = ra.iter().zip(&rb).map(|(x, y)| (x - ma) * (y - mb)).sum();
    let va: f64 = ra.iter().map(|x| (x - ma).powi(2)).sum();
    let vb: f64 = rb.iter().map(|y| (y - mb).powi(2)).sum();
    (va > 0.0 && vb > 0.0).then(|| cov / (va * vb).sqrt())
}

/// Builds an [`Estimate`] from per-trial values with a t-interval at `confidence`.
///
/// The trials are repeated random train/test splits of the same rows, so they overlap and their
/// spread understates the uncertainty. The variance is therefore inflated by the corrected
/// resampled t-test factor of Nadeau and Bengio (2003), `1/J + n_test/n_train` in place of `1/J`
/// (`test_to_train` is n_test / n_train; pass 0 for independent samples).
pub fn estimate(
    values: &[f64],
    confidence: f64,
    test_to_train: f64,
    ideal: Option<f64>,
) -> Option<Estimate> {
    let n = values.len();
    if n == 0 {
        return None;
    }
    let mean = values.iter().sum::<f64>() / n as f64;
    if n < 2 {
        return Some(Estimate {
            mean,
            low: None,
            high: None,
            std_dev: None,
            trials: n,
            p_value: None,
        });
    }
    let variance = values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n - 1) as f64;
    let std_dev = variance.sqrt();
    let standard_error = (variance * (1.0 / n as f64 + test_to_train)).sqrt();
    let t = StudentsT::new(0.0, 1.0, (n - 1) as f64).ok()?;
    let quantile = t.inverse_cdf(0.5 + confidence / 2.0);
    let p_value = ideal.map(|ideal| {
        if standard_error > 0.0 {
            2.0 * t.sf(((mean - ideal) / standard_error).abs())
        } else if (mean - ideal).abs() < 1e-12 {
            1.0
        } else {
            0.0
        }
    });
    Some(Estimate {
        mean,
        low: Some(mean - quantile * standard_error),
        high: Some(mean + quantile * standard_error),
        std_dev: Some(std_dev),
        trials: n,
        p_value,
    })
}

/// Fewest finite draws a bootstrap interval is read from.
pub const MIN_DRAWS: usize = 10;

/// A change read from bootstrap draws around its fitted value `point`, in one calculation: the
/// percentile interval at `confidence` (linear interpolation between sorted draws), widened to
/// reach the point where the point lies beyond it (`widened_to_point` says so); the p-value is
/// that interval inverted, the smallest 1 − confidence at which it leaves zero out, so that the
/// interval and the p-value can never disagree; the chance of a rise is the share of the same
/// interpolated distribution above zero. Fewer than [`MIN_DRAWS`] draws give the point alone.
pub fn bootstrap_change(point: f64, draws: Vec<f64>, confidence: f64) -> crate::report::Change {
    use crate::stats::curve::quantile_sorted;
    let mut change = crate::report::Change {
        mean: point,
        low: None,
        high: None,
        p_value: None,
        chance_positive: None,
        widened_to_point: false,
    };
    let mut draws: Vec<f64> = draws.into_iter().filter(|d| d.is_finite()).collect();
    if draws.len() < MIN_DRAWS {
        return change;
    }
    draws.sort_by(f64::total_cmp);
    let last = (draws.len() - 1) as f64;
    // The share at which the interpolated draws cross zero: the largest q with Q(q) <= 0, and
    // the smallest with Q(q) >= 0 (they differ where draws sit exactly on zero).
    let up_to_zero = if draws[0] > 0.0 {
        0.0
    } else if let Some(i) = draws
        .iter()
        .rposition(|&d| d <= 0.0)
        .filter(|&i| i + 1 < draws.len())
    {
        (i as f64 - draws[i] / (draws[i + 1] - draws[i])) / last
    } else {
        1.0
    };
    let from_zero = if draws[draws.len() - 1] < 0.0 {
        1.0
    } else if let Some(i) = draws.iter().position(|&d| d >= 0.0).filter(|&i| i > 0) {
        ((i - 1) as f64 - draws[i - 1] / (draws[i] - draws[i - 1])) / last
    } else {
        0.0
    };
    let tail = (1.0 - confidence) / 2.0;
    let (low, high) = (
        quantile_sorted(&draws, tail),
        quantile_sorted(&draws, 1.0 - tail),
    );
    change.widened_to_point = point < low || point > high;
    change.low = Some(low.min(point));
    change.high = Some(high.max(point));
    change.p_value = Some(if point > 0.0 {
        (2.0 * up_to_zero).min(1.0)
    } else if point < 0.0 {
        (2.0 * (1.0 - from_zero)).min(1.0)
    } else {
        1.0
    });
    change.chance_positive = Some(1.0 - up_to_zero);
    change
}

/// One-way analysis of variance across groups of values: (F, p). `None` with fewer than two
/// groups, too few values, or no variance within groups.
pub fn one_way_anova(groups: &[Vec<f64>]) -> Option<(f64, f64)> {
    let k = groups.iter().filter(|g| !g.is_empty()).count();
    let n: usize = groups.iter().map(Vec::len).sum();
    if k < 2 || n <= k {
        return None;
    }
    let grand = groups.iter().flatten().sum::<f64>() / n as f64;
    let mut between = 0.0;
    let mut within = 0.0;
    for g in groups.iter().filter(|g| !g.is_empty()) {
        let mean = g.iter().sum::<f64>() / g.len() as f64;
        between += g.len() as f64 * (mean - grand).powi(2);
        within += g.iter().map(|v| (v - mean).powi(2)).sum::<f64>();
    }
    let (df1, df2) = ((k - 1) as f64, (n - k) as f64);
    if within <= 0.0 {
        return None;
    }
    let f = (between / df1) / (within / df2);
    let dist = FisherSnedecor::new(df1, df2).ok()?;
    Some((f, dist.sf(f)))
}

/// Pearson's chi-square test of independence on a table of counts (no continuity correction):
/// (statistic, degrees of freedom, p). Columns with no counts are left out.
pub fn chi_square_independence(table: &[Vec<u64>]) -> Option<(f64, usize, f64)> {
    let rows = table.len();
    let columns = table.first()?.len();
    let row_totals: Vec<f64> = table.iter().map(|r| r.iter().sum::<u64>() as f64).collect();
    let column_totals: Vec<f64> = (0..columns)
        .map(|c| table.iter().map(|r| r[c]).sum::<u64>() as f64)
        .collect();
    let total: f64 = row_totals.iter().sum();
    let used: Vec<usize> = (0..columns).filter(|&c| column_totals[c] > 0.0).collect();
    if rows < 2 || used.len() < 2 || row_totals.contains(&0.0) {
        return None;
    }
    let mut statistic = 0.0;
    for (r, row) in table.iter().enumerate() {
        for &c in &used {
            let expected = row_totals[r] * column_totals[c] / total;
            statistic += (row[c] as f64 - expected).powi(2) / expected;
        }
    }
    let df = (rows - 1) * (used.len() - 1);
    let dist = ChiSquared::new(df as f64).ok()?;
    Some((statistic, df, dist.sf(statistic)))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn close(a: f64, b: f64, tolerance: f64) -> bool {
        (a - b).abs() <= tolerance
    }

    #[test]
    fn four_fifths_worked_example_of_the_uniform_guidelines() {
        // Selection rates 60%, 45%, 48%, 51%: ratios 0.75, 0.80, 0.85 to the 60% group. Source:
        // the 1979 Questions and Answers on the Uniform Guidelines on Employee Selection
        // Procedures (the rates are from memory); the rule is 29 CFR 1607.4(D): adverse impact
        // when the rate is *less than* four-fifths, so 0.80 is not flagged.
        let selected = [60, 45, 48, 51];
        let totals = [100, 100, 100, 100];
        let findings = four_fifths(&selected, &totals);
        let ratios: Vec<f64> = findings.iter().map(|f| f.impact_ratio).collect();
        assert!(close(ratios[0], 1.0, 1e-12));
        assert!(close(ratios[1], 0.75, 1e-12));
        assert!(close(ratios[2], 0.80, 1e-12));
        assert!(close(ratios[3], 0.85, 1e-12));
        let flagged: Vec<bool> = findings.iter().map(|f| f.adverse_impact).collect();
        assert_eq!(flagged, vec![false, true, false, false]);
    }

    #[test]
    fn exactly_four_fifths_is_not_flagged_but_one_person_would_flip_it() {
        // 29 CFR 1607.4(D): "less than four-fifths"; 8/10 against 10/10 is exactly 0.8.
        let findings = four_fifths(&[10, 8], &[10, 10]);
        assert!(!findings[1].adverse_impact);
        assert!(findings[1].one_person_flips, "7/10 = 0.7 would be flagged");
    }

    #[test]
    fn z_test_matches_statsmodels() {
        // statsmodels 0.15.0, proportions_ztest([45, 60], [100, 100]) (pooled):
        // z = -2.1239769762143657, p = 0.033672068856345855 (tests/reference/reference.py).
        let (z, p) = two_proportion_z_test(45, 100, 60, 100).unwrap();
        assert!(close(z, -2.1239769762143657, 1e-9), "{z}");
        assert!(close(p, 0.033672068856345855, 1e-9), "{p}");
    }

    #[test]
    fn spearman_matches_scipy_with_ties() {
        // scipy 1.17.1, scipy.stats.spearmanr([0.1, 0.4, 0.4, 0.2, -0.3, 0.9], [1, 3, 2, 2, 0, 5])
        // .statistic = 0.9558823529411764 (tests/reference/reference.py).
        let rho = spearman(
            &[0.1, 0.4, 0.4, 0.2, -0.3, 0.9],
            &[1.0, 3.0, 2.0, 2.0, 0.0, 5.0],
        );
        assert!(close(rho.unwrap(), 0.9558823529411764, 1e-12));
        assert_eq!(spearman(&[1.0, 1.0], &[1.0, 2.0]), None, "no spread");
    }

    #[test]
    fn fisher_exact_matches_scipy() {
        // scipy 1.17.1, scipy.stats.fisher_exact([[3, 7], [9, 2]]).pvalue = 0.02997312285237981
        // and fisher_exact([[8, 2], [1, 5]]).pvalue = 0.034965034965034975
        // (tests/reference/reference.py).
        assert!(close(
            fisher_exact_two_sided(3, 7, 9, 2),
            0.02997312285237981,
            1e-10
        ));
        assert!(close(
            fisher_exact_two_sided(8, 2, 1, 5),
            0.034965034965034975,
            1e-10
        ));
        // A table with no association gives p = 1.
        assert!(close(fisher_exact_two_sided(5, 5, 5, 5), 1.0, 1e-12));
    }

    #[test]
    fn auc_matches_scikit_learn_with_ties() {
        // scikit-learn 1.9.1, roc_auc_score(y, s) on the values below = 0.8
        // (tests/reference/reference.py).
        let labels = [
            true, false, true, true, false, false, true, false, true, false,
        ];
        let scores = [0.9, 0.8, 0.8, 0.6, 0.5, 0.4, 0.4, 0.3, 0.7, 0.1];
        let auc = area_under_curve(&labels, &scores).unwrap();
        assert!(close(auc, 0.8, 1e-12), "{auc}");
    }

    #[test]
    fn rates_and_disparities_from_counts() {
        // Worked by hand: u selects 2 of 4 (TPR 1/2, FPR 1/2), r selects 3 of 4 (TPR 1, FPR 1/2).
        let labels = [true, true, false, false, true, true, false, false];
        let predicted = [true, false, true, false, true, true, true, false];
        let groups = [1, 1, 1, 1, 0, 0, 0, 0];
        let counts = group_counts(&labels, &predicted, &groups, 2);
        use crate::report::FairnessMeasure as M;
        let d = |m: M| m.value(&counts[1], &counts[0]).unwrap();
        assert!(close(d(M::Spd), -0.25, 1e-12));
        assert!(close(d(M::Di), 2.0 / 3.0, 1e-12));
        assert!(close(d(M::Eod), -0.5, 1e-12));
        assert!(close(d(M::Aod), -0.25, 1e-12));
        // 5 of 8 right; TPR 3/4 and TNR 2/4 overall.
        assert!(close(accuracy(&labels, &predicted), 0.625, 1e-12));
        assert!(close(
            balanced_accuracy(&labels, &predicted).unwrap(),
            0.625,
            1e-12
        ));
    }

    #[test]
    fn t_interval_matches_scipy_quantile() {
        // scipy 1.17.1, scipy.stats.t.ppf(0.95, 4) = 2.1318467863266495 (tests/reference/reference.py).
        let values = [1.0, 2.0, 3.0, 4.0, 5.0];
        let e = estimate(&values, 0.9, 0.0, Some(0.0)).unwrap();
        let half = 2.1318467863266495 * (2.5f64 / 5.0).sqrt();
        assert!(close(e.high.unwrap() - e.mean, half, 1e-9));
        // scipy 1.17.1, scipy.stats.ttest_1samp([1,2,3,4,5], 0).pvalue = 0.01323559956368269.
        assert!(close(e.p_value.unwrap(), 0.01323559956368269, 1e-9));
    }

    #[test]
    fn bootstrap_interval_and_p_are_one_calculation() {
        // numpy 2.4.6: numpy.quantile(d, 0.05) = -0.019799999999999998, numpy.quantile(d, 0.95)
        // = 0.04609999999999999; scipy 1.17.1 brentq on numpy.quantile(d, q) = 0 gives
        // q = 0.2272727272727273, so the inverted p is 0.4545454545454546.
        let d = vec![
            -0.031, 0.012, 0.044, -0.007, 0.025, 0.051, 0.018, -0.015, 0.033, 0.009, 0.027, 0.040,
            -0.002, 0.021, 0.036,
        ];
        let c = bootstrap_change(0.02, d.clone(), 0.9);
        assert!(close(c.low.unwrap(), -0.019799999999999998, 1e-12));
        assert!(close(c.high.unwrap(), 0.04609999999999999, 1e-12));
        assert!(close(c.p_value.unwrap(), 0.4545454545454546, 1e-12));
        assert!(close(
            c.chance_positive.unwrap(),
            1.0 - 0.2272727272727273,
            1e-12
        ));
        assert!(!c.widened_to_point);
        // A fit beyond its draws: the interval reaches it and says so.
        let c = bootstrap_change(0.09, d, 0.9);
        assert_eq!(c.high, Some(0.09));
        assert!(c.widened_to_point);
        // Constructed draws, no source needed: at every confidence, the p-value is below
        // 1 - confidence exactly when the interval leaves zero out, ties on zero included.
        use rand::{Rng, SeedableRng};
        let mut rng = rand::rngs::StdRng::seed_from_u64(7);
        for case in 0..400 {
            let shift = rng.gen_range(-0.05..0.05);
            let draws: Vec<f64> = (0..10 + case % 50)
                .map(|_| {
                    let v: f64 = rng.gen_range(-0.1..0.1) + shift;
                    if case % 7 == 0 {
                        (v * 20.0).round() / 20.0
                    } else {
                        v
                    }
                })
                .collect();
            let point = if case % 11 == 0 {
                0.0
            } else {
                shift + rng.gen_range(-0.08..0.08)
            };
            for confidence in [0.5, 0.8, 0.9, 0.95] {
                let c = bootstrap_change(point, draws.clone(), confidence);
                let (low, high) = (c.low.unwrap(), c.high.unwrap());
                assert!(low <= point && point <= high);
                let excludes = low > 0.0 || high < 0.0;
                let p = c.p_value.unwrap();
                let margin = (p - (1.0 - confidence)).abs();
                if margin > 1e-9 {
                    assert_eq!(
                        excludes,
                        p < 1.0 - confidence,
                        "case {case}, p {p}, [{low}, {high}]"
                    );
                }
            }
        }
        assert_eq!(
            bootstrap_change(0.1, vec![0.1; 9], 0.9).low,
            None,
            "too few draws"
        );
    }

    #[test]
    fn anova_and_chi_square_match_scipy() {
        // scipy 1.17.1 (tests/reference/reference.py): f_oneway(g1, g2, g3): F = 6.971428571428571, p = 0.014831242580448382.
        let groups = vec![
            vec![0.01, 0.02, 0.015, 0.03],
            vec![0.02, 0.025, 0.03, 0.04],
            vec![0.05, 0.03, 0.045, 0.04],
        ];
        let (f, p) = one_way_anova(&groups).unwrap();
        assert!(close(f, 6.971428571428571, 1e-9));
        assert!(close(p, 0.014831242580448382, 1e-9));
        // chi2_contingency([[30, 70, 12, 28], [300, 560, 110, 290]], correction=False):
        // statistic 1.6754130992712295, p 0.6424137890405377, 3 degrees of freedom.
        let (x, df, p) =
            chi_square_independence(&[vec![30, 70, 12, 28], vec![300, 560, 110, 290]]).unwrap();
        assert!(close(x, 1.6754130992712295, 1e-9));
        assert_eq!(df, 3);
        assert!(close(p, 0.6424137890405377, 1e-9));
    }

    #[test]
    fn resampling_correction_widens_the_interval() {
        let values = [0.80, 0.82, 0.81, 0.79, 0.83];
        let plain = estimate(&values, 0.9, 0.0, None).unwrap();
        let corrected = estimate(&values, 0.9, 0.25, None).unwrap();
        let ratio = (corrected.high.unwrap() - corrected.mean) / (plain.high.unwrap() - plain.mean);
        // (1/5 + 1/4) / (1/5) = 2.25, so the half-width grows by 1.5.
        assert!(close(ratio, 1.5, 1e-12));
    }
}
