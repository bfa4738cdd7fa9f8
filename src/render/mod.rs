//! Renderers: each turns a report into one output format and computes nothing of its own:
//! JSON (here), the terminal view ([`terminal`]), Markdown ([`markdown`]), HTML ([`html`]) and
//! its SVG charts ([`svg`]). The helpers here (tables, number formats) are shared by all.

pub mod document;
pub mod html;
mod markdown;
pub mod svg;
mod terminal;

pub use markdown::plan_markdown;
pub use terminal::{
    appraisal_document, appraisal_text, backtest_document, backtest_text, baseline_document,
    baseline_text, curves_document, curves_text, plan_text,
};

use crate::report::{money, thousands, Change, CurvePoint, Estimate, OptionKind, PlanReport};

/// The report as pretty-printed JSON, ending in a newline.
pub fn json<T: serde::Serialize>(report: &T) -> String {
    let mut text =
        serde_json::to_string_pretty(report).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"));
    text.push('\n');
    text
}

/// A plain text table: first column left-aligned, the rest right-aligned.
struct Table {
    header: Vec<String>,
    rows: Vec<Vec<String>>,
}

impl Table {
    fn new(header: &[&str]) -> Self {
        Table {
            header: header.iter().map(|h| h.to_string()).collect(),
            rows: Vec::new(),
        }
    }

    fn row(&mut self, cells: Vec<String>) {
        self.rows.push(cells);
    }

    fn render(&self, out: &mut String) {
        let columns = self.header.len();
        let mut widths: Vec<usize> = self.header.iter().map(|h| h.chars().count()).collect();
        for row in &self.rows {
            for (w, cell) in widths.iter_mut().zip(row) {
                *w = (*w).max(cell.chars().count());
            }
        }
        let line = |cells: &[String], out: &mut String| {
            let mut text = String::from("  ");
            for (i, cell) in cells.iter().enumerate().take(columns) {
                let pad = widths[i] - cell.chars().count();
                if i == 0 {
                    text.push_str(cell);
                    text.push_str(&" ".repeat(pad));
                } else {
                    text.push_str("  ");
                    text.push_str(&" ".repeat(pad));
                    text.push_str(cell);
                }
            }
            out.push_str(text.trim_end());
            out.push('\n');
        };
        line(&self.header, out);
        let rule: Vec<String> = widths.iter().map(|&w| "-".repeat(w)).collect();
        line(&rule, out);
        for row in &self.rows {
            line(row, out);
        }
    }
}

fn number(x: f64) -> String {
    format!("{x:.4}")
}

fn maybe(x: Option<f64>) -> String {
    x.map_or("n/a".into(), number)
}

/// "0.8512 [0.8490, 0.8534]".
fn with_interval(e: Option<&Estimate>) -> String {
    match e {
        None => "n/a".into(),
        Some(e) => match (e.low, e.high) {
            (Some(l), Some(h)) => format!("{} [{}, {}]", number(e.mean), number(l), number(h)),
            _ => number(e.mean),
        },
    }
}

/// "+0.0123 [+0.0050, +0.0190] *": a signed estimate (a difference), starred when its test
/// against its ideal value is significant at 1 − confidence.
fn signed_estimate(e: &Estimate, confidence: f64) -> String {
    signed_cell(
        e.mean,
        e.low,
        e.high,
        !significance(Some(e), confidence).is_empty(),
    )
}

/// Marks an estimate whose test against its ideal value is significant at 1 − confidence.
fn significance(e: Option<&Estimate>, confidence: f64) -> &'static str {
    match e.and_then(|e| e.p_value) {
        Some(p) if p < 1.0 - confidence => " *",
        _ => "",
    }
}

fn p_value(p: Option<f64>) -> String {
    match p {
        None => "n/a".into(),
        Some(p) if p < 1e-16 => "< 1e-16".into(),
        Some(p) if p < 1e-4 => format!("{p:.1e}"),
        Some(p) => format!("{p:.4}"),
    }
}

/// Whether buying part of a group's rows first would narrow any of the whole purchase's
/// intervals by at least 5% of its width (else the reports say that it would not).
fn first_parts_narrow(o: &crate::report::OptionValue) -> bool {
    let width = |c: &Change| Some(c.high? - c.low?);
    o.first_parts.iter().any(|p| {
        [
            (&o.estimate.accuracy_gain, &p.accuracy_gain),
            (&o.estimate.unfairness_reduction, &p.unfairness_reduction),
        ]
        .iter()
        .any(|(now, then)| match (width(now), then) {
            (Some(w), Some(e)) => e.high - e.low < 0.95 * w,
            _ => false,
        })
    })
}

/// The plan's advice on growing a pilot first, as a sentence: "Decide now: ..." or "First grow
/// pilot ...", with the extension's figures; `None` where the plan was made without it.
fn advice_sentence(report: &PlanReport) -> Option<String> {
    let advice = report.pilot_advice.as_ref()?;
    let mut chars = advice.decision.chars();
    let first = chars.next()?.to_uppercase().collect::<String>();
    Some(format!("{first}{}.", chars.as_str()))
}

/// "+0.0123 [+0.0050, +0.0190]" for a change, with "*" when it differs from zero.
fn change_cell(c: &Change, confidence: f64) -> String {
    signed_cell(c.mean, c.low, c.high, c.differs_from_zero(confidence))
}

/// "+0.0123": a signed value to four places, or "not measured".
fn signed(x: f64) -> String {
    if x.is_finite() {
        format!("{x:+.4}")
    } else {
        "not measured".into()
    }
}

/// A plan's summed unfairness reduction, naming the items left out of the sum because their
/// reduction was not measured: "+0.0692 (leaves out work-sample: not measured)".
fn plan_unfairness(plan: &crate::report::Plan) -> String {
    let left_out = plan.unmeasured_items();
    if left_out.is_empty() || !plan.unfairness_reduction.is_finite() {
        signed(plan.unfairness_reduction)
    } else {
        format!(
            "{} (leaves out {}: not measured)",
            signed(plan.unfairness_reduction),
            left_out.join(", ")
        )
    }
}

/// "+0.0123 [+0.0050, +0.0190] *": a signed value, its interval, a star when significant;
/// "not measured" for a value that is not a number.
fn signed_cell(mean: f64, low: Option<f64>, high: Option<f64>, significant: bool) -> String {
    if !mean.is_finite() {
        return "not measured".into();
    }
    let star = if significant { " *" } else { "" };
    match (low, high) {
        (Some(l), Some(h)) => format!("{mean:+.4} [{l:+.4}, {h:+.4}]{star}"),
        _ => format!("{mean:+.4}{star}"),
    }
}

fn plan_lines(report: &PlanReport) -> Vec<String> {
    let currency = &report.appraisal.costs.currency;
    report
        .plan
        .items
        .iter()
        .map(|i| {
            let what = match i.kind {
                OptionKind::Feature => format!("{} (feature)", i.option),
                OptionKind::Rows | OptionKind::GroupRows => {
                    format!("{} ({} rows)", i.option, thousands(i.new_rows))
                }
            };
            format!(
                "{what}: {} {currency}, accuracy {:+.4}, unfairness reduction {}",
                money(i.cost),
                i.accuracy_gain,
                signed(i.unfairness_reduction)
            )
        })
        .collect()
}

/// The plan as a whole, in words every format shows: a warning when its gain cannot be told
/// from zero (shown first), its figures with intervals and the chance that it helps, and the
/// flags of its options.
struct WholePlan {
    doubt: Option<String>,
    figures: String,
    /// The figures as a sentence of a document, with what the intervals and stars mean.
    sentence: String,
    flags: Vec<String>,
}

fn whole_plan(report: &PlanReport) -> Option<WholePlan> {
    let s = report.summary.as_ref()?;
    let confidence = report.appraisal.inputs.confidence;
    let level = (confidence * 100.0).round();
    let chance = s.utility.chance_positive.map(percent);
    let source = match s.source.as_str() {
        "joint" => "its options measured together",
        "summed" => "its options' estimates added, their intervals combined as if independent",
        _ => "its option's own estimate",
    };
    let doubt = (!s.differs_from_zero).then(|| {
        format!(
            "The plan's gain cannot be told from zero at {level}%{}. Read it as a lead to confirm, not a finding.",
            chance
                .as_ref()
                .map_or(String::new(), |c| format!(": the chance that it raises the utility at all is {c}"))
        )
    });
    let figures = format!(
        "the plan as a whole ({source}): accuracy {}, unfairness reduction {}, utility {}{}",
        change_cell(&s.accuracy_gain, confidence),
        change_cell(&s.unfairness_reduction, confidence),
        change_cell(&s.utility, confidence),
        chance.map_or(String::new(), |c| format!(
            "; chance that it raises the utility: {c}"
        ))
    );
    let mut sentence = format!("{figures} ({level}% intervals; * differs from zero).");
    if let Some(first) = sentence.get_mut(..1) {
        first.make_ascii_uppercase();
    }
    Some(WholePlan {
        doubt,
        figures,
        sentence,
        flags: s.flags.clone(),
    })
}

/// A chance as a percentage, "> 99%" and "< 1%" at the ends.
fn percent(p: f64) -> String {
    if p >= 0.995 {
        "> 99%".into()
    } else if p < 0.005 {
        "< 1%".into()
    } else {
        format!("{:.0}%", p * 100.0)
    }
}

/// Today's unfairness by the further protected attributes, in a sentence (`None` with one):
/// "By the other protected attributes today (EOD; the options are valued on 'sex' alone): race,
/// 'Other' beside 'White' 0.2885; ...".
fn today_by_attribute(a: &crate::report::AppraisalReport) -> Option<String> {
    if a.today_by_attribute.is_empty() {
        return None;
    }
    let items: Vec<String> = a
        .today_by_attribute
        .iter()
        .map(|t| match (&t.worst_group, t.unfairness) {
            (Some(g), Some(u)) => format!("{}, '{g}' beside '{}' {u:.4}", t.attribute, t.reference),
            _ => format!("{}, not measured", t.attribute),
        })
        .collect();
    Some(format!(
        "By the other protected attributes today ({}{}; the options are valued on '{}' alone): {}",
        a.costs.fairness.to_uppercase(),
        if a.today.source == "curve" {
            ", from the trials at the largest size measured"
        } else {
            ""
        },
        a.inputs.protected,
        items.join("; ")
    ))
}

/// Where today's figures come from, in words: the trial design stated once for every report.
fn today_source(a: &crate::report::AppraisalReport) -> String {
    if a.today.source == "curve" {
        format!(
            "read off today's learning curve at {} training rows, more than a trial trains on",
            thousands(a.today.training_rows)
        )
    } else {
        format!(
            "the mean of {} trials at all {} training rows, each tested on {:.0}% of the rows held: the baseline's trials and figures",
            a.inputs.repeats,
            thousands(a.today.training_rows),
            a.inputs.test_fraction * 100.0
        )
    }
}

/// A plan item in a few words: the option, and the rows bought for a rows option.
fn item_label(i: &crate::report::PlanItem) -> String {
    if i.kind == OptionKind::Feature {
        i.option.clone()
    } else {
        format!("{} {}", i.option, thousands(i.new_rows))
    }
}

/// A plan's purchases in one label, rows options with their row counts: "more-rows 1,000 +
/// work-sample", or "nothing".
fn plan_label(plan: &crate::report::Plan) -> String {
    if plan.items.is_empty() {
        return "nothing".into();
    }
    plan.items
        .iter()
        .map(item_label)
        .collect::<Vec<_>>()
        .join(" + ")
}

/// The candidate plans as table cells: plan, cost, summed utility, joint utility, how.
pub(crate) fn candidate_rows(report: &PlanReport) -> Vec<[String; 5]> {
    let confidence = report.appraisal.inputs.confidence;
    report
        .candidates
        .iter()
        .map(|c| {
            let (joint, how) = match &c.joint {
                Some(j) => (change_cell(&j.utility, confidence), j.method.clone()),
                None if c.plan.scored_together() => (
                    "its own estimate".into(),
                    c.note.clone().unwrap_or_default(),
                ),
                None => ("n/a".into(), c.note.clone().unwrap_or_default()),
            };
            [
                plan_label(&c.plan),
                money(c.plan.total_cost),
                format!("{:+.4}", c.plan.score),
                joint,
                how,
            ]
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn thousands_separators() {
        assert_eq!(thousands(32561), "32,561");
        assert_eq!(thousands(999), "999");
        assert_eq!(thousands(1_000_000), "1,000,000");
        // Amounts beyond any integer type print every digit of the nearest whole number: the
        // f64 nearest 1e25 is 10000000000000000905969664 (Python 3.11: int(1e25)).
        assert_eq!(money(19_499.6), "19,500");
        assert_eq!(money(2e19), "20,000,000,000,000,000,000");
        assert_eq!(money(1e25), "10,000,000,000,000,000,905,969,664");
        assert_eq!(money(-1500.0), "-1,500");
        assert_eq!(money(0.4), "0");
    }
}
