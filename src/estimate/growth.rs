//! What a bigger pilot of a feature would tell: the interval of the full-size gains and the
//! smallest effect told from zero expected at a few larger pilots; and for rows of one group,
//! what buying part of them first would tell about the whole purchase.

use crate::data::costs::CostOption;
use crate::report::{Change, ExpectedGain, FirstPart, GrownPilot, PilotGrowth, Purchase};

/// The larger pilots reported, as multiples of the pilot's rows (each capped at the most the
/// pilot can have, which is always reported when the pilot is smaller).
const GROWTH_FACTORS: [usize; 2] = [2, 4];

/// The headline's interval scaled to pilots of 2x, 4x and the most the pilot can have
/// (`most_rows`: every row held, or the sheet's `pilot_max_rows`). Each
/// side is split into the part the pilot's measured difference gives (`anchor`, the same
/// purchase read off the last anchor alone) and the part the extrapolation adds (the rest, in
/// quadrature). The first falls as 1/√m with the pilot's rows, the law of a mean's sampling
/// error (both the test rows a difference is counted on and the training rows its models are
/// fitted on grow with the pilot); the second also with the distance in log size left to carry
/// the difference, ln(today's training rows / the pilot's), so a pilot of every row extrapolates
/// nothing. `pilot_training` and `today_training` are a trial's training rows on the pilot and
/// on today's data.
pub(super) fn pilot_growth(
    pilot_rows: usize,
    (pilot_training, today_training): (f64, f64),
    most_rows: usize,
    headline: &Purchase,
    anchor: &Purchase,
) -> PilotGrowth {
    let mut sizes: Vec<usize> = GROWTH_FACTORS
        .iter()
        .map(|&f| (pilot_rows * f).min(most_rows))
        .chain(std::iter::once(most_rows))
        .filter(|&m| m > pilot_rows)
        .collect();
    sizes.dedup();
    let distance = |training: f64| (today_training / training).ln().max(0.0);
    let distance_now = distance(pilot_training);
    let grown = sizes
        .into_iter()
        .map(|rows| {
            let ratio = rows as f64 / pilot_rows.max(1) as f64;
            let carried = if distance_now > 0.0 {
                distance(pilot_training * ratio) / distance_now
            } else {
                0.0
            };
            let scale = Scale { ratio, carried };
            GrownPilot {
                rows,
                training_rows: (pilot_training * ratio).round() as usize,
                accuracy_gain: scale.expected(&headline.accuracy_gain, &anchor.accuracy_gain),
                unfairness_reduction: scale
                    .expected(&headline.unfairness_reduction, &anchor.unfairness_reduction),
                utility: scale.expected(&headline.utility, &anchor.utility),
            }
        })
        .collect();
    PilotGrowth { sizes: grown }
}

/// Rows of one group bought in two parts ([`FirstPart`]): at the option's steps nearest above
/// a quarter and a half of its rows (below all of them), the headline's interval once the first
/// part is bought and measured. `group_training(delta)` is the group's training rows in a trial
/// after `delta` new rows; `measured` holds, for each gain, a change measured between the group
/// curve's last two anchors, whose interval gives the part of each side a measured change keeps.
pub(super) fn first_parts(
    option: &CostOption,
    steps: &[Purchase],
    group_training: impl Fn(usize) -> f64,
    measured: &Purchase,
) -> Vec<FirstPart> {
    let (Some(headline), Some(&most)) = (steps.last(), option.row_steps().last()) else {
        return Vec::new();
    };
    let offered = option.row_steps();
    let mut parts: Vec<usize> = [0.25, 0.5]
        .iter()
        .filter_map(|share| {
            let target = most as f64 * share;
            offered
                .iter()
                .copied()
                .find(|&s| s as f64 >= target && s < most)
        })
        .collect();
    parts.dedup();
    let (now, all) = (group_training(0), group_training(most));
    let distance = |from: f64| (all / from).ln().max(0.0);
    parts
        .into_iter()
        .map(|rows| {
            let after = group_training(rows);
            let scale = Scale {
                ratio: 1.0,
                carried: if distance(now) > 0.0 {
                    distance(after) / distance(now)
                } else {
                    0.0
                },
            };
            FirstPart {
                rows,
                cost: option.rows_cost(rows),
                group_training_rows: after.round() as usize,
                accuracy_gain: scale.expected(&headline.accuracy_gain, &measured.accuracy_gain),
                unfairness_reduction: scale.expected(
                    &headline.unfairness_reduction,
                    &measured.unfairness_reduction,
                ),
                utility: scale.expected(&headline.utility, &measured.utility),
            }
        })
        .collect()
}

/// How a larger pilot scales an interval: `ratio` times the rows, and `carried`, the share of
/// today's log distance still to be extrapolated.
struct Scale {
    ratio: f64,
    carried: f64,
}

impl Scale {
    /// One side of the interval: its measured part √(a²/ratio) and its extrapolated part
    /// √((h² − a²)/ratio)·carried, added in quadrature.
    fn side(&self, headline: f64, anchor: f64) -> f64 {
        let measured = anchor.min(headline).max(0.0);
        let extrapolated = (headline * headline - measured * measured).max(0.0);
        ((measured * measured + extrapolated * self.carried * self.carried) / self.ratio).sqrt()
    }

    /// The headline change's interval as expected at the larger pilot, about the same point;
    /// the smallest effect told from zero is the mean of its two sides. `None` where the
    /// headline has no interval (not measured, or too few draws); an anchor without one counts
    /// the whole side as measured.
    fn expected(&self, headline: &Change, anchor: &Change) -> Option<ExpectedGain> {
        let (low, high) = (headline.low?, headline.high?);
        if !headline.is_measured() {
            return None;
        }
        let point = headline.mean;
        let (h_down, h_up) = (point - low, high - point);
        let (a_down, a_up) = match (anchor.low, anchor.high) {
            (Some(l), Some(h)) if anchor.is_measured() => (anchor.mean - l, h - anchor.mean),
            _ => (h_down, h_up),
        };
        let (down, up) = (self.side(h_down, a_down), self.side(h_up, a_up));
        Some(ExpectedGain {
            low: point - down,
            high: point + up,
            detectable: (down + up) / 2.0,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn change(mean: f64, low: f64, high: f64) -> Change {
        Change {
            mean,
            low: Some(low),
            high: Some(high),
            p_value: Some(0.01),
            chance_positive: Some(1.0),
            widened_to_point: false,
        }
    }

    #[test]
    fn the_measured_part_narrows_as_one_over_root_n_and_the_extrapolated_with_the_distance() {
        // Worked by hand. All measured (anchor = headline): a pilot 4 times larger halves each
        // side, 0.02 and 0.04 about 0.05 become 0.01 and 0.02; detectable (0.01 + 0.02)/2.
        let whole = Scale {
            ratio: 4.0,
            carried: 0.5,
        };
        let h = change(0.05, 0.03, 0.09);
        let e = whole.expected(&h, &h).unwrap();
        assert!((e.low - 0.04).abs() < 1e-12 && (e.high - 0.07).abs() < 1e-12);
        assert!((e.detectable - 0.015).abs() < 1e-12);
        // Side 0.05 of which 0.03 measured: extrapolated √(0.05² − 0.03²) = 0.04; at 4x with
        // half the distance left: √((0.03² + 0.04² × 0.25) / 4) = √(0.0013 / 4) = 0.018028.
        let e = whole
            .expected(&change(0.10, 0.05, 0.15), &change(0.09, 0.06, 0.12))
            .unwrap();
        let side = (0.0013f64 / 4.0).sqrt();
        assert!((e.low - (0.10 - side)).abs() < 1e-12 && (e.high - (0.10 + side)).abs() < 1e-12);
        assert!(whole.expected(&Change::not_measured(), &h).is_none());
    }

    #[test]
    fn a_first_part_keeps_the_measured_noise_and_narrows_the_rest_with_the_distance_left() {
        // Worked by hand. 1,000 rows of one group on offer in steps of 250 at 2 a row and 100
        // fixed; the group's training rows today 300, so 300 × (1,000 + d)/1,000 after d rows:
        // 375 after the first quarter, 450 after half, 600 after all. Log distance left after
        // 250: ln(600/375) / ln(600/300) = ln 1.6 / ln 2.
        let option = CostOption {
            name: "more".into(),
            acquisition: crate::report::Acquisition::Rows {
                filter: Some(("g".into(), "b".into())),
            },
            per_row: 2.0,
            fixed: 100.0,
            max_rows: Some(1000),
            step: Some(250),
            sensitive: false,
            note: String::new(),
            pilot: Default::default(),
        };
        let mut headline = crate::estimate::score::empty_purchase();
        headline.accuracy_gain = change(0.02, 0.0, 0.05);
        headline.unfairness_reduction = Change::not_measured();
        let mut measured = crate::estimate::score::empty_purchase();
        measured.accuracy_gain = change(0.01, 0.0, 0.02);
        let parts = first_parts(
            &option,
            &[headline],
            |d| 300.0 * (1000 + d) as f64 / 1000.0,
            &measured,
        );
        let rows: Vec<usize> = parts.iter().map(|p| p.rows).collect();
        assert_eq!(rows, [250, 500]);
        assert_eq!((parts[0].cost, parts[0].group_training_rows), (600.0, 375));
        // Down side 0.02, of which 0.01 a measured change keeps: √(0.01² + (0.02² − 0.01²)c²);
        // up side 0.03: √(0.01² + (0.03² − 0.01²)c²).
        let c = 1.6f64.ln() / 2f64.ln();
        let e = parts[0].accuracy_gain.clone().unwrap();
        let down = (0.0001 + 0.0003 * c * c).sqrt();
        let up = (0.0001 + 0.0008 * c * c).sqrt();
        assert!((e.low - (0.02 - down)).abs() < 1e-12 && (e.high - (0.02 + up)).abs() < 1e-12);
        // After half: ln(600/450)/ln 2 of the distance left, narrower still.
        assert!(parts[1].accuracy_gain.clone().unwrap().high < e.high);
        assert!(parts[0].unfairness_reduction.is_none());
        // Sold in one lot: no first part.
        let one_lot = CostOption {
            step: None,
            ..option
        };
        assert!(first_parts(
            &one_lot,
            &[crate::estimate::score::empty_purchase()],
            |d| d as f64,
            &measured
        )
        .is_empty());
    }

    #[test]
    fn the_larger_pilots_are_two_and_four_times_and_every_row() {
        let mut p = crate::estimate::score::empty_purchase();
        p.accuracy_gain = change(0.05, 0.03, 0.09);
        let grown = |pilot: usize, all: usize| {
            let training = pilot as f64 * 0.7;
            pilot_growth(pilot, (training, all as f64 * 0.7), all, &p, &p)
        };
        let rows: Vec<usize> = grown(600, 3000).sizes.iter().map(|s| s.rows).collect();
        assert_eq!(rows, [1200, 2400, 3000]);
        assert_eq!(grown(600, 3000).sizes[0].training_rows, 840);
        // Capped at every row held, without repeats; nothing larger than all rows.
        let rows: Vec<usize> = grown(1000, 3000).sizes.iter().map(|s| s.rows).collect();
        assert_eq!(rows, [2000, 3000]);
        assert!(grown(3000, 3000).sizes.is_empty());
        // Every row held, 5 times the pilot, all measured: sides times 1/√5.
        let last = grown(600, 3000).sizes[2].accuracy_gain.clone().unwrap();
        assert!((last.low - (0.05 - 0.02 / 5f64.sqrt())).abs() < 1e-12);
    }
}
