//! Spreadsheet input (.xlsx, .xlsm, .xlsb, .xls, .ods) through calamine. A sheet becomes
//! delimited text with one line per sheet row, so the same table reader finds the header past
//! title rows, sets aside notes below the table, and names sheet rows in its messages. Formulas
//! are never evaluated: cells are read as the values the spreadsheet program last stored, and
//! the summary lists the rows that hold formulas.

use crate::error::{Error, Location, Result};
use calamine::{open_workbook_auto_from_rs, Data, Reader};
use std::io::Cursor;

const EXTENSIONS: &[&str] = &["xlsx", "xlsm", "xlsb", "xls", "ods"];

pub fn is_spreadsheet(file: &str) -> bool {
    std::path::Path::new(file)
        .extension()
        .and_then(|e| e.to_str())
        .is_some_and(|e| EXTENSIONS.contains(&e.to_ascii_lowercase().as_str()))
}

/// The chosen sheet as CSV text (line N = sheet row N) and notes for the summary.
pub fn sheet_to_csv(
    bytes: &[u8],
    file: &str,
    sheet: Option<&str>,
    header_row: Option<usize>,
) -> Result<(String, Vec<String>, Vec<usize>)> {
    let unreadable = |e: calamine::Error| {
        Error::bad_input(
            Location::file(file),
            format!("the spreadsheet cannot be read: {e}"),
            "an .xlsx, .xlsm, .xlsb, .xls or .ods workbook",
            "open it in a spreadsheet program and save it again, or export the sheet as CSV",
        )
    };
    let mut workbook =
        open_workbook_auto_from_rs(Cursor::new(bytes.to_vec())).map_err(unreadable)?;
    let names = workbook.sheet_names();
    let name = match sheet {
        None => names
            .first()
            .cloned()
            .ok_or_else(|| unreadable(calamine::Error::Msg("the workbook has no sheet")))?,
        Some(wanted) => match (
            names.iter().find(|n| n.as_str() == wanted),
            wanted.parse::<usize>(),
        ) {
            (Some(n), _) => n.clone(),
            (None, Ok(index)) if index >= 1 && index <= names.len() => names[index - 1].clone(),
            _ => {
                return Err(Error::usage(
                    format!("{file} has no sheet \"{wanted}\""),
                    format!(
                        "pass --sheet with one of: {} (or its position, from 1)",
                        names.join(", ")
                    ),
                ))
            }
        },
    };
    let range = workbook.worksheet_range(&name).map_err(unreadable)?;
    let formula_rows: Vec<usize> = workbook
        .worksheet_formula(&name)
        .map(|formulas| {
            let start = formulas.start().map(|(r, _)| r as usize).unwrap_or(0);
            formulas
                .rows()
                .enumerate()
                .filter(|(_, row)| row.iter().any(|f| !f.is_empty()))
                .map(|(i, _)| start + i + 1)
                .collect()
        })
        .unwrap_or_default();
    let first_row = range.start().map(|(r, _)| r as usize).unwrap_or(0);
    let first_column = range.start().map(|(_, c)| c as usize).unwrap_or(0);
    let mut writer = csv::WriterBuilder::new()
        .flexible(true)
        .terminator(csv::Terminator::Any(b'\n'))
        .from_writer(Vec::new());
    let mut text = "\n".repeat(first_row);
    let mut skipped_above = 0;
    for (i, row) in range.rows().enumerate() {
        let sheet_row = first_row + i + 1;
        if header_row.is_some_and(|h| sheet_row < h) {
            skipped_above += 1;
            writer.write_record([""]).ok();
            continue;
        }
        let mut cells: Vec<String> = vec![String::new(); first_column];
        cells.extend(row.iter().map(cell_text));
        writer.write_record(&cells).map_err(|e| {
            Error::io(
                file,
                "convert the sheet",
                std::io::Error::other(e.to_string()),
            )
        })?;
    }
    let body = writer.into_inner().map_err(|e| {
        Error::io(
            file,
            "convert the sheet",
            std::io::Error::other(e.to_string()),
        )
    })?;
    text.push_str(&String::from_utf8_lossy(&body));
    let mut notes = vec![format!(
        "sheet \"{name}\" of {} (line numbers are sheet rows)",
        names.len()
    )];
    if skipped_above > 0 {
        notes.push(format!(
            "{skipped_above} row(s) above --header-row set aside"
        ));
    }
    if !formula_rows.is_empty() {
        let shown: Vec<String> = formula_rows
            .iter()
            .take(10)
            .map(|r| r.to_string())
            .collect();
        notes.push(format!(
            "formula cells read as their stored values, never evaluated, on row(s) {}{}",
            shown.join(", "),
            if formula_rows.len() > 10 { ", ..." } else { "" }
        ));
    }
    Ok((text, notes, formula_rows))
}

/// A cell as the text the table reader expects; line breaks inside a cell become spaces so that
/// text lines stay sheet rows.
fn cell_text(cell: &Data) -> String {
    match cell {
        Data::Empty => String::new(),
        Data::Int(i) => i.to_string(),
        Data::Float(f) => format!("{f}"),
        Data::String(s) => s.replace(['\n', '\r'], " "),
        Data::Bool(b) => if *b { "TRUE" } else { "FALSE" }.into(),
        Data::Error(e) => format!("{e}"),
        other => other.to_string(),
    }
}
