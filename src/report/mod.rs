//! Writing results: the terminal table, csv, Markdown and JSON, written atomically, and the
//! run summary on stderr.
//!
//! Machine formats (csv, json) carry every output column at full precision; reader formats
//! (table, md) show the columns an editor reads, rounded by the one rule in `format`.

pub mod charts;
pub mod format;
pub mod html;
pub mod methods;
pub mod summary;

use crate::error::{Error, Result};
use crate::pipeline::RunSummary;
use format::{column_json, column_texts, Rounding};
use polars::prelude::*;
use std::io::Write;
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

/// The frame as csv text; `guard` neutralises text cells a spreadsheet would run as formulas.
pub fn render_csv(frame: &DataFrame, rounding: Rounding, guard: bool) -> Result<String> {
    let mut bytes = Vec::new();
    write_csv(frame, rounding, true, guard, &mut bytes)?;
    Ok(String::from_utf8_lossy(&bytes).into_owned())
}

/// Rows formatted at a time: the cell texts of one slice are held, not those of the frame.
const CSV_SLICE_ROWS: usize = 65_536;

/// Writes the frame as csv (with or without the header line) to `out`, a slice at a time.
/// With `guard`, a text cell that a spreadsheet would take for a formula (it starts with `=`,
/// `+`, `-`, `@`, a tab or a carriage return and is not a number) is written with a leading
/// `'`, the common defence of csv exports (OWASP, "CSV Injection"); numbers are never touched.
pub fn write_csv(
    frame: &DataFrame,
    rounding: Rounding,
    header: bool,
    guard: bool,
    out: &mut dyn std::io::Write,
) -> Result<()> {
    let names: Vec<String> = frame
        .get_column_names()
        .iter()
        .map(|n| n.to_string())
        .collect();
    let io_error = |e: csv::Error| {
        Error::io(
            "the csv output",
            "write",
            std::io::Error::other(e.to_string()),
        )
    };
    let mut writer = csv::WriterBuilder::new()
        .terminator(csv::Terminator::Any(b'\n'))
        .buffer_capacity(1 << 16)
        .from_writer(out);
    if header {
        writer.write_record(&names).map_err(io_error)?;
    }
    let mut start = 0;
    let mut cell = String::new();
    while start < frame.height() {
        let slice = frame.slice(start as i64, CSV_SLICE_ROWS);
        let mut columns: Vec<format::CellSource> = names
            .iter()
            .map(|n| format::CellSource::new(&slice, n, rounding))
            .collect();
        for _ in 0..slice.height() {
            for column in columns.iter_mut() {
                column.next_into(rounding, guard, &mut cell);
                writer.write_field(cell.as_bytes()).map_err(io_error)?;
            }
            writer.write_record(None::<&[u8]>).map_err(io_error)?;
        }
        start += slice.height();
    }
    writer
        .flush()
        .map_err(|e| Error::io("the csv output", "write", e))?;
    Ok(())
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

/// The column that carries a run's notice in its data files.
pub const NOTICE_COLUMN: &str = "data_notice";

/// The frame with the notice as its first column, on every row.
pub fn with_notice_column(frame: &DataFrame, notice: &str) -> Result<DataFrame> {
    let mut marked = frame.clone();
    marked
        .insert_column(
            0,
            Column::new(NOTICE_COLUMN.into(), vec![notice; frame.height()]),
        )
        .map_err(Error::engine("adding the notice column"))?;
    Ok(marked)
}

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

/// The outputs of one run, each written to a temporary file beside its destination, then
/// renamed into place together by `commit` once every one of them is complete. Dropped before
/// `commit`, it leaves nothing behind (and an earlier output stays as it was).
#[derive(Default)]
pub struct Staging {
    files: Vec<(tempfile::NamedTempFile, std::path::PathBuf)>,
}

impl Staging {
    pub fn new() -> Staging {
        Staging::default()
    }

    /// Text to `path`.
    pub fn text(&mut self, path: &Path, text: &str) -> Result<()> {
        let mut temp = temp_beside(path)?;
        temp.write_all(text.as_bytes())
            .map_err(|e| Error::io(path.display(), "write the output", e))?;
        self.file(temp, path);
        Ok(())
    }

    /// The frame as csv to `path`, without holding the whole text in memory.
    pub fn csv(
        &mut self,
        path: &Path,
        frame: &DataFrame,
        rounding: Rounding,
        guard: bool,
    ) -> Result<()> {
        let temp = temp_beside(path)?;
        let mut buffered = std::io::BufWriter::with_capacity(1 << 20, temp);
        write_csv(frame, rounding, true, guard, &mut buffered)?;
        let temp = buffered
            .into_inner()
            .map_err(|e| Error::io(path.display(), "write the output", e.into_error()))?;
        self.file(temp, path);
        Ok(())
    }

    /// The frame as Parquet (typed columns, full precision) to `path`.
    pub fn parquet(&mut self, path: &Path, frame: &DataFrame) -> Result<()> {
        let temp = temp_beside(path)?;
        let mut frame = frame.clone();
        ParquetWriter::new(temp.as_file())
            .finish(&mut frame)
            .map_err(Error::engine("writing Parquet"))?;
        self.file(temp, path);
        Ok(())
    }

    /// A temporary file written elsewhere (the streaming csv), to be renamed to `path`.
    pub fn file(&mut self, temp: tempfile::NamedTempFile, path: &Path) {
        self.files.push((temp, path.to_path_buf()));
    }

    /// Renames every output into place, in the order staged; returns the paths written.
    pub fn commit(self) -> Result<Vec<std::path::PathBuf>> {
        let mut written = Vec::with_capacity(self.files.len());
        for (temp, path) in self.files {
            persist_atomically(temp, &path)?;
            written.push(path);
        }
        Ok(written)
    }
}

/// Writes `text` to `path` through a temporary file in the same folder and a rename, so a
/// failure never leaves a half-written file and an earlier output stays intact.
pub fn write_atomically(path: &Path, text: &str) -> Result<()> {
    let mut staging = Staging::new();
    staging.text(path, text)?;
    staging.commit().map(|_| ())
}

/// A temporary file in the folder of `path` (so the final rename stays on one file system).
pub fn temp_beside(path: &Path) -> Result<tempfile::NamedTempFile> {
    if path.is_dir() {
        return Err(Error::io(
            path.display(),
            "write the output",
            std::io::Error::other("this path is a folder; give a file name"),
        ));
    }
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => std::path::PathBuf::from("."),
    };
    let temp = tempfile::NamedTempFile::new_in(&dir)
        .map_err(|e| Error::io(dir.display(), "create a temporary file in", e))?;
    crate::cleanup::register(temp.path());
    Ok(temp)
}

/// Moves a finished temporary file (created in the target's folder) over `path`.
pub fn persist_atomically(temp: tempfile::NamedTempFile, path: &Path) -> Result<()> {
    // A temporary file is private (0600); the finished output gets the usual 0644, or the
    // permissions of the file it replaces.
    #[cfg(unix)]
    {
        use std::os::unix::fs::PermissionsExt;
        let mode = std::fs::metadata(path)
            .map(|m| m.permissions().mode())
            .unwrap_or(0o644);
        let _ = temp
            .as_file()
            .set_permissions(std::fs::Permissions::from_mode(mode));
    }
    temp.as_file()
        .sync_all()
        .map_err(|e| Error::io(path.display(), "write the output", e))?;
    crate::cleanup::forget(temp.path());
    temp.persist(path).map_err(|e| {
        Error::io(
            path.display(),
            "move the finished output into place",
            e.error,
        )
    })?;
    Ok(())
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

    #[test]
    fn atomic_write_replaces_and_refuses_folders() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("out.csv");
        write_atomically(&path, "a\n").unwrap();
        write_atomically(&path, "b\n").unwrap();
        assert_eq!(std::fs::read_to_string(&path).unwrap(), "b\n");
        assert!(write_atomically(dir.path(), "x").is_err());
        assert_eq!(
            std::fs::read_dir(dir.path()).unwrap().count(),
            1,
            "no temporary file left behind"
        );
    }
}
