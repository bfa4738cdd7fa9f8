//! The plan report as Markdown, to paste into a project proposal.

use std::fmt::Write as _;

use super::*;
use crate::report::PlanReport;

/// The plan report as Markdown, to paste into a proposal.
pub fn plan_markdown(report: &PlanReport) -> String {
    let a = &report.appraisal;
    let currency = &a.costs.currency;
    let confidence = a.inputs.confidence;
    let level = (confidence * 100.0).round();
    let mut out = String::new();
    let _ = writeln!(out, "# Data acquisition plan\n");
    let _ = writeln!(
        out,
        "Data: `{}` ({} rows, sha256 `{}`), target `{}` (favourable: {}), protected attribute `{}`; cost sheet `{}`. Model: {}, {} repeated trials, seed {}. Produced by acquest {}.\n",
        a.inputs.data.path,
        thousands(a.today.rows),
        &a.inputs.data.sha256[..12.min(a.inputs.data.sha256.len())],
        a.inputs.target,
        a.inputs.favourable,
        a.inputs.protected,
        a.costs.path,
        a.inputs.model,
        a.inputs.repeats,
        a.inputs.seed,
        report.tool_version
    );
    let _ = writeln!(out, "## Recommendation\n");
    if let Some(advice) = advice_sentence(report) {
        let _ = writeln!(out, "**{advice}**\n");
    }
    match &report.explanation {
        Some(why) => {
            let _ = writeln!(
                out,
                "With a budget of {} {currency}, buy nothing: {why}.\n",
                money(report.rules.budget)
            );
        }
        None => {
            let whole = whole_plan(report);
            if let Some(doubt) = whole.as_ref().and_then(|w| w.doubt.as_ref()) {
                let _ = writeln!(out, "**{doubt}**\n");
            }
            let _ = writeln!(
                out,
                "With a budget of {} {currency}:\n",
                money(report.rules.budget)
            );
            for line in plan_lines(report) {
                let _ = writeln!(out, "- {line}");
            }
            let p = &report.plan;
            let _ = writeln!(
                out,
                "\nTotal cost {} {currency}; expected accuracy gain {:+.4} and reduction in unfairness ({} of the worst group) {}, as the sum of the options' estimates.\n",
                money(p.total_cost),
                p.accuracy_gain,
                a.costs.fairness.to_uppercase(),
                plan_unfairness(p)
            );
            if let Some(whole) = whole {
                let _ = writeln!(out, "{}\n", whole.sentence);
                for flag in &whole.flags {
                    let _ = writeln!(out, "- Note on {flag}");
                }
                if !whole.flags.is_empty() {
                    out.push('\n');
                }
            }
        }
    }
    let _ = writeln!(
        out,
        "Today the model's accuracy is {:.4} and its unfairness ({} of '{}' beside '{}') is {:.4} ({}).\n",
        a.today.accuracy,
        a.costs.fairness.to_uppercase(),
        a.today.worst_group,
        a.reference.name,
        a.today.unfairness,
        today_source(a)
    );
    if let Some(sentence) = super::today_by_attribute(a) {
        let _ = writeln!(out, "{sentence}.\n");
    }
    let _ = writeln!(out, "## Options considered\n");
    let _ = writeln!(out, "Mean and {level}% interval; * marks a change that differs from zero. Utility = {} x accuracy gain + {} x unfairness reduction.\n", a.costs.weigh_accuracy, a.costs.weigh_fairness);
    let _ = writeln!(out, "| rank | option | cost ({currency}) | accuracy gain | unfairness reduction | utility per 1,000 | notes |");
    let _ = writeln!(out, "|---|---|---|---|---|---|---|");
    for r in &a.ranking {
        let Some(o) = a.options.iter().find(|o| o.name == r.name) else {
            continue;
        };
        let _ = writeln!(
            out,
            "| {} | {} | {} | {} | {} | {:+.5} | {} |",
            r.rank,
            o.name,
            money(o.estimate.cost),
            change_cell(&o.estimate.accuracy_gain, confidence),
            change_cell(&o.estimate.unfairness_reduction, confidence),
            r.utility_per_1000,
            o.flags.join("; ")
        );
    }
    let _ = writeln!(out, "\nThe plan was chosen on {}.\n", report.chosen_by);
    if report.candidates.iter().any(|c| c.joint.is_some()) {
        let _ = writeln!(
            out,
            "| candidate plan | cost | utility, gains summed | utility, options together | how |"
        );
        let _ = writeln!(out, "|---|---|---|---|---|");
        for row in candidate_rows(report) {
            let _ = writeln!(out, "| {} |", row.join(" | "));
        }
    }
    let _ = writeln!(out, "\n## Best plan at other budgets\n");
    let _ = writeln!(
        out,
        "| budget | cost | buys | accuracy gain | unfairness reduction |"
    );
    let _ = writeln!(out, "|---|---|---|---|---|");
    let mut last = String::new();
    for point in &report.frontier {
        let buys = plan_label(&point.plan);
        if buys == last {
            continue;
        }
        last = buys.clone();
        let _ = writeln!(
            out,
            "| {} | {} | {} | {:+.4} | {} |",
            money(point.budget),
            money(point.plan.total_cost),
            buys,
            point.plan.accuracy_gain,
            plan_unfairness(&point.plan)
        );
    }
    let _ = writeln!(out, "\n## How the figures were made\n");
    let _ = writeln!(
        out,
        "Every figure comes from repeated, seeded, stratified train/test trials on the data given. More rows are valued on learning curves fitted to nested subsamples; a new attribute by paired trials with and without it on its pilot rows, the difference measured there carried to the full data by its trend over the pilot's sizes (shrunk where the trend is lost in its noise) and added to today's curve; intervals come from a bootstrap over the repeats. Estimates read beyond four times the largest size measured are flagged as unreliable. Gains of options bought together are added ({}).\n",
        report.gain_model
    );
    if !report.warnings.is_empty() {
        let _ = writeln!(out, "## Warnings\n");
        for w in &report.warnings {
            let _ = writeln!(out, "- {w}");
        }
        out.push('\n');
    }
    let _ = writeln!(out, "## Cautions\n");
    for c in &report.cautions {
        let _ = writeln!(out, "- {c}");
    }
    out
}
