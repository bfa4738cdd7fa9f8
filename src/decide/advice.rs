//! Decide now, or first grow a pilot? The expected value of sample information (Raiffa and
//! Schlaifer 1961, "Applied Statistical Decision Theory"), across pilot sizes as in Heath,
//! Manolopoulou and Baio (2018, Medical Decision Making): for each feature option with a pilot
//! and each larger pilot its appraisal reports, what the bigger pilot could show is drawn from
//! today's uncertainty, the plan is solved again with the money left after paying for it, and
//! the plan chosen after the bigger pilot is compared with the plan chosen now.

use super::problem::Problem;
use super::select::Value;
use crate::engine::streams::{stream_rng, Stream};
use crate::report::{
    AppraisalReport, Change, ExpectedGain, OptionKind, PilotAdvice, PilotExtension, Plan, PlanRules,
};
use rand::Rng;
use statrs::distribution::{ContinuousCDF, Normal};

/// Draws of what a bigger pilot could show, per extension.
pub const ADVICE_DRAWS: usize = 200;

/// The advice for a plan `now` (the best under the additive model, the one the draws re-solve)
/// on `problem`, built from `report`: every feature option with a pilot, at each larger pilot
/// its appraisal reports whose cost leaves some budget.
pub(super) fn advise(
    report: &AppraisalReport,
    problem: &mut Problem,
    rules: &PlanRules,
    now: &Plan,
) -> PilotAdvice {
    let confidence = report.inputs.confidence;
    let z = Normal::standard().inverse_cdf(0.5 + confidence / 2.0);
    let (weigh_accuracy, weigh_fairness) =
        (report.costs.weigh_accuracy, report.costs.weigh_fairness);
    let mut extensions = Vec::new();
    for (index, (value, option)) in report.options.iter().zip(&report.costs.options).enumerate() {
        let Some(pilot) = value
            .pilot
            .as_ref()
            .filter(|_| value.kind == OptionKind::Feature)
        else {
            continue;
        };
        for grown in &pilot.growth.sizes {
            let added = grown.rows - pilot.rows;
            let cost = option.pilot_cost(added);
            if cost >= rules.budget {
                continue;
            }
            // How far the estimate can move: the spread of today's estimate less the spread
            // left after the bigger pilot (its estimate includes today's pilot rows).
            let moves = |now: &Change, then: &Option<ExpectedGain>| -> f64 {
                match (now.low, now.high, then) {
                    (Some(l), Some(h), Some(t)) if now.is_measured() => {
                        let (s_now, s_then) = ((h - l) / (2.0 * z), (t.high - t.low) / (2.0 * z));
                        (s_now * s_now - s_then * s_then).max(0.0).sqrt()
                    }
                    _ => 0.0,
                }
            };
            let e = &value.estimate;
            let spread_accuracy = moves(&e.accuracy_gain, &grown.accuracy_gain);
            let spread_fairness = moves(&e.unfairness_reduction, &grown.unfairness_reduction);
            let fairness_counts = e.unfairness_reduction.is_measured();
            // Under --cautious the planner weighs the utility's lower end, which the bigger
            // pilot also moves up by narrowing the interval.
            let low_rises = match (rules.cautious, e.utility.low, &grown.utility) {
                (true, Some(low), Some(then)) => {
                    (e.utility.mean - low) - (e.utility.mean - then.low)
                }
                _ => 0.0,
            };
            let original = problem.feature_values(&value.name);
            let mut budget_left = *rules;
            budget_left.budget -= cost;
            let buys_it_now = now.items.iter().any(|i| i.option == value.name);
            let mut rng = stream_rng(report.inputs.seed, Stream::PilotAdvice(index), added as u64);
            let normal = Normal::standard();
            let (mut gains, mut changed) = (Vec::with_capacity(ADVICE_DRAWS), 0usize);
            for _ in 0..ADVICE_DRAWS {
                let mut draw = || normal.inverse_cdf(rng.gen_range(1e-12..1.0 - 1e-12));
                let accuracy = spread_accuracy * draw();
                let fairness = if fairness_counts {
                    spread_fairness * draw()
                } else {
                    0.0
                };
                let utility = weigh_accuracy * accuracy + weigh_fairness * fairness;
                let shift = Value {
                    accuracy,
                    fairness,
                    score: utility + low_rises,
                };
                problem.set_feature_values(&value.name, &original, shift);
                let after = problem.solve(&budget_left);
                let now_then = now.score + if buys_it_now { shift.score } else { 0.0 };
                gains.push(after.score - now_then);
                changed += usize::from(!after.buys_the_same(now));
            }
            problem.set_feature_values(
                &value.name,
                &original,
                Value {
                    accuracy: 0.0,
                    fairness: 0.0,
                    score: 0.0,
                },
            );
            let n = gains.len() as f64;
            let mean = gains.iter().sum::<f64>() / n;
            let sd = (gains.iter().map(|g| (g - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
            extensions.push(PilotExtension {
                option: value.name.clone(),
                pilot_rows: grown.rows,
                added_rows: added,
                cost,
                chance_plan_changes: changed as f64 / n,
                expected_gain: mean,
                standard_error: sd / n.sqrt(),
            });
        }
    }
    let best = extensions
        .iter()
        .filter(|x| x.expected_gain > 0.0 && x.expected_gain > 2.0 * x.standard_error)
        .max_by(|a, b| a.expected_gain.total_cmp(&b.expected_gain))
        .cloned();
    PilotAdvice {
        decision: match &best {
            Some(x) => format!(
                "first grow pilot '{}' by {} rows (cost {}): on the summed estimates, the chance that the best plan changes is {:.0}% and the expected gain in its {} {:+.4}",
                x.option,
                crate::report::thousands(x.added_rows),
                crate::report::money(x.cost),
                100.0 * x.chance_plan_changes,
                if rules.cautious { "cautious utility" } else { "utility" },
                x.expected_gain
            ),
            None => "decide now: on the summed estimates, no bigger pilot on offer is expected to improve the best plan by more than it costs".into(),
        },
        grow_first: best,
        draws: ADVICE_DRAWS,
        extensions,
    }
}
