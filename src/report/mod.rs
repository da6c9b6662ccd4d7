//! Writing results: the terminal table, csv, Markdown and JSON, written atomically, and the
//! run summary on stderr.
//!
//! Machine formats (csv, json) carry every output column at full precision; reader formats
//! (table, md) show the columns an editor reads, rounded by the one rule in `format`.

pub mod charts;
pub mod html;
pub mod methods;
pub mod summary;

pub use crate::csv_writer::{render_csv, write_csv};
use crate::error::{Error, Result};
pub use crate::format;
use crate::pipeline::RunSummary;
pub use crate::staging::{persist_atomically, temp_beside, write_atomically, Staging};
use format::{column_json, column_texts, Rounding};
use polars::prelude::*;
use std::path::Path;
use tabled::settings::{object::Columns, Alignment, Style};

/// Output formats.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Format {
    /// A rounded table for reading on a terminal.
    Table,
    /// Every column at full precision.
    Csv,
    /// A Markdown table for a memo or a newsroom CMS.
    Md,
    /// Records with a metadata object (steps, references, summary).
    Json,
    /// The methods note (Markdown) instead of the table.
    Methods,
    /// One row per entity and year, one column per stage: the shape charting tools take.
    ChartCsv,
    /// Typed columns in an Apache Parquet file (needs -o).
    Parquet,
}

impl Format {
    /// The format implied by a file name, if any.
    pub fn from_path(path: &Path) -> Option<Format> {
        match path.extension()?.to_str()?.to_ascii_lowercase().as_str() {
            "csv" => Some(Format::Csv),
            "md" | "markdown" => Some(Format::Md),
            "json" => Some(Format::Json),
            "txt" => Some(Format::Table),
            "parquet" => Some(Format::Parquet),
            _ => None,
        }
    }

    /// A data file (csv, json, Parquet): pure data, whose columns `--write-columns` chooses.
    pub fn is_data_file(self) -> bool {
        matches!(self, Format::Csv | Format::Json | Format::Parquet)
    }

    /// The file extension a file of this format gets when levelfield names it.
    pub fn extension(self) -> &'static str {
        match self {
            Format::Table => "txt",
            Format::Csv | Format::ChartCsv => "csv",
            Format::Md | Format::Methods => "md",
            Format::Json => "json",
            Format::Parquet => "parquet",
        }
    }
}

/// Renders the frame in `format`.
pub fn render(
    frame: &DataFrame,
    summary: &RunSummary,
    format: Format,
    rounding: Rounding,
    guard: bool,
) -> Result<String> {
    Ok(match format {
        Format::Table => render_table(frame, summary, reader_rounding(rounding)),
        Format::Md => render_markdown(frame, summary, reader_rounding(rounding)),
        Format::Csv => render_csv(frame, rounding, guard)?,
        Format::Json => render_json(frame, summary, rounding)?,
        Format::Methods | Format::ChartCsv | Format::Parquet => {
            render_chart_csv(frame, rounding, guard)?
        }
    })
}

fn reader_rounding(rounding: Rounding) -> Rounding {
    match rounding {
        Rounding::Full => Rounding::Reading,
        other => other,
    }
}

/// One row per entity, year and group, one column per stage (input, each step, baseline,
/// adjusted) and the ranks: the wide shape that charting tools take without reshaping.
pub fn render_chart_csv(frame: &DataFrame, rounding: Rounding, guard: bool) -> Result<String> {
    let keep: Vec<String> = frame
        .get_column_names()
        .iter()
        .map(|n| n.to_string())
        .filter(|n| {
            [
                NOTICE_COLUMN,
                "entity_name",
                "entity_code",
                "year",
                "group",
                "value",
            ]
            .contains(&n.as_str())
                || (n.starts_with("value_") && n != "value_input")
                || n.starts_with("moe_")
                || n.starts_with("rank_")
        })
        .collect();
    let narrow = frame
        .select(keep)
        .map_err(Error::engine("selecting chart columns"))?;
    render_csv(&narrow, rounding, guard)
}

pub use crate::output::NOTICE_COLUMN;

pub fn render_json(frame: &DataFrame, summary: &RunSummary, rounding: Rounding) -> Result<String> {
    let names: Vec<String> = frame
        .get_column_names()
        .iter()
        .map(|n| n.to_string())
        .collect();
    let columns: Vec<Vec<serde_json::Value>> = names
        .iter()
        .map(|n| column_json(frame, n, rounding))
        .collect();
    let mut out = String::from("{\n  \"metadata\": ");
    let mut metadata = serde_json::json!({
        "tool": "levelfield",
        "version": env!("CARGO_PKG_VERSION"),
        "summary": summary,
        "cautions": summary.cautions,
    });
    if let (Some(notice), Some(map)) = (&summary.notice, metadata.as_object_mut()) {
        map.insert("notice".into(), notice.clone().into());
    }
    out.push_str(&serde_json::to_string(&metadata).unwrap_or_default());
    out.push_str(",\n  \"rows\": [");
    for row in 0..frame.height() {
        out.push_str(if row == 0 { "\n    {" } else { ",\n    {" });
        for (i, (name, cells)) in names.iter().zip(&columns).enumerate() {
            if i > 0 {
                out.push_str(", ");
            }
            out.push_str(&serde_json::to_string(name).unwrap_or_default());
            out.push_str(": ");
            out.push_str(&serde_json::to_string(&cells[row]).unwrap_or_default());
        }
        out.push('}');
    }
    out.push_str("\n  ]\n}\n");
    Ok(out)
}

/// The columns a reader sees, with their headers.
pub(crate) fn reader_rows(
    frame: &DataFrame,
    rounding: Rounding,
) -> (Vec<&'static str>, Vec<Vec<String>>) {
    let has_group = frame
        .column("group")
        .map(|c| c.null_count() < c.len())
        .unwrap_or(false);
    let names = column_texts(frame, "entity_name", rounding, true);
    let inputs = column_texts(frame, "entity_input", rounding, true);
    let years = column_texts(frame, "year", rounding, true);
    let groups = column_texts(frame, "group", rounding, true);
    let given = column_texts(frame, "value_input", rounding, true);
    let uncertain = frame.column("moe_adjusted").is_ok();
    let with_margin = |value: &str, margin: &str| -> Vec<String> {
        let values = column_texts(frame, value, rounding, true);
        if !uncertain {
            return values;
        }
        let margins = column_texts(frame, margin, rounding, true);
        values
            .into_iter()
            .zip(margins)
            .map(|(v, m)| {
                if v.is_empty() || m.is_empty() {
                    v
                } else {
                    format!("{v} ± {m}")
                }
            })
            .collect()
    };
    let with_range = |rank: &str, low: &str, high: &str| -> Vec<String> {
        let ranks = column_texts(frame, rank, rounding, false);
        if !uncertain {
            return ranks;
        }
        let lows = column_texts(frame, low, rounding, false);
        let highs = column_texts(frame, high, rounding, false);
        (0..ranks.len())
            .map(|i| match (ranks[i].is_empty(), lows[i] == highs[i]) {
                (true, _) => String::new(),
                (false, true) => format!("{} ({})", ranks[i], lows[i]),
                (false, false) => format!("{} ({}–{})", ranks[i], lows[i], highs[i]),
            })
            .collect()
    };
    let baseline = with_margin("value_baseline", "moe_baseline");
    let adjusted = with_margin("value_adjusted", "moe_adjusted");
    let rank_b = with_range("rank_baseline", "rank_baseline_low", "rank_baseline_high");
    let mut rank_a = with_range("rank_adjusted", "rank_adjusted_low", "rank_adjusted_high");
    if uncertain {
        let ties = column_texts(frame, "tied_with", rounding, false);
        for (rank, tie) in rank_a.iter_mut().zip(ties) {
            if !tie.is_empty() {
                rank.push_str(" ≈");
            }
        }
    }
    let shift = column_texts(frame, "rank_shift", rounding, false);
    let flags = column_texts(frame, "flags", rounding, false);
    let mut header = vec!["entity", "year"];
    if has_group {
        header.push("group");
    }
    header.extend([
        "as given",
        "baseline",
        "adjusted",
        "rank before",
        "rank after",
        "shift",
        "flags",
    ]);
    let rows = (0..frame.height())
        .map(|i| {
            let entity = if names[i].is_empty() {
                inputs[i].clone()
            } else {
                names[i].clone()
            };
            let mut row = vec![entity, years[i].clone()];
            if has_group {
                row.push(groups[i].clone());
            }
            row.extend([
                given[i].trim().to_string(),
                baseline[i].clone(),
                adjusted[i].clone(),
                rank_b[i].clone(),
                rank_a[i].clone(),
                shift_marker(&shift[i]),
                flags[i].replace(';', ", "),
            ]);
            row
        })
        .collect();
    (header, rows)
}

/// `▲ 2` for a move up, `▼ 3` for a move down, `=` for none, `–` when not ranked.
pub fn shift_marker(shift: &str) -> String {
    match shift.parse::<i64>() {
        Ok(0) => "=".into(),
        Ok(n) if n > 0 => format!("▲ {n}"),
        Ok(n) => format!("▼ {}", -n),
        Err(_) => "–".into(),
    }
}

pub fn render_table(frame: &DataFrame, summary: &RunSummary, rounding: Rounding) -> String {
    let (header, rows) = reader_rows(frame, rounding);
    let mut builder = tabled::builder::Builder::default();
    builder.push_record(header.iter().map(|h| h.to_string()));
    for row in rows {
        builder.push_record(row.iter().map(|c| format::one_line(c)));
    }
    let mut table = builder.build();
    let numeric_from = header.iter().position(|h| *h == "as given").unwrap_or(2);
    table.with(Style::sharp());
    table.modify(
        Columns::new(numeric_from..numeric_from + 5),
        Alignment::right(),
    );
    let mut out = table.to_string();
    out.push('\n');
    out.push_str(&summary.units.line());
    out.push('\n');
    out.push_str(&uncertainty_legend(frame));
    out.push_str("cautions: read them before publishing, in the methods note (--methods FILE)\n");
    out
}

/// How to read margins, rank ranges and the tie mark, when they are shown.
fn uncertainty_legend(frame: &DataFrame) -> String {
    if frame.column("moe_adjusted").is_err() {
        return String::new();
    }
    "± margin of error; rank (low–high): the ranks the entity could hold given every margin; \
     ≈ not significantly different from a rank neighbour; a shift flagged within_uncertainty is not a finding\n"
        .to_string()
}

pub fn render_markdown(frame: &DataFrame, summary: &RunSummary, rounding: Rounding) -> String {
    let (header, rows) = reader_rows(frame, rounding);
    let numeric_from = header.iter().position(|h| *h == "as given").unwrap_or(2);
    let mut out = match &summary.notice {
        Some(notice) => format!("**{}**\n\n", format::one_line(notice)),
        None => String::new(),
    };
    out.push_str(&format!("| {} |\n|", header.join(" | ")));
    for i in 0..header.len() {
        out.push_str(if i >= numeric_from && i < numeric_from + 5 {
            "---:|"
        } else {
            "---|"
        });
    }
    out.push('\n');
    for row in rows {
        let cells: Vec<String> = row
            .iter()
            .map(|c| format::one_line(c).replace('|', "\\|"))
            .collect();
        out.push_str(&format!("| {} |\n", cells.join(" | ")));
    }
    out.push('\n');
    out.push_str(&summary.units.line());
    out.push('\n');
    out.push_str(&uncertainty_legend(frame));
    out.push_str("\n**Cautions**\n\n");
    for caution in &summary.cautions {
        out.push_str(&format!("- {caution}\n"));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn shift_markers() {
        assert_eq!(shift_marker("2"), "▲ 2");
        assert_eq!(shift_marker("-3"), "▼ 3");
        assert_eq!(shift_marker("0"), "=");
        assert_eq!(shift_marker(""), "–");
    }
}
