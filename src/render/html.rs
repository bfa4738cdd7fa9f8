//! The plan report as one self-contained HTML file with SVG charts: the recommendation, the
//! options with their intervals, the budget frontier with the chosen plan marked, and the
//! learning curves with each group's rates. Drawn from the report only.

use std::fmt::Write as _;

use super::document::{escape, prose, STYLE};
use super::svg::{curve_chart, format_tick, tick_step, CurveSet};
use super::{
    advice_sentence, candidate_rows, change_cell, money, plan_unfairness, signed, thousands,
    today_source, whole_plan,
};
use crate::report::{AppraisalReport, Change, ExpectedGain, OptionValue, PlanReport};

/// The options' gains side by side as dot-and-whisker charts, ranked as in the report.
pub(super) fn options_charts(a: &AppraisalReport) -> String {
    let ranked: Vec<&crate::report::OptionValue> = a
        .ranking
        .iter()
        .filter_map(|r| a.options.iter().find(|o| o.name == r.name))
        .collect();
    let level = (a.inputs.confidence * 100.0).round();
    let chart = |title: &str, gain: fn(&crate::report::OptionValue) -> &Change| {
        options_chart(
            &format!("{title} ({level}% interval)"),
            &ranked
                .iter()
                .map(|o| (o.name.clone(), gain(o).clone()))
                .collect::<Vec<_>>(),
        )
    };
    format!(
        "<div class=\"charts\">\n{}{}</div>\n",
        chart("Accuracy gain", |o| &o.estimate.accuracy_gain),
        chart("Unfairness reduction", |o| &o.estimate.unfairness_reduction)
    )
}

/// One feature's full-size intervals today and as expected at its larger pilots
/// ([`crate::report::PilotGrowth`]), for accuracy and unfairness, as dot-and-whisker charts.
pub(super) fn growth_charts(o: &OptionValue, level: f64) -> String {
    let Some(pilot) = &o.pilot else {
        return String::new();
    };
    let later = pilot
        .growth
        .sizes
        .iter()
        .map(|s| {
            (
                format!("pilot of {}", thousands(s.rows)),
                [s.accuracy_gain.as_ref(), s.unfairness_reduction.as_ref()],
            )
        })
        .collect();
    expected_charts(
        o,
        format!("pilot of {} (now)", thousands(pilot.rows)),
        later,
        "by pilot size",
        level,
    )
}

/// Rows of one group: the whole purchase's intervals today and as expected once a first part
/// is bought ([`crate::report::FirstPart`]), as dot-and-whisker charts.
pub(super) fn first_parts_charts(o: &OptionValue, level: f64) -> String {
    let later = o
        .first_parts
        .iter()
        .map(|p| {
            (
                format!("after the first {}", thousands(p.rows)),
                [p.accuracy_gain.as_ref(), p.unfairness_reduction.as_ref()],
            )
        })
        .collect();
    if !super::first_parts_narrow(o) {
        return String::new();
    }
    expected_charts(o, "now".into(), later, "bought in two parts", level)
}

/// An option's headline accuracy and unfairness intervals (labelled `now`) beside intervals
/// expected later (`later`: a label, and the expected accuracy and unfairness intervals about
/// the same points), as two dot-and-whisker charts titled with `how`.
fn expected_charts(
    o: &OptionValue,
    now: String,
    later: Vec<(String, [Option<&ExpectedGain>; 2])>,
    how: &str,
    level: f64,
) -> String {
    let chart = |title: &str, headline: &Change, k: usize| {
        let mut rows = vec![(now.clone(), headline.clone())];
        rows.extend(later.iter().filter_map(|(label, expected)| {
            expected[k].map(|e| {
                (
                    label.clone(),
                    Change {
                        mean: headline.mean,
                        low: Some(e.low),
                        high: Some(e.high),
                        p_value: None,
                        chance_positive: None,
                        widened_to_point: false,
                    },
                )
            })
        }));
        if rows.len() < 2 || !headline.is_measured() {
            return String::new();
        }
        options_chart(&format!("{title} {how} ({level}% interval)"), &rows)
    };
    format!(
        "<div class=\"charts\">\n{}{}</div>\n",
        chart("Accuracy gain", &o.estimate.accuracy_gain, 0),
        chart("Unfairness reduction", &o.estimate.unfairness_reduction, 1)
    )
}

/// The plan's section on what more data would tell before buying: each pilot feature's curves
/// without and with it and its intervals at larger pilots, and each group's rows bought in two
/// parts where a first part would narrow the interval. Empty where there is neither.
fn what_more_would_tell(a: &AppraisalReport) -> String {
    let level = (a.inputs.confidence * 100.0).round();
    let mut out = String::new();
    for o in &a.options {
        let (curves, intervals) = if o.pilot.is_some() {
            (
                super::svg::pilot_curves_svg(o, &a.today, &a.reference.name, a.inputs.confidence),
                growth_charts(o, level),
            )
        } else {
            (String::new(), first_parts_charts(o, level))
        };
        if curves.is_empty() && !intervals.contains("<svg") {
            continue;
        }
        let what = if o.pilot.is_some() {
            "its pilot's curves, and its intervals at larger pilots"
        } else {
            "bought in two parts"
        };
        let _ = writeln!(out, "<h3>{}: {what}</h3>", escape(&o.name));
        out.push_str(&curves);
        out.push_str(&intervals);
    }
    if out.is_empty() {
        return out;
    }
    format!("<h2>What more data would tell before buying</h2>\n{out}")
}

/// The appraisal's learning curves with each group's rates.
pub(super) fn appraisal_curves(a: &AppraisalReport) -> String {
    curve_chart(&CurveSet {
        inputs: &a.inputs,
        schedule: &a.schedule,
        groups: &a.groups,
        reference: &a.reference,
        curves: &a.curves,
        disparities: &a.disparities,
    })
}

/// The span of `values` widened by 8% each side (and to at least ±0.01 when flat).
fn padded_range(values: &[f64]) -> (f64, f64) {
    let mut low = values.iter().copied().fold(f64::INFINITY, f64::min);
    let mut high = values.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    if high - low < 1e-6 {
        low -= 0.01;
        high += 0.01;
    }
    let pad = (high - low) * 0.08;
    (low - pad, high + pad)
}

/// Dot-and-whisker chart of one gain for every option, ranked as in the report.
fn options_chart(title: &str, rows: &[(String, Change)]) -> String {
    let (width, row_height, left, right, top) = (460.0, 26.0, 190.0, 20.0, 40.0);
    let height = top + row_height * rows.len() as f64 + 40.0;
    let values: Vec<f64> = rows
        .iter()
        .flat_map(|(_, c)| {
            [
                c.mean,
                c.low.unwrap_or(c.mean),
                c.high.unwrap_or(c.mean),
                0.0,
            ]
        })
        .filter(|v| v.is_finite())
        .collect();
    let (low, high) = padded_range(&values);
    let x = |v: f64| left + (v - low) / (high - low) * (width - left - right);
    let mut out = String::new();
    let _ = writeln!(
        out,
        r#"<svg xmlns="http://www.w3.org/2000/svg" class="chart" width="{width:.0}" height="{height:.0}" viewBox="0 0 {width:.0} {height:.0}">"#
    );
    let _ = writeln!(
        out,
        r#"<text x="10" y="22" class="title">{}</text>"#,
        escape(title)
    );
    let zero = x(0.0);
    let bottom = top + row_height * rows.len() as f64;
    let _ = writeln!(
        out,
        r##"<line x1="{zero:.1}" y1="{top:.1}" x2="{zero:.1}" y2="{bottom:.1}" stroke="#888" stroke-dasharray="3 3"/>"##
    );
    for (i, (name, c)) in rows.iter().enumerate() {
        let y = top + row_height * (i as f64 + 0.5);
        let _ = writeln!(
            out,
            r#"<text x="{:.1}" y="{:.1}" class="label" text-anchor="end">{}</text>"#,
            left - 8.0,
            y + 4.0,
            escape(name)
        );
        if let (Some(l), Some(h)) = (c.low, c.high) {
            let _ = writeln!(
                out,
                r##"<line x1="{:.1}" y1="{y:.1}" x2="{:.1}" y2="{y:.1}" stroke="#1f5fa8" stroke-width="2"/>"##,
                x(l),
                x(h)
            );
        }
        if c.is_measured() {
            let _ = writeln!(
                out,
                r##"<circle cx="{:.1}" cy="{y:.1}" r="4" fill="#1f5fa8"/>"##,
                x(c.mean)
            );
        } else {
            let _ = writeln!(
                out,
                r#"<text x="{:.1}" y="{:.1}" class="tick">not measured</text>"#,
                left + 4.0,
                y + 4.0
            );
        }
    }
    let _ = writeln!(
        out,
        r#"<text x="{:.1}" y="{:.1}" class="tick" text-anchor="middle">{:+.3}</text>"#,
        x(low),
        bottom + 16.0,
        low
    );
    let _ = writeln!(
        out,
        r#"<text x="{zero:.1}" y="{:.1}" class="tick" text-anchor="middle">0</text>"#,
        bottom + 16.0
    );
    let _ = writeln!(
        out,
        r#"<text x="{:.1}" y="{:.1}" class="tick" text-anchor="middle">{:+.3}</text>"#,
        x(high),
        bottom + 16.0,
        high
    );
    out.push_str("</svg>\n");
    out
}

/// The budget frontier: best plan's accuracy gain and unfairness reduction against its cost,
/// the chosen plan ringed.
fn frontier_chart(report: &PlanReport) -> String {
    let (width, height, left, right, top, bottom) = (700.0, 300.0, 70.0, 20.0, 40.0, 50.0);
    let points: Vec<(f64, f64, f64)> = report
        .frontier
        .iter()
        .map(|p| {
            (
                p.plan.total_cost,
                p.plan.accuracy_gain,
                p.plan.unfairness_reduction,
            )
        })
        .chain(std::iter::once((
            report.plan.total_cost,
            report.plan.accuracy_gain,
            report.plan.unfairness_reduction,
        )))
        .collect();
    let max_cost = points.iter().map(|p| p.0).fold(1.0, f64::max);
    let ys: Vec<f64> = points
        .iter()
        .flat_map(|p| [p.1, p.2, 0.0])
        .filter(|v| v.is_finite())
        .collect();
    let (low, high) = padded_range(&ys);
    let px = |c: f64| left + c / max_cost * (width - left - right);
    let py = |v: f64| top + (high - v) / (high - low) * (height - top - bottom);
    let mut out = String::new();
    let _ = writeln!(
        out,
        r#"<svg xmlns="http://www.w3.org/2000/svg" class="chart" id="frontier" width="{width:.0}" height="{height:.0}" viewBox="0 0 {width:.0} {height:.0}">"#
    );
    let _ = writeln!(
        out,
        r#"<text x="10" y="22" class="title">Best plan at each budget: gains against cost</text>"#
    );
    let _ = writeln!(
        out,
        r##"<rect x="{left}" y="{top}" width="{:.1}" height="{:.1}" fill="#fff" stroke="#999"/>"##,
        width - left - right,
        height - top - bottom
    );
    // Round ticks on both axes, with grid lines, and a title on each.
    let cost_step = tick_step(max_cost);
    for k in 0..=(max_cost / cost_step).floor() as usize {
        let c = cost_step * k as f64;
        let _ = writeln!(
            out,
            r##"<line x1="{x:.1}" y1="{top}" x2="{x:.1}" y2="{:.1}" stroke="#eee"/><text x="{x:.1}" y="{:.1}" class="tick" text-anchor="middle">{}</text>"##,
            height - bottom,
            height - bottom + 16.0,
            money(c),
            x = px(c)
        );
    }
    let gain_step = tick_step(high - low);
    let first = (low / gain_step).ceil() as i64;
    let last = (high / gain_step).floor() as i64;
    for k in first..=last {
        let v = gain_step * k as f64;
        let _ = writeln!(
            out,
            r##"<line x1="{left}" y1="{y:.1}" x2="{:.1}" y2="{y:.1}" stroke="#eee"/><text x="{:.1}" y="{:.1}" class="tick" text-anchor="end">{}{}</text>"##,
            width - right,
            left - 5.0,
            py(v) + 3.5,
            if v > 0.0 { "+" } else { "" },
            format_tick(v, gain_step),
            y = py(v)
        );
    }
    let middle = top + (height - top - bottom) / 2.0;
    let _ = writeln!(
        out,
        r#"<text x="14" y="{middle:.1}" class="label" text-anchor="middle" transform="rotate(-90 14 {middle:.1})">gain (accuracy, or fall in unfairness)</text>"#
    );
    let _ = writeln!(
        out,
        r##"<line x1="{left}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="#888" stroke-dasharray="3 3"/>"##,
        py(0.0),
        width - right,
        py(0.0)
    );
    // (cost, accuracy gain, unfairness reduction, whether that sum leaves out an item whose
    // reduction was not measured).
    let mut frontier: Vec<(f64, f64, f64, bool)> = report
        .frontier
        .iter()
        .map(|p| {
            (
                p.plan.total_cost,
                p.plan.accuracy_gain,
                p.plan.unfairness_reduction,
                !p.plan.unmeasured_items().is_empty(),
            )
        })
        .collect();
    let partial = frontier.iter().any(|p| p.3);
    frontier.sort_by(|a, b| a.0.total_cmp(&b.0));
    frontier.dedup_by(|a, b| (a.0 - b.0).abs() < 1e-9);
    for (k, (colour, name)) in [
        ("#1f5fa8", "accuracy gain"),
        ("#c8553d", "unfairness reduction"),
    ]
    .iter()
    .enumerate()
    {
        // A plan whose unfairness reduction was not measured has no point on that line.
        let value = |p: &(f64, f64, f64, bool)| {
            Some(if k == 0 { p.1 } else { p.2 }).filter(|v| v.is_finite())
        };
        let path: Vec<String> = frontier
            .iter()
            .filter_map(|p| Some(format!("{:.1},{:.1}", px(p.0), py(value(p)?))))
            .collect();
        let _ = writeln!(
            out,
            r#"<polyline points="{}" fill="none" stroke="{colour}" stroke-width="2"/>"#,
            path.join(" ")
        );
        for p in &frontier {
            if let Some(v) = value(p) {
                // Hollow: an unfairness sum that leaves out an option not measured.
                let fill = if k == 1 && p.3 { "#fff" } else { colour };
                let _ = writeln!(
                    out,
                    r#"<circle cx="{:.1}" cy="{:.1}" r="3" fill="{fill}" stroke="{colour}"/>"#,
                    px(p.0),
                    py(v)
                );
            }
        }
        let _ = writeln!(
            out,
            r#"<line x1="{:.1}" y1="{:.1}" x2="{:.1}" y2="{:.1}" stroke="{colour}" stroke-width="2"/><text x="{:.1}" y="{:.1}" class="label">{name}</text>"#,
            left + 10.0 + 180.0 * k as f64,
            top - 10.0,
            left + 28.0 + 180.0 * k as f64,
            top - 10.0,
            left + 33.0 + 180.0 * k as f64,
            top - 6.0
        );
    }
    let chosen = &report.plan;
    for value in [chosen.accuracy_gain, chosen.unfairness_reduction]
        .into_iter()
        .filter(|v| v.is_finite())
    {
        let _ = writeln!(
            out,
            r##"<circle cx="{:.1}" cy="{:.1}" r="8" fill="none" stroke="#222" stroke-width="2" class="chosen"/>"##,
            px(chosen.total_cost),
            py(value)
        );
    }
    let _ = writeln!(
        out,
        r#"<text x="{:.1}" y="{:.1}" class="label">chosen plan ({})</text>"#,
        px(chosen.total_cost) + 10.0,
        py(chosen.accuracy_gain.max(chosen.unfairness_reduction)) - 10.0, // max ignores NaN
        money(chosen.total_cost)
    );
    let _ = writeln!(
        out,
        r#"<text x="{:.1}" y="{:.1}" class="label" text-anchor="middle">cost of the plan ({})</text>"#,
        left + (width - left - right) / 2.0,
        height - 10.0,
        escape(&report.appraisal.costs.currency)
    );
    out.push_str("</svg>\n");
    if partial {
        out.push_str(
            "<p class=\"note\">Hollow points: the plan's unfairness reduction sums only those of its options whose reduction was measured (see the options' flags).</p>\n",
        );
    }
    out
}

/// The plan report as one self-contained HTML page.
pub fn plan_html(report: &PlanReport) -> String {
    let a = &report.appraisal;
    let confidence = a.inputs.confidence;
    let currency = escape(&a.costs.currency);
    let mut out = String::new();
    out.push_str("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n");
    let _ = writeln!(
        out,
        "<title>acquest plan: {}</title>",
        escape(&a.inputs.data.path)
    );
    let _ = write!(out, "<style>{STYLE}</style>\n</head>\n<body>\n");
    let _ = writeln!(out, "<h1>Data acquisition plan</h1>");
    let _ = writeln!(
        out,
        "<p>Data <code>{}</code> ({} rows, sha256 <code>{}</code>), target <code>{}</code> (favourable: {}), protected attribute <code>{}</code>; cost sheet <code>{}</code>. Model {}, {} repeated trials, seed {}; acquest {}.</p>",
        escape(&a.inputs.data.path),
        thousands(a.today.rows),
        escape(&a.inputs.data.sha256),
        escape(&a.inputs.target),
        escape(&a.inputs.favourable),
        escape(&a.inputs.protected),
        escape(&a.costs.path),
        escape(&a.inputs.model),
        a.inputs.repeats,
        a.inputs.seed,
        escape(&report.tool_version)
    );
    let _ = writeln!(out, "<h2>Recommendation</h2>");
    if let Some(advice) = advice_sentence(report) {
        let _ = writeln!(
            out,
            "<p class=\"advice\"><strong>{}</strong></p>",
            escape(&advice)
        );
    }
    match &report.explanation {
        Some(why) => {
            let _ = writeln!(
                out,
                "<p>With a budget of {} {currency}, buy nothing: {}.</p>",
                money(report.rules.budget),
                escape(why)
            );
        }
        None => {
            let whole = whole_plan(report);
            if let Some(doubt) = whole.as_ref().and_then(|w| w.doubt.as_ref()) {
                let _ = writeln!(
                    out,
                    "<p class=\"doubt\"><strong>{}</strong></p>",
                    escape(doubt)
                );
            }
            let _ = writeln!(out, "<p>With a budget of {} {currency}:</p>\n<table id=\"plan\"><tr><th>buy</th><th>rows</th><th>cost ({currency})</th><th>accuracy gain</th><th>unfairness reduction</th></tr>", money(report.rules.budget));
            for i in &report.plan.items {
                let _ = writeln!(
                    out,
                    "<tr><td>{}</td><td>{}</td><td>{}</td><td>{:+.4}</td><td>{}</td></tr>",
                    escape(&i.option),
                    if i.kind == crate::report::OptionKind::Feature {
                        "all rows held".to_string()
                    } else {
                        thousands(i.new_rows)
                    },
                    money(i.cost),
                    i.accuracy_gain,
                    signed(i.unfairness_reduction)
                );
            }
            let p = &report.plan;
            let _ = writeln!(
                out,
                "<tr><th>total</th><th></th><th>{}</th><th>{:+.4}</th><th>{}</th></tr></table>",
                money(p.total_cost),
                p.accuracy_gain,
                escape(&plan_unfairness(p))
            );
            if let Some(whole) = whole {
                let _ = writeln!(out, "<p id=\"whole\">{}</p>", escape(&whole.sentence));
                if !whole.flags.is_empty() {
                    out.push_str("<ul class=\"flags\">");
                    for flag in &whole.flags {
                        let _ = write!(out, "<li>{}</li>", prose(flag));
                    }
                    out.push_str("</ul>\n");
                }
            }
        }
    }
    let _ = writeln!(
        out,
        "<p>Today: accuracy {:.4}; unfairness ({} of '{}' beside '{}') {:.4} ({}). Gains: {}.</p>",
        a.today.accuracy,
        escape(&a.costs.fairness.to_uppercase()),
        escape(&a.today.worst_group),
        escape(&a.reference.name),
        a.today.unfairness,
        escape(&today_source(a)),
        escape(&report.gain_model)
    );
    if let Some(sentence) = super::today_by_attribute(a) {
        let _ = writeln!(out, "<p>{}.</p>", escape(&sentence));
    }
    let _ = writeln!(out, "<p>Chosen on {}.</p>", escape(&report.chosen_by));
    if report.candidates.iter().any(|c| c.joint.is_some()) {
        out.push_str("<table id=\"candidates\"><tr><th>candidate plan</th><th>cost</th><th>utility, gains summed</th><th>utility, options together</th><th>how</th></tr>\n");
        for row in candidate_rows(report) {
            let cells: Vec<String> = row
                .iter()
                .map(|c| format!("<td>{}</td>", escape(c)))
                .collect();
            let _ = writeln!(out, "<tr>{}</tr>", cells.concat());
        }
        out.push_str("</table>\n");
    }
    out.push_str(&frontier_chart(report));

    let _ = writeln!(out, "<h2>Options considered</h2>");
    let _ = writeln!(out, "<table id=\"options\"><tr><th>rank</th><th>option</th><th>cost ({currency})</th><th>accuracy gain</th><th>unfairness reduction</th><th>utility per 1,000</th><th>notes</th></tr>");
    for r in &a.ranking {
        let Some(o) = a.options.iter().find(|o| o.name == r.name) else {
            continue;
        };
        let _ = writeln!(
            out,
            "<tr><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{}</td><td>{:+.5}</td><td>{}</td></tr>",
            r.rank,
            escape(&o.name),
            money(o.estimate.cost),
            change_cell(&o.estimate.accuracy_gain, confidence),
            change_cell(&o.estimate.unfairness_reduction, confidence),
            r.utility_per_1000,
            escape(&o.flags.join("; "))
        );
    }
    out.push_str("</table>\n");
    out.push_str(&options_charts(a));
    out.push_str(&what_more_would_tell(a));
    let _ = writeln!(out, "<h2>Learning curves and each group's rates</h2>");
    out.push_str(&appraisal_curves(a));
    if !report.warnings.is_empty() {
        let _ = writeln!(out, "<h2>Warnings</h2>\n<ul>");
        for w in &report.warnings {
            let _ = writeln!(out, "<li>{}</li>", prose(w));
        }
        out.push_str("</ul>\n");
    }
    let _ = writeln!(out, "<h2>Cautions</h2>\n<div class=\"caution\"><ul>");
    for c in &report.cautions {
        let _ = writeln!(out, "<li>{}</li>", escape(c));
    }
    out.push_str("</ul></div>\n</body>\n</html>\n");
    out
}
