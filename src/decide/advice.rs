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
    AppraisalReport, Change, ExpectedGain, GrownPilot, OptionKind, PilotAdvice, PilotExtension,
    Plan, PlanRules, Purchase,
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
    let z = Normal::standard().inverse_cdf(0.5 + report.inputs.confidence / 2.0);
    let weights = (report.costs.weigh_accuracy, report.costs.weigh_fairness);
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
            let mut after_pilot = *rules;
            after_pilot.budget -= cost;
            let what_if = WhatIf {
                name: &value.name,
                moves: Moves::of(&value.estimate, grown, z, rules.cautious),
                weights,
                now,
            };
            let mut rng = stream_rng(report.inputs.seed, Stream::PilotAdvice(index), added as u64);
            let (gains, changed) = what_if.simulate(problem, &after_pilot, &mut rng);
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
        decision: decision(best.as_ref(), rules.cautious),
        grow_first: best,
        draws: ADVICE_DRAWS,
        extensions,
    }
}

/// How far a bigger pilot can move a feature's estimate: the spread of today's estimate less
/// the spread left after it (its estimate includes today's pilot rows), for accuracy and
/// unfairness; and, under --cautious, how much the narrower interval raises the utility's lower
/// end, which the planner then weighs.
struct Moves {
    accuracy: f64,
    /// `None` where the unfairness reduction is not measured (the utility weighs accuracy alone).
    fairness: Option<f64>,
    low_rises: f64,
}

impl Moves {
    fn of(estimate: &Purchase, grown: &GrownPilot, z: f64, cautious: bool) -> Moves {
        let spread = |now: &Change, then: &Option<ExpectedGain>| -> f64 {
            match (now.low, now.high, then) {
                (Some(l), Some(h), Some(t)) if now.is_measured() => {
                    let (s_now, s_then) = ((h - l) / (2.0 * z), (t.high - t.low) / (2.0 * z));
                    (s_now * s_now - s_then * s_then).max(0.0).sqrt()
                }
                _ => 0.0,
            }
        };
        let u = &estimate.utility;
        Moves {
            accuracy: spread(&estimate.accuracy_gain, &grown.accuracy_gain),
            fairness: estimate
                .unfairness_reduction
                .is_measured()
                .then(|| spread(&estimate.unfairness_reduction, &grown.unfairness_reduction)),
            low_rises: match (cautious, u.low, &grown.utility) {
                (true, Some(low), Some(then)) => (u.mean - low) - (u.mean - then.low),
                _ => 0.0,
            },
        }
    }
}

/// One feature's bigger pilot, drawn: its estimate moved, the plan solved again.
struct WhatIf<'a> {
    name: &'a str,
    moves: Moves,
    /// The utility's weights of accuracy and of unfairness reduction.
    weights: (f64, f64),
    /// The plan chosen now.
    now: &'a Plan,
}

impl WhatIf<'_> {
    /// [`ADVICE_DRAWS`] draws: each draw's gain of the plan solved under `rules` (the budget
    /// less the pilot's cost) over the plan chosen now, both valued on the draw; and how many
    /// draws changed the plan. `problem` is left as it was.
    fn simulate(
        &self,
        problem: &mut Problem,
        rules: &PlanRules,
        rng: &mut impl Rng,
    ) -> (Vec<f64>, usize) {
        let normal = Normal::standard();
        let original = problem.feature_values(self.name);
        let buys_it_now = self.now.items.iter().any(|i| i.option == self.name);
        let (mut gains, mut changed) = (Vec::with_capacity(ADVICE_DRAWS), 0usize);
        for _ in 0..ADVICE_DRAWS {
            let mut draw = || normal.inverse_cdf(rng.gen_range(1e-12..1.0 - 1e-12));
            let accuracy = self.moves.accuracy * draw();
            let fairness = self.moves.fairness.map_or(0.0, |s| s * draw());
            let shift = Value {
                accuracy,
                fairness,
                score: self.weights.0 * accuracy + self.weights.1 * fairness + self.moves.low_rises,
            };
            problem.set_feature_values(self.name, &original, shift);
            let after = problem.solve(rules);
            let now_then = self.now.score + if buys_it_now { shift.score } else { 0.0 };
            gains.push(after.score - now_then);
            changed += usize::from(!after.buys_the_same(self.now));
        }
        let none = Value {
            accuracy: 0.0,
            fairness: 0.0,
            score: 0.0,
        };
        problem.set_feature_values(self.name, &original, none);
        (gains, changed)
    }
}

/// The advice in words.
fn decision(best: Option<&PilotExtension>, cautious: bool) -> String {
    match best {
        Some(x) => format!(
            "first grow pilot '{}' by {} rows (cost {}): on the summed estimates, the chance that the best plan changes is {:.0}% and the expected gain in its {} {:+.4}",
            x.option,
            crate::report::thousands(x.added_rows),
            crate::report::money(x.cost),
            100.0 * x.chance_plan_changes,
            if cautious { "cautious utility" } else { "utility" },
            x.expected_gain
        ),
        None => "decide now: on the summed estimates, no bigger pilot on offer is expected to improve the best plan by more than it costs".into(),
    }
}
