//! One description of a report's view, written three ways: the terminal's plain text, Markdown
//! to paste into a proposal, and a self-contained HTML page. A report's renderer says what is
//! shown once (lines, section headings, tables, notes, lists, charts); the writers here say how.

use std::fmt::Write as _;

use super::Table;

/// One piece of a report's view.
enum Block {
    /// Lines of text: in the terminal as written, elsewhere one paragraph (lines kept apart).
    Text(String),
    /// A section's heading: a blank line before it in the terminal.
    Heading(String),
    Table(Table),
    /// A remark under a table or heading: indented by two spaces in the terminal.
    Note(String),
    /// An empty line in the terminal, nothing elsewhere.
    Gap,
    /// A bulleted list under a heading of its own.
    List(String, Vec<String>),
    /// An SVG chart, under a heading of its own where one is given: in the HTML only.
    Chart(Option<String>, String),
    /// A block the terminal leaves out unless asked for its detail (the full tables a line
    /// summarises), written in the Markdown and HTML.
    Detail(Box<Block>),
    /// A remark for the terminal's short view only (where to find what it leaves out).
    Brief(String),
}

impl Block {
    /// The block as the files show it: a detail block is its content; a brief one is not
    /// shown.
    fn in_files(&self) -> Option<&Block> {
        match self {
            Block::Detail(inner) => Some(inner),
            Block::Brief(_) => None,
            block => Some(block),
        }
    }
}

/// A report's view, built once and written as text, Markdown or HTML.
pub struct Document {
    title: String,
    blocks: Vec<Block>,
}

impl Document {
    /// An empty view whose Markdown and HTML carry `title` as their main heading.
    pub(super) fn new(title: &str) -> Self {
        Document {
            title: title.to_string(),
            blocks: Vec::new(),
        }
    }

    pub(super) fn text(&mut self, text: impl Into<String>) {
        self.blocks.push(Block::Text(text.into()));
    }

    pub(super) fn heading(&mut self, text: impl Into<String>) {
        self.blocks.push(Block::Heading(text.into()));
    }

    pub(super) fn table(&mut self, table: Table) {
        self.blocks.push(Block::Table(table));
    }

    pub(super) fn note(&mut self, text: impl Into<String>) {
        self.blocks.push(Block::Note(text.into()));
    }

    pub(super) fn gap(&mut self) {
        self.blocks.push(Block::Gap);
    }

    /// A list under its heading; nothing at all when `items` is empty.
    pub(super) fn list(&mut self, heading: &str, items: &[String]) {
        if !items.is_empty() {
            self.blocks
                .push(Block::List(heading.to_string(), items.to_vec()));
        }
    }

    pub(super) fn chart(&mut self, heading: Option<&str>, svg: String) {
        self.blocks
            .push(Block::Chart(heading.map(str::to_string), svg));
    }

    /// A remark shown in the terminal's short view only, as a note.
    pub(super) fn brief(&mut self, text: impl Into<String>) {
        self.blocks.push(Block::Brief(text.into()));
    }

    /// Adds what `build` adds as detail: in the files, and in the terminal only when asked
    /// for ([`Document::plain_detailed`]).
    pub(super) fn detail(&mut self, build: impl FnOnce(&mut Document)) {
        let mut inner = Document::new("");
        build(&mut inner);
        self.blocks
            .extend(inner.blocks.into_iter().map(|b| Block::Detail(Box::new(b))));
    }

    /// The terminal view, without the detail blocks.
    pub fn plain(&self) -> String {
        self.terminal(false)
    }

    /// The terminal view with every detail block.
    pub fn plain_detailed(&self) -> String {
        self.terminal(true)
    }

    fn terminal(&self, detailed: bool) -> String {
        let mut out = String::new();
        let shown = self.blocks.iter().filter_map(|b| match b {
            Block::Detail(inner) => detailed.then_some(inner.as_ref()),
            Block::Brief(_) if detailed => None,
            b => Some(b),
        });
        for block in shown {
            match block {
                Block::Text(t) => {
                    let _ = writeln!(out, "{t}");
                }
                Block::Heading(h) => {
                    let _ = writeln!(out, "\n{h}");
                }
                Block::Table(t) => t.render(&mut out),
                Block::Note(n) | Block::Brief(n) => {
                    let _ = writeln!(out, "  {n}");
                }
                Block::Gap => out.push('\n'),
                Block::List(h, items) => {
                    let _ = writeln!(out, "\n{h}");
                    for i in items {
                        let _ = writeln!(out, "  - {i}");
                    }
                }
                Block::Chart(..) | Block::Detail(_) => {}
            }
        }
        out
    }

    /// The view as Markdown (GitHub's tables).
    pub fn markdown(&self) -> String {
        let mut out = format!("# {}\n\n", markdown_text(&self.title));
        let paragraph = |text: &str| {
            text.lines()
                .map(|l| markdown_text(l.trim()))
                .collect::<Vec<_>>()
                .join("  \n")
        };
        let mut after_text = false;
        for block in self.blocks.iter().filter_map(Block::in_files) {
            if after_text && matches!(block, Block::Text(_)) {
                // Lines of text in a row stay one paragraph, broken at each line.
                out.truncate(out.len() - 1);
                out.insert_str(out.len() - 1, "  ");
            }
            after_text = matches!(block, Block::Text(_));
            match block {
                Block::Text(t) | Block::Note(t) => {
                    let _ = writeln!(out, "{}\n", paragraph(t));
                }
                Block::Heading(h) => {
                    let _ = writeln!(out, "## {}\n", markdown_text(h));
                }
                Block::Table(t) => {
                    let row = |cells: &[String]| {
                        let cells: Vec<String> = cells.iter().map(|c| markdown_text(c)).collect();
                        format!("| {} |", cells.join(" | "))
                    };
                    let _ = writeln!(out, "{}", row(&t.header));
                    let rule: Vec<String> = (0..t.header.len())
                        .map(|i| {
                            if t.numeric(i) {
                                "---:".into()
                            } else {
                                "---".into()
                            }
                        })
                        .collect();
                    let _ = writeln!(out, "|{}|", rule.join("|"));
                    for r in &t.rows {
                        let _ = writeln!(out, "{}", row(r));
                    }
                    out.push('\n');
                }
                // Detail and brief blocks are sorted out by `in_files`.
                Block::Gap | Block::Chart(..) | Block::Detail(_) | Block::Brief(_) => {}
                Block::List(h, items) => {
                    let _ = writeln!(out, "## {}\n", markdown_text(h));
                    for i in items {
                        let _ = writeln!(out, "- {}", markdown_text(i));
                    }
                    out.push('\n');
                }
            }
        }
        out
    }

    /// The view as one self-contained HTML page.
    pub fn html(&self) -> String {
        let mut out = String::new();
        let _ = writeln!(
            out,
            "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n<title>{}</title>\n<style>{}</style>\n</head>\n<body>\n<h1>{}</h1>",
            escape(&self.title),
            STYLE,
            escape(&self.title)
        );
        let mut after_text = false;
        for block in self.blocks.iter().filter_map(Block::in_files) {
            let go_on = after_text && matches!(block, Block::Text(_));
            after_text = matches!(block, Block::Text(_));
            match block {
                Block::Text(t) => {
                    // Lines of text in a row stay one paragraph, broken at each line.
                    if go_on {
                        out.truncate(out.len() - "</p>\n".len());
                        out.push_str("<br>");
                    } else {
                        out.push_str("<p>");
                    }
                    let lines: Vec<String> = t.lines().map(|l| prose(l.trim())).collect();
                    let _ = writeln!(out, "{}</p>", lines.join("<br>"));
                }
                Block::Note(n) => {
                    let lines: Vec<String> = n.lines().map(|l| prose(l.trim())).collect();
                    let _ = writeln!(out, "<p class=\"remark\">{}</p>", lines.join("<br>"));
                }
                Block::Heading(h) => {
                    let _ = writeln!(out, "<h2>{}</h2>", escape(h));
                }
                Block::Table(t) => {
                    out.push_str("<table>\n<tr>");
                    for h in &t.header {
                        let _ = write!(out, "<th>{}</th>", escape(h));
                    }
                    out.push_str("</tr>\n");
                    for r in &t.rows {
                        out.push_str("<tr>");
                        for (i, c) in r.iter().enumerate() {
                            let class = if t.numeric(i) { " class=\"n\"" } else { "" };
                            let _ = write!(out, "<td{class}>{}</td>", escape(c));
                        }
                        out.push_str("</tr>\n");
                    }
                    out.push_str("</table>\n");
                }
                Block::Gap => {}
                Block::List(h, items) => {
                    let caution = h == "Cautions";
                    let _ = writeln!(out, "<h2>{}</h2>", escape(h));
                    if caution {
                        out.push_str("<div class=\"caution\">");
                    }
                    out.push_str("<ul>\n");
                    for i in items {
                        let _ = writeln!(out, "<li>{}</li>", prose(i));
                    }
                    out.push_str("</ul>\n");
                    if caution {
                        out.push_str("</div>\n");
                    }
                }
                Block::Chart(heading, svg) => {
                    if let Some(h) = heading {
                        let _ = writeln!(out, "<h2>{}</h2>", escape(h));
                    }
                    let _ = writeln!(out, "<div class=\"chart\">{svg}</div>");
                }
                // Sorted out by `in_files`.
                Block::Detail(_) | Block::Brief(_) => {}
            }
        }
        out.push_str("</body>\n</html>\n");
        out
    }
}

impl Table {
    /// Whether column `i` holds numbers (every cell starts as one, or is "n/a"), to be aligned
    /// right; the first column never is.
    fn numeric(&self, i: usize) -> bool {
        i > 0
            && self.rows.iter().all(|r| {
                r.get(i).is_none_or(|c| {
                    c.is_empty()
                        || c == "n/a"
                        || c.starts_with(|ch: char| ch.is_ascii_digit() || "+-−".contains(ch))
                })
            })
    }
}

/// The page style of every HTML report.
pub const STYLE: &str = "body{font-family:Helvetica,Arial,sans-serif;margin:2em auto;max-width:980px;color:#222}\
    .doubt{background:#fff4e0;border-left:4px solid #d08000;padding:.5em 1em}\
    table{border-collapse:collapse;margin:1em 0}td,th{border:1px solid #ccc;padding:4px 8px;text-align:left;font-size:13px}\
    td.n{text-align:right;white-space:nowrap}code{white-space:nowrap}th{background:#f2f2f2}.remark{color:#444;font-size:14px}h2{font-size:1.25em;margin-top:1.4em}\
    .chart{display:block;margin:1em 0;background:#fafafa}.title{font-size:14px;font-weight:bold}\
    .label{font-size:12px}.tick{font-size:10px;fill:#444}.caution{background:#fff7e6;border-left:4px solid #e0a030;padding:.5em 1em}\
    .charts{display:flex;flex-wrap:wrap;gap:10px}";

/// Text escaped for HTML.
pub fn escape(text: &str) -> String {
    text.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

/// Running text for HTML: escaped, and each command-line flag (`--features`) kept whole as
/// code, so that a browser never breaks a line between its two dashes.
pub fn prose(text: &str) -> String {
    let mut out = String::new();
    let mut rest = text;
    while let Some(at) = rest.find("--") {
        let starts_word = rest[..at]
            .chars()
            .next_back()
            .is_none_or(|c| c.is_whitespace() || "('\"`".contains(c));
        let flag_len = rest[at + 2..]
            .find(|c: char| !(c.is_ascii_alphanumeric() || c == '-'))
            .unwrap_or(rest.len() - at - 2);
        if !starts_word || flag_len == 0 {
            out.push_str(&escape(&rest[..at + 2]));
            rest = &rest[at + 2..];
            continue;
        }
        out.push_str(&escape(&rest[..at]));
        let _ = write!(out, "<code>{}</code>", &rest[at..at + 2 + flag_len]);
        rest = &rest[at + 2 + flag_len..];
    }
    out.push_str(&escape(rest));
    out
}

/// Text that Markdown shows as written: the characters that would start a table cell,
/// emphasis or an HTML tag are escaped.
fn markdown_text(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.chars() {
        if matches!(c, '\\' | '|' | '*' | '<' | '>' | '`') {
            out.push('\\');
        }
        out.push(c);
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn one_view_written_three_ways() {
        // Constructed view, no source needed.
        let mut d = Document::new("Check <1>");
        d.text("first line\nsecond line");
        d.text("third line");
        d.heading("Groups");
        let mut t = Table::new(&["group", "rate"]);
        t.row(vec!["a|b".into(), "0.5 *".into()]);
        d.table(t);
        d.note("a note");
        d.list("Cautions", &["care".to_string()]);
        d.note("name it in --features, not -- alone or a--b");
        d.list("Warnings", &[]);
        d.chart(None, "<svg></svg>".into());
        let plain = d.plain();
        assert_eq!(
            plain,
            "first line\nsecond line\nthird line\n\nGroups\n  group   rate\n  -----  -----\n  a|b    0.5 *\n  a note\n\nCautions\n  - care\n  name it in --features, not -- alone or a--b\n"
        );
        let md = d.markdown();
        assert!(md.starts_with("# Check \\<1\\>\n\nfirst line  \nsecond line  \nthird line\n\n## Groups\n\n| group | rate |\n|---|---:|\n| a\\|b | 0.5 \\* |\n"));
        assert!(md.contains("## Cautions\n\n- care\n") && !md.contains("Warnings"));
        let html = d.html();
        assert!(html.contains("<h1>Check &lt;1&gt;</h1>"));
        assert!(html.contains("<p>first line<br>second line<br>third line</p>"));
        assert!(html.contains("<td>a|b</td><td class=\"n\">0.5 *</td>"));
        assert!(html.contains("<div class=\"chart\"><svg></svg></div>"));
        assert!(html.contains("name it in <code>--features</code>, not -- alone or a--b"));
        assert!(html.contains("<div class=\"caution\"><ul>\n<li>care</li>"));
    }
}
