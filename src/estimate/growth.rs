//! What a bigger pilot of a feature would tell: the interval of the full-size gains and the
//! smallest effect told from zero expected at a few larger pilots.

use crate::report::{Change, ExpectedGain, GrownPilot, PilotGrowth, Purchase};

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
