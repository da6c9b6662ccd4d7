//! The self-contained HTML report: the comparison table, a slope chart of ranks and a dot chart
//! of values per year (and group), and the methods note. Inline CSS and SVG only: no script, no
//! font and no image is fetched, so the file opens from a mail attachment without a network.

use crate::error::{Error, Result};
use crate::pipeline::RunSummary;
use crate::report::charts::{self, Point};
use crate::report::format::{column_texts, floats, ints, Rounding};
use crate::report::methods::MethodsNote;
use polars::prelude::*;
use std::collections::BTreeMap;

const STYLE: &str = "
body { margin: 0; background: #fbfaf7; color: #222; font: 15px/1.5 system-ui, -apple-system, 'Segoe UI', Roboto, sans-serif; }
main { max-width: 980px; margin: 0 auto; padding: 28px 24px 60px; }
h1, h2 { font-family: Georgia, 'Times New Roman', serif; font-weight: normal; }
h1 { font-size: 30px; margin: 0 0 6px; border-bottom: 3px solid #006d77; padding-bottom: 8px; }
h2 { font-size: 22px; margin: 34px 0 10px; }
p.lede { font-size: 17px; color: #444; }
table { border-collapse: collapse; width: 100%; font-size: 13px; background: #fff; }
th { text-align: left; border-bottom: 2px solid #222; padding: 6px 8px; }
td { border-bottom: 1px solid #e2e0da; padding: 5px 8px; vertical-align: top; }
td.n { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.up { color: #006d77; font-weight: 600; } td.down { color: #c45a00; font-weight: 600; }
figure { margin: 18px 0 26px; background: #fff; border: 1px solid #e2e0da; padding: 12px; }
figcaption { font-weight: 600; margin-bottom: 6px; }
p.source { font-size: 12px; color: #666; margin: 6px 0 0; }
.note { background: #fff; border-left: 4px solid #006d77; padding: 4px 18px 12px; }
code { font-size: 12px; background: #f1efe9; padding: 1px 4px; }
td.hash { font-family: ui-monospace, monospace; font-size: 11px; word-break: break-all; }
";

/// The group-years the report charts (the latest ones); the table holds every row.
const CHARTED: usize = 6;

fn escape(text: &str) -> String {
    super::format::html_escape(text)
}

/// Chart points per (group, year), ranked rows only.
fn partitions(frame: &DataFrame) -> BTreeMap<(String, String), Vec<Point>> {
    let names = column_texts(frame, "entity_name", Rounding::Full, false);
    let years = column_texts(frame, "year", Rounding::Full, false);
    let groups = column_texts(frame, "group", Rounding::Full, false);
    let (b, a) = (
        floats(frame, "value_baseline"),
        floats(frame, "value_adjusted"),
    );
    let (mb, ma) = (floats(frame, "moe_baseline"), floats(frame, "moe_adjusted"));
    let (rb, ra) = (ints(frame, "rank_baseline"), ints(frame, "rank_adjusted"));
    let mut out: BTreeMap<(String, String), Vec<Point>> = BTreeMap::new();
    for i in 0..frame.height() {
        if let (Some(baseline), Some(adjusted), Some(rank_baseline), Some(rank_adjusted)) =
            (b[i], a[i], rb[i], ra[i])
        {
            out.entry((groups[i].clone(), years[i].clone()))
                .or_default()
                .push(Point {
                    label: names[i].clone(),
                    baseline,
                    adjusted,
                    rank_baseline,
                    rank_adjusted,
                    moe_baseline: mb[i],
                    moe_adjusted: ma[i],
                });
        }
    }
    out
}

fn table_html(frame: &DataFrame, rounding: Rounding) -> String {
    let (header, rows) = super::reader_rows(frame, rounding);
    let numeric: Vec<bool> = header
        .iter()
        .map(|h| {
            matches!(
                *h,
                "as given" | "baseline" | "adjusted" | "rank before" | "rank after"
            )
        })
        .collect();
    let mut out = String::from("<table><thead><tr>");
    for h in &header {
        out.push_str(&format!("<th>{}</th>", escape(h)));
    }
    out.push_str("</tr></thead><tbody>");
    for row in rows {
        out.push_str("<tr>");
        for (i, cell) in row.iter().enumerate() {
            let class = if header[i] == "shift" && cell.starts_with('▲') {
                " class=\"up\""
            } else if header[i] == "shift" && cell.starts_with('▼') {
                " class=\"down\""
            } else if numeric[i] {
                " class=\"n\""
            } else {
                ""
            };
            out.push_str(&format!("<td{class}>{}</td>", escape(cell)));
        }
        out.push_str("</tr>");
    }
    out.push_str("</tbody></table>");
    out
}

fn methods_html(note: &MethodsNote) -> String {
    let mut out = format!(
        "<div class=\"note\"><p>{}</p><h3>Steps, in order</h3><ol>",
        escape(&note.in_brief.join(" "))
    );
    for step in &note.steps {
        out.push_str(&format!(
            "<li><strong>{}</strong>: {}. <code>{}</code></li>",
            escape(&step.name),
            escape(&step.summary),
            escape(&step.formula)
        ));
    }
    out.push_str("</ol><ul>");
    for detail in &note.details {
        out.push_str(&format!("<li>{}</li>", escape(detail)));
    }
    out.push_str("</ul><h3>Files read</h3><table><thead><tr><th>role</th><th>file</th><th>description</th><th>sha256</th></tr></thead><tbody>");
    for f in &note.files {
        out.push_str(&format!(
            "<tr><td>{}</td><td>{}</td><td>{}</td><td class=\"hash\">{}</td></tr>",
            escape(&f.role),
            escape(&f.file),
            escape(&f.description),
            escape(&f.sha256)
        ));
    }
    out.push_str("</tbody></table><h3>Flagged rows</h3>");
    if note.flagged.is_empty() {
        out.push_str("<p>No row was flagged.</p>");
    } else {
        out.push_str("<table><thead><tr><th>reason</th><th>rows</th></tr></thead><tbody>");
        for (reason, count) in &note.flagged {
            out.push_str(&format!(
                "<tr><td>{}</td><td class=\"n\">{count}</td></tr>",
                escape(reason)
            ));
        }
        out.push_str("</tbody></table>");
    }
    out.push_str("<h3>Cautions</h3><ul>");
    for caution in &note.cautions {
        out.push_str(&format!("<li>{}</li>", escape(caution)));
    }
    out.push_str("</ul>");
    if let Some(recipe) = &note.recipe {
        out.push_str(&format!(
            "<h3>Recipe</h3><p>{}</p><pre>{}</pre>",
            escape(&recipe.provenance()),
            escape(&recipe.text)
        ));
    }
    out.push_str("</div>");
    out
}

/// The charts section: a slope chart and a dot chart for each of the last `CHARTED`
/// group-years ranked, each with its source line, and a sentence where some are left out.
fn charts_html(frame: &DataFrame, summary: &RunSummary, source: &str) -> Result<String> {
    let baseline_name = summary.units.baseline_legend();
    let partitions = partitions(frame);
    let mut charts_html = String::new();
    let shown: Vec<_> = partitions.iter().rev().take(CHARTED).collect();
    if partitions.len() > CHARTED {
        let names: Vec<String> = shown
            .iter()
            .map(|((g, y), _)| {
                if g.is_empty() {
                    y.clone()
                } else {
                    format!("{g}, {y}")
                }
            })
            .collect();
        charts_html.push_str(&format!(
            "<p>The charts show {} of the {} group-years ranked ({}); the table below holds them all.</p>",
            CHARTED,
            partitions.len(),
            escape(&names.join("; "))
        ));
    }
    for ((group, year), points) in shown {
        let scope = if group.is_empty() {
            year.clone()
        } else {
            format!("{group}, {year}")
        };
        let moved = points
            .iter()
            .filter(|p| p.rank_baseline != p.rank_adjusted)
            .count();
        let slope = charts::slope_chart(
            points,
            &baseline_name,
            &format!("Ranks before and after adjustment, {scope}"),
            &format!(
                "Slope chart of {} entities; {moved} change rank when the adjustment is applied.",
                points.len()
            ),
        );
        let dots = charts::dot_chart(
            points,
            &baseline_name,
            &format!("baseline: {} | adjusted: {}", summary.units.baseline.words, summary.units.adjusted.words),
            &format!("Baseline and adjusted values, {scope}"),
            &format!("Dot chart of {} on one common axis; hollow dots {baseline_name}, filled dots adjusted.", if points.len() == 1 { "1 entity".to_string() } else { format!("{} entities", points.len()) }),
        );
        if slope.is_empty() || dots.is_empty() {
            return Err(Error::usage(
                "a chart could not be drawn",
                "report this as a bug, with the input that caused it",
            ));
        }
        charts_html.push_str(&format!(
            "<figure><figcaption>Ranks before and after adjustment, {scope}</figcaption>{slope}<p class=\"source\">{}</p></figure>\
             <figure><figcaption>Values on one axis, {scope}</figcaption>{dots}<p class=\"source\">{}</p></figure>",
            escape(source),
            escape(source),
            scope = escape(&scope),
        ));
    }
    if charts_html.is_empty() {
        charts_html.push_str("<p>No ranked rows to chart.</p>");
    }
    Ok(charts_html)
}

pub fn render(
    frame: &DataFrame,
    summary: &RunSummary,
    note: &MethodsNote,
    rounding: Rounding,
) -> Result<String> {
    let rounding = if rounding == Rounding::Full {
        Rounding::Reading
    } else {
        rounding
    };
    let source = format!(
        "Source: {}; reference tables: {}; computed by levelfield {}.",
        summary.input,
        if summary.references.is_empty() {
            "none".to_string()
        } else {
            summary.references.join("; ")
        },
        env!("CARGO_PKG_VERSION")
    );
    let charts_html = charts_html(frame, summary, &source)?;
    Ok(format!(
        "<!doctype html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\
         <title>levelfield report: {input}</title><style>{STYLE}</style></head><body><main>\
         <h1>How the comparison changes once figures are made comparable</h1>{notice}\
         <p class=\"lede\">Baseline: {baseline}. Adjusted: {adjusted}. {rows} rows, {flagged} flagged; none left out.</p>\
         <h2>Charts</h2>{charts_html}<h2>Table</h2>{table}<h2>Methods</h2>{methods}\
         <p class=\"source\">{source}</p></main></body></html>\n",
        input = escape(&summary.input),
        notice = note.in_brief.first().filter(|l| l.starts_with("INVENTED")).map(|l| format!("<p class=\"lede\"><strong>{}</strong></p>", escape(l))).unwrap_or_default(),
        baseline = escape(&summary.units.baseline.words),
        adjusted = escape(&summary.units.adjusted.words),
        rows = summary.rows_in,
        flagged = summary.rows_flagged,
        table = table_html(frame, rounding),
        methods = methods_html(note),
        source = escape(&source),
    ))
}
