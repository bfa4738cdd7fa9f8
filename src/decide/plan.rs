//! `acquest plan`: the appraisal, the best plan for the budget ([`Problem`]), the frontier of
//! best plans as the budget grows, and the best few plans re-scored with their options taken
//! together.

use super::problem::Problem;
use super::select::four_fifths_hold;
use crate::error::Result;
use crate::report::{Candidate, FrontierPoint, Plan, PlanRules};

/// Points of the budget frontier.
pub const FRONTIER_POINTS: usize = 24;

/// Runs `acquest plan`: the appraisal, then the best plan for the budget and the frontier.
pub fn run(
    settings: &crate::settings::Settings,
    appraisal: &crate::settings::AppraisalSettings,
    rules: &PlanRules,
    progress: crate::engine::trial::ProgressSink,
) -> Result<crate::report::PlanReport> {
    let (report, appraiser) =
        crate::estimate::appraise::run_with_options(settings, appraisal, progress)?;
    let problem = Problem::new(&report, appraiser.options(), rules.cautious)?;
    let additive_best = problem.solve(rules);
    let frontier = frontier(&problem, rules, FRONTIER_POINTS);

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
    pool.dedup_by(|a, b| a.items == b.items);
    pool.retain(|p| !p.items.is_empty());
    pool.truncate(RESCORED_PLANS);
    let mut candidates = Vec::new();
    for plan in pool {
        let picks: Vec<(String, usize)> = plan
            .items
            .iter()
            .map(|i| (i.option.clone(), i.new_rows))
            .collect();
        let (joint, note) = match appraiser.rescore(&picks, progress)? {
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
            .all(|c| c.joint.is_some() || c.plan.items.len() < 2);
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
                "no plan within the budget of {:.0} is expected to bring every group's selection rate to four-fifths of the highest (today: {})",
                rules.budget,
                report
                    .groups
                    .iter()
                    .zip(&problem.today_selection)
                    .map(|(g, r)| format!("{} {r:.3}", g.name))
                    .collect::<Vec<_>>()
                    .join(", ")
            ),
            Some(cheapest) if cheapest > rules.budget => format!(
                "the budget of {:.0} is below the cheapest purchase on offer ({cheapest:.0}): nothing can be bought",
                rules.budget
            ),
            _ => "no purchase within the budget is expected to raise the utility (every option's estimated utility is zero or negative, or breaks a floor)".to_string(),
        })
    };
    let mut warnings = report.warnings.clone();
    if problem.searches_cut_short.get() > 0 {
        warnings.push(format!(
            "{} of the planner's searches under the floors stopped after {} steps: their plans are the best found, not proven best (fewer options, or no floors, make the search exact)",
            problem.searches_cut_short.get(),
            super::select::NODE_LIMIT
        ));
    }
    for c in &candidates {
        if let Some(note) = &c.note {
            if c.plan.items.len() > 1 {
                warnings.push(format!(
                    "a candidate plan was not re-scored jointly: {note}"
                ));
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
        candidates,
        explanation,
        cautions: report.cautions.clone(),
        appraisal: report,
        warnings,
    })
}

/// Plans re-scored jointly, at most.
pub const RESCORED_PLANS: usize = 4;

/// The best plan at budgets from the cheapest purchase to everything (log-spaced, `points` of
/// them).
pub fn frontier(problem: &Problem, rules: &PlanRules, points: usize) -> Vec<FrontierPoint> {
    let (Some(low), high) = (problem.cheapest(), problem.everything()) else {
        return Vec::new();
    };
    let low = low.max(1e-6);
    let high = high.max(low);
    (0..points)
        .map(|k| {
            let t = if points > 1 {
                k as f64 / (points - 1) as f64
            } else {
                1.0
            };
            let budget = low * (high / low).powf(t);
            FrontierPoint {
                budget,
                plan: problem.solve(&PlanRules { budget, ..*rules }),
            }
        })
        .collect()
}
