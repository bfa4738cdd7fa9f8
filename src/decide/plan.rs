//! `acquest plan`: the appraisal, the best plan for the budget ([`Problem`]), the frontier of
//! best plans as the budget grows, and the best few plans re-scored with their options taken
//! together.

use super::problem::{measured_sum, Problem};
use super::select::four_fifths_hold;
use crate::error::Result;
use crate::report::money;
use crate::report::{
    AppraisalReport, Candidate, Change, FrontierPoint, JointScore, OptionKind, Plan, PlanItem,
    PlanRules, PlanSummary, Purchase,
};

/// Most points of the budget frontier.
pub const FRONTIER_POINTS: usize = 24;

/// Runs `acquest plan`: the appraisal, then the best plan for the budget and the frontier (at
/// the budgets `frontier_at`, or at round budgets when it is empty).
pub fn run(
    settings: &crate::settings::Settings,
    appraisal: &crate::settings::AppraisalSettings,
    rules: &PlanRules,
    frontier_at: &[f64],
    advise: bool,
    progress: crate::engine::trial::ProgressSink,
) -> Result<crate::report::PlanReport> {
    let (report, appraiser) =
        crate::estimate::appraise::run_with_options(settings, appraisal, progress)?;
    plan_on(report, rules, frontier_at, advise, &|picks| {
        appraiser.rescore(picks, progress)
    })
}

/// Plans on a saved appraisal: any budget and rules, in well under a second, since nothing is
/// measured. The candidates cannot be re-scored with their options together without the data,
/// so the plan is chosen on the additive model, and the report says so.
pub fn run_on_saved(
    report: AppraisalReport,
    rules: &PlanRules,
    frontier_at: &[f64],
    advise: bool,
) -> Result<crate::report::PlanReport> {
    if report.costs.options.len() != report.options.len() {
        return Err(crate::error::Error::Internal(
            "the saved appraisal does not list its cost sheet's options (written by an older acquest): run `acquest appraise` again".into(),
        ));
    }
    plan_on(report, rules, frontier_at, advise, &|_| {
        Ok(Err(
            "planned from a saved appraisal: plans are re-scored with their options together only when `acquest plan` runs on the data".into(),
        ))
    })
}

/// A joint re-scoring of a plan's picks (option, new rows): the score, or why there is none.
type Rescore<'a> =
    &'a dyn Fn(&[(String, usize)]) -> Result<std::result::Result<JointScore, String>>;

/// The plan for the budget on an appraisal: the additive best, the frontier, the best few plans
/// re-scored by `rescore`, the choice, and (with `advise`) the value of growing a pilot first.
fn plan_on(
    report: AppraisalReport,
    rules: &PlanRules,
    frontier_at: &[f64],
    advise: bool,
    rescore: Rescore,
) -> Result<crate::report::PlanReport> {
    let options = report.costs.options.clone();
    let mut problem = Problem::new(&report, &options, rules.cautious)?;
    let additive_best = problem.solve(rules);
    let pilot_advice =
        advise.then(|| super::advice::advise(&report, &mut problem, rules, &additive_best));
    let budgets = if frontier_at.is_empty() {
        round_budgets_of(&problem)
    } else {
        frontier_at.to_vec()
    };
    let frontier = frontier(&problem, rules, &budgets);

    // The best few plans under the additive model, re-scored with their options together;
    // the choice is made on the joint scores where every candidate has one.
    let mut pool: Vec<Plan> = vec![additive_best.clone()];
    pool.extend(
        frontier
            .iter()
            .map(|p| p.plan.clone())
            .filter(|p| p.total_cost <= rules.budget + 1e-9),
    );
    pool.sort_by(|a, b| {
        b.score
            .total_cmp(&a.score)
            .then(a.total_cost.total_cmp(&b.total_cost))
    });
    pool.dedup_by(|a, b| a.buys_the_same(b));
    pool.retain(|p| !p.items.is_empty());
    pool.truncate(RESCORED_PLANS);
    // The best plan without each of its features: a joint measurement can show that a
    // feature adds nothing beside the others, and the plan without it must then be on the
    // table (rows items stay, so the other items' values and costs are unchanged).
    for plan in without_each_feature(&additive_best) {
        if !plan.items.is_empty() && !pool.iter().any(|p| p.buys_the_same(&plan)) {
            pool.push(plan);
        }
    }
    let mut candidates = Vec::new();
    for plan in pool {
        let picks: Vec<(String, usize)> = plan
            .items
            .iter()
            .map(|i| (i.option.clone(), i.new_rows))
            .collect();
        let (joint, note) = match rescore(&picks)? {
            Ok(score) => (Some(score), None),
            Err(why) => (None, Some(why)),
        };
        candidates.push(Candidate { plan, joint, note });
    }
    let joint_value = |c: &Candidate| -> Option<f64> {
        let u = &c.joint.as_ref()?.utility;
        Some(if rules.cautious {
            u.low.unwrap_or(u.mean)
        } else {
            u.mean
        })
    };
    let all_joint = !candidates.is_empty()
        && candidates
            .iter()
            .all(|c| c.joint.is_some() || c.plan.scored_together());
    let (plan, chosen_by) = if all_joint {
        let best = candidates
            .iter()
            .max_by(|a, b| {
                let va = joint_value(a).unwrap_or(a.plan.score);
                let vb = joint_value(b).unwrap_or(b.plan.score);
                va.total_cmp(&vb)
                    .then(b.plan.total_cost.total_cmp(&a.plan.total_cost))
            })
            .map(|c| c.plan.clone())
            .unwrap_or_else(|| additive_best.clone());
        (
            best,
            "the joint scores of the best plans under the additive model".to_string(),
        )
    } else {
        (
            additive_best.clone(),
            "the additive model (not every candidate could be re-scored jointly)".to_string(),
        )
    };
    let explanation = if !plan.items.is_empty() {
        None
    } else {
        Some(match problem.cheapest() {
            _ if rules.no_adverse_impact && !four_fifths_hold(&problem.today_selection) => format!(
                "no plan within the budget of {} is expected to bring every group's selection rate to four-fifths of the highest (today: {})",
                money(rules.budget),
                report
                    .groups
                    .iter()
                    .zip(&problem.today_selection)
                    .map(|(g, r)| format!("{} {r:.3}", g.name))
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
            Some(cheapest) if cheapest > rules.budget => format!(
                "the budget of {} is below the cheapest purchase on offer ({}): nothing can be bought",
                money(rules.budget),
                money(cheapest)
            ),
            _ => "no purchase within the budget is expected to raise the utility (every option's estimated utility is zero or negative, or breaks a floor)".to_string(),
        })
    };
    let summary = summarise(&report, &plan, &candidates);
    // The advice weighs plans on the summed estimates; where the plan chosen on the joint
    // scores differs from the best on the sums, it says which plan it weighed.
    let mut pilot_advice = pilot_advice;
    if let Some(advice) = pilot_advice.as_mut() {
        if !plan.buys_the_same(&additive_best) {
            let weighed = if additive_best.items.is_empty() {
                "nothing".to_string()
            } else {
                additive_best
                    .items
                    .iter()
                    .map(|i| i.option.as_str())
                    .collect::<Vec<_>>()
                    .join(" + ")
            };
            advice.decision.push_str(&format!(
                " (the best plan on the summed estimates buys {weighed}; the plan chosen on the joint scores differs)"
            ));
        }
    }
    let mut warnings = report.warnings.clone();
    if problem.searches_cut_short.get() > 0 {
        warnings.push(format!(
            "{} of the planner's searches under the floors stopped after {} steps: their plans are the best found, not proven best (fewer options, or no floors, make the search exact)",
            problem.searches_cut_short.get(),
            super::select::NODE_LIMIT
        ));
    }
    if rules.no_adverse_impact {
        for option in &report.options {
            let unmeasured: Vec<&str> = option
                .estimate
                .groups
                .iter()
                .filter(|g| !g.selection_rate.is_measured())
                .map(|g| g.group.as_str())
                .collect();
            if !unmeasured.is_empty() {
                warnings.push(format!(
                    "option '{}' is left out of every plan under --no-adverse-impact: its effect on the selection rate of {} was not measured, so it cannot be shown to keep the floor",
                    option.name,
                    unmeasured
                        .iter()
                        .map(|g| format!("'{g}'"))
                        .collect::<Vec<_>>()
                        .join(", ")
                ));
            }
        }
    }
    for c in &candidates {
        if let Some(note) = &c.note {
            let warning = format!("a candidate plan was not re-scored jointly: {note}");
            if c.plan.items.len() > 1 && !warnings.contains(&warning) {
                warnings.push(warning);
            }
        }
    }
    Ok(crate::report::PlanReport {
        format: crate::report::FORMAT.into(),
        format_version: crate::report::FORMAT_VERSION,
        tool_version: env!("CARGO_PKG_VERSION").into(),
        command: "plan".into(),
        rules: *rules,
        gain_model: "sum of the options' gains; a feature bought with rows of any case is read at the plan's row count and paid for on the new rows too".into(),
        frontier,
        plan,
        chosen_by,
        summary,
        candidates,
        explanation,
        pilot_advice,
        cautions: report.cautions.clone(),
        appraisal: report,
        warnings,
    })
}

/// The plan with one of its feature items left out, for each feature item, its totals summed
/// again from the items that remain.
fn without_each_feature(plan: &Plan) -> Vec<Plan> {
    if plan.items.len() < 2 {
        return Vec::new();
    }
    (0..plan.items.len())
        .filter(|&k| plan.items[k].kind == OptionKind::Feature)
        .map(|k| {
            let items: Vec<PlanItem> = plan
                .items
                .iter()
                .enumerate()
                .filter(|&(j, _)| j != k)
                .map(|(_, i)| i.clone())
                .collect();
            Plan {
                total_cost: items.iter().map(|i| i.cost).sum(),
                accuracy_gain: items.iter().map(|i| i.accuracy_gain).sum(),
                unfairness_reduction: measured_sum(items.iter().map(|i| i.unfairness_reduction)),
                score: items.iter().map(|i| i.utility).sum(),
                items,
            }
        })
        .collect()
}

/// The plan as a whole: a plan of one option carries that option's estimate; a plan measured
/// with its options together carries the joint estimate; otherwise the options' estimates are
/// summed and their intervals combined as if independent (each side's half-width in quadrature),
/// the chance of a gain then read off a normal law with the combined spread.
fn summarise(
    report: &AppraisalReport,
    plan: &Plan,
    candidates: &[Candidate],
) -> Option<PlanSummary> {
    if plan.items.is_empty() {
        return None;
    }
    let confidence = report.inputs.confidence;
    let any_rows: usize = plan
        .items
        .iter()
        .filter(|i| i.kind == OptionKind::Rows)
        .map(|i| i.new_rows)
        .sum();
    let purchase_of = |item: &PlanItem| -> Option<&Purchase> {
        let option = report.options.iter().find(|o| o.name == item.option)?;
        let rows = if item.kind == OptionKind::Feature {
            any_rows
        } else {
            item.new_rows
        };
        option
            .steps
            .iter()
            .filter(|s| s.new_rows <= rows)
            .max_by_key(|s| s.new_rows)
            .or(Some(&option.estimate))
    };
    let flags: Vec<String> = plan
        .items
        .iter()
        .filter_map(|i| report.options.iter().find(|o| o.name == i.option))
        .flat_map(|o| o.flags.iter().map(move |f| format!("{}: {f}", o.name)))
        .collect();
    let joint = candidates
        .iter()
        .find(|c| c.plan.buys_the_same(plan))
        .and_then(|c| c.joint.as_ref());
    let (accuracy_gain, unfairness_reduction, utility, source) = match (joint, &plan.items[..]) {
        (Some(j), _) => (
            j.accuracy_gain.clone(),
            j.unfairness_reduction.clone(),
            j.utility.clone(),
            "joint",
        ),
        (None, [item]) => {
            let p = purchase_of(item)?;
            (
                p.accuracy_gain.clone(),
                p.unfairness_reduction.clone(),
                p.utility.clone(),
                "option",
            )
        }
        (None, items) => {
            let purchases: Vec<&Purchase> = items.iter().filter_map(purchase_of).collect();
            let sum = |f: fn(&Purchase) -> &Change| {
                summed(
                    &purchases.iter().map(|p| f(p)).collect::<Vec<_>>(),
                    confidence,
                )
            };
            (
                sum(|p| &p.accuracy_gain),
                sum(|p| &p.unfairness_reduction),
                sum(|p| &p.utility),
                "summed",
            )
        }
    };
    Some(PlanSummary {
        differs_from_zero: utility.differs_from_zero(confidence),
        accuracy_gain,
        unfairness_reduction,
        utility,
        source: source.into(),
        flags,
    })
}

/// Changes added as if independent: means summed, each side's distance from the mean added in
/// quadrature; the p-value and the chance of a positive sum from a normal law whose spread is
/// the combined interval's side towards zero over the normal quantile of the confidence, so
/// that an interval holding zero never comes with a chance beyond the confidence's tail.
fn summed(changes: &[&Change], confidence: f64) -> Change {
    use statrs::distribution::{ContinuousCDF, Normal};
    // What was not measured is left out of the sum (the plan's flags name it).
    let changes: Vec<&Change> = changes
        .iter()
        .copied()
        .filter(|c| c.is_measured())
        .collect();
    if changes.is_empty() {
        return Change::not_measured();
    }
    let mean: f64 = changes.iter().map(|c| c.mean).sum();
    let side = |f: fn(&Change) -> Option<f64>| -> Option<f64> {
        let mut total = 0.0;
        for c in &changes {
            total += (f(c)? - c.mean).powi(2);
        }
        Some(total.sqrt())
    };
    let below = side(|c| c.low);
    let above = side(|c| c.high);
    let (low, high) = match (below, above) {
        (Some(b), Some(a)) => (Some(mean - b), Some(mean + a)),
        _ => (None, None),
    };
    let normal = Normal::new(0.0, 1.0).expect("the standard normal");
    let z = normal.inverse_cdf(0.5 + confidence / 2.0);
    let towards_zero = if mean >= 0.0 { below } else { above };
    let spread = towards_zero.filter(|&d| d > 0.0).map(|d| d / z);
    Change {
        mean,
        low,
        high,
        p_value: spread.map(|s| 2.0 * normal.cdf(-(mean.abs() / s))),
        chance_positive: spread.map(|s| normal.cdf(mean / s)),
        widened_to_point: changes.iter().any(|c| c.widened_to_point),
    }
}

/// Plans re-scored jointly, besides the best plan without each of its features.
pub const RESCORED_PLANS: usize = 4;

/// The frontier's budgets when none are asked for: round ones from the cheapest purchase to
/// everything, at most [`FRONTIER_POINTS`].
pub fn round_budgets_of(problem: &Problem) -> Vec<f64> {
    match problem.cheapest() {
        Some(low) => round_budgets(low.max(1e-6), problem.everything(), FRONTIER_POINTS),
        None => Vec::new(),
    }
}

/// The best plan at each of `budgets`.
pub fn frontier(problem: &Problem, rules: &PlanRules, budgets: &[f64]) -> Vec<FrontierPoint> {
    budgets
        .iter()
        .map(|&budget| FrontierPoint {
            budget,
            plan: problem.solve(&PlanRules { budget, ..*rules }),
        })
        .collect()
}

/// Round budgets from `low` (the cheapest purchase) to the first round budget that buys
/// everything (`high`), in the finest series that gives at most `most` of them: every integer
/// mantissa with quarters below 3, then 1-1.5-2-3-5-7, then 1-2-5 times a power of ten; the
/// 1-2-5 series thinned evenly (both ends kept) where even it gives more.
pub fn round_budgets(low: f64, high: f64, most: usize) -> Vec<f64> {
    let series = |mantissas: &[f64]| -> Vec<f64> {
        let mut budgets = Vec::new();
        let first = low.log10().floor() as i32;
        for k in first..first + 40 {
            for &m in mantissas {
                // Exact decimals for the powers below one as above.
                let b = if k >= 0 {
                    m * 10f64.powi(k)
                } else {
                    m / 10f64.powi(-k)
                };
                if b >= low * (1.0 - 1e-12) {
                    budgets.push(b);
                    if b >= high * (1.0 - 1e-12) {
                        return budgets;
                    }
                }
            }
        }
        budgets
    };
    let fine_to_coarse: [&[f64]; 3] = [
        &[
            1.0, 1.25, 1.5, 1.75, 2.0, 2.25, 2.5, 2.75, 3.0, 4.0, 5.0, 6.0, 7.0, 8.0, 9.0,
        ],
        &[1.0, 1.5, 2.0, 3.0, 5.0, 7.0],
        &[1.0, 2.0, 5.0],
    ];
    let mut budgets = Vec::new();
    for mantissas in fine_to_coarse {
        budgets = series(mantissas);
        if budgets.len() <= most {
            return budgets;
        }
    }
    if most < 2 {
        budgets.truncate(most);
        return budgets;
    }
    let last = budgets.len() - 1;
    let mut kept: Vec<f64> = (0..most)
        .map(|i| budgets[(i * last + (most - 1) / 2) / (most - 1)])
        .collect();
    kept.dedup();
    kept
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn frontier_budgets_are_round() {
        // Constructed spans, no source needed: the demo's (cheapest 250, everything 78,047).
        let b = round_budgets(250.0, 78_047.0, 24);
        assert_eq!(
            b,
            [
                300.0, 500.0, 700.0, 1e3, 1.5e3, 2e3, 3e3, 5e3, 7e3, 1e4, 1.5e4, 2e4, 3e4, 5e4,
                7e4, 1e5
            ]
        );
        // A narrow span takes the finest series; a wide one is thinned, both ends kept.
        assert_eq!(
            round_budgets(1000.0, 1600.0, 24),
            [1000.0, 1250.0, 1500.0, 1750.0]
        );
        let wide = round_budgets(0.5, 1e12, 24);
        assert_eq!(
            (wide.len(), wide[0], *wide.last().unwrap()),
            (24, 0.5, 1e12)
        );
        assert!(wide.windows(2).all(|w| w[0] < w[1]));
    }

    fn change(mean: f64, low: f64, high: f64) -> Change {
        Change {
            mean,
            low: Some(low),
            high: Some(high),
            p_value: None,
            chance_positive: None,
            widened_to_point: false,
        }
    }

    #[test]
    fn the_best_plan_without_each_feature_keeps_its_rows() {
        // Constructed plan, no source needed: rows item plus two features.
        let item = |option: &str, kind, cost, utility| PlanItem {
            option: option.into(),
            kind,
            new_rows: if kind == OptionKind::Rows { 500 } else { 0 },
            cost,
            accuracy_gain: utility / 2.0,
            unfairness_reduction: utility / 2.0,
            utility,
        };
        let items = vec![
            item("more", OptionKind::Rows, 100.0, 0.01),
            item("a", OptionKind::Feature, 200.0, 0.02),
            item("b", OptionKind::Feature, 400.0, 0.04),
        ];
        let plan = Plan {
            total_cost: 700.0,
            accuracy_gain: 0.035,
            unfairness_reduction: 0.035,
            score: 0.07,
            items,
        };
        let subs = without_each_feature(&plan);
        assert_eq!(subs.len(), 2);
        let names = |p: &Plan| p.items.iter().map(|i| i.option.clone()).collect::<Vec<_>>();
        assert_eq!(names(&subs[0]), ["more", "b"]);
        assert_eq!(names(&subs[1]), ["more", "a"]);
        assert!((subs[0].total_cost - 500.0).abs() < 1e-12);
        assert!((subs[1].score - 0.03).abs() < 1e-12);
    }

    #[test]
    fn summed_changes_combine_their_intervals_in_quadrature() {
        // scipy 1.17.1: z = norm.ppf(0.95); s = sqrt(2)·0.01 / z;
        // norm.cdf(0.03 / s) = 0.9997578214315264, 2·norm.cdf(−0.03 / s) = 0.00048435713694719494.
        let sum = summed(&[&change(0.01, 0.0, 0.02), &change(0.02, 0.01, 0.03)], 0.9);
        assert!((sum.mean - 0.03).abs() < 1e-15);
        assert!((sum.low.unwrap() - (0.03 - 2f64.sqrt() * 0.01)).abs() < 1e-15);
        assert!((sum.high.unwrap() - (0.03 + 2f64.sqrt() * 0.01)).abs() < 1e-15);
        assert!((sum.chance_positive.unwrap() - 0.9997578214315264).abs() < 1e-9);
        assert!((sum.p_value.unwrap() - 0.00048435713694719494).abs() < 1e-9);
        // A lopsided interval: the spread is its side towards zero, 0.02 / z.
        // scipy 1.17.1: norm.cdf(−0.005 / s) = 0.3404580292294064, twice it 0.6809160584588128.
        let one = summed(&[&change(-0.005, -0.015, 0.015)], 0.9);
        assert!((one.chance_positive.unwrap() - 0.3404580292294064).abs() < 1e-9);
        assert!((one.p_value.unwrap() - 0.6809160584588128).abs() < 1e-9);
        assert!(!one.differs_from_zero(0.9));
    }
}
