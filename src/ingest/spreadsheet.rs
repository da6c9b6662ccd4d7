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

/// The sheet to read: the one named or numbered (from 1) by `--sheet`, else the first. The
/// error is None when the workbook has no sheet at all.
fn chosen_sheet(
    names: &[String],
    sheet: Option<&str>,
    file: &str,
) -> std::result::Result<String, Option<Error>> {
    match sheet {
        None => names.first().cloned().ok_or(None),
        Some(wanted) => match (
            names.iter().find(|n| n.as_str() == wanted),
            wanted.parse::<usize>(),
        ) {
            (Some(n), _) => Ok(n.clone()),
            (None, Ok(index)) if index >= 1 && index <= names.len() => Ok(names[index - 1].clone()),
            _ => Err(Some(Error::usage(
                format!("{file} has no sheet \"{wanted}\""),
                format!(
                    "pass --sheet with one of: {} (or its position, from 1)",
                    names.join(", ")
                ),
            ))),
        },
    }
}

/// The sheet rows (from 1) that hold a formula.
fn rows_with_formulas<RS: std::io::Read + std::io::Seek>(
    workbook: &mut calamine::Sheets<RS>,
    name: &str,
) -> Vec<usize> {
    workbook
        .worksheet_formula(name)
        .map(|formulas| {
            let start = formulas.start().map(|(r, _)| r as usize).unwrap_or(0);
            formulas
                .rows()
                .enumerate()
                .filter(|(_, row)| row.iter().any(|f| !f.is_empty()))
                .map(|(i, _)| start + i + 1)
                .collect()
        })
        .unwrap_or_default()
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
    check_unpacked_size(bytes, file)?;
    let mut workbook =
        open_workbook_auto_from_rs(Cursor::new(bytes.to_vec())).map_err(unreadable)?;
    let names = workbook.sheet_names();
    let name = chosen_sheet(&names, sheet, file).map_err(|e| {
        e.unwrap_or_else(|| unreadable(calamine::Error::Msg("the workbook has no sheet")))
    })?;
    check_declared_size(&mut workbook, &name, file)?;
    let range = workbook.worksheet_range(&name).map_err(unreadable)?;
    let formula_rows = rows_with_formulas(&mut workbook, &name);
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

/// The most bytes the XML inside a workbook may unpack to, and the most cells a sheet may
/// declare: beyond them a file is refused before it is unpacked or its cells allocated (a small
/// file can unpack to gigabytes, or declare a sheet of 17 billion cells).
const UNPACKED_LIMIT: u64 = 512 << 20;
const CELL_LIMIT: u64 = 10_000_000;

fn too_big(file: &str, what: String) -> Error {
    Error::bad_input(
        Location::file(file),
        what,
        format!(
            "a workbook that unpacks to at most {} MB, with a sheet of at most {} cells",
            UNPACKED_LIMIT >> 20,
            CELL_LIMIT
        ),
        "export the sheet as CSV (levelfield reads large CSV files, also in pieces with --streaming)",
    )
}

/// Zip-based workbooks (.xlsx, .xlsm, .ods): the sum of the sizes their entries declare.
fn check_unpacked_size(bytes: &[u8], file: &str) -> Result<()> {
    let Ok(mut archive) = zip::ZipArchive::new(Cursor::new(bytes)) else {
        return Ok(()); // .xls, or a damaged file calamine will name
    };
    let mut total: u64 = 0;
    for i in 0..archive.len() {
        if let Ok(entry) = archive.by_index_raw(i) {
            total = total.saturating_add(entry.size());
        }
    }
    if total > UNPACKED_LIMIT {
        return Err(too_big(
            file,
            format!("the workbook unpacks to {} MB", total >> 20),
        ));
    }
    Ok(())
}

/// The sheet's declared dimensions (xlsx and xlsb), checked before calamine reserves memory for
/// every cell they span.
fn check_declared_size<RS: std::io::Read + std::io::Seek>(
    workbook: &mut calamine::Sheets<RS>,
    name: &str,
    file: &str,
) -> Result<()> {
    // The declared dimensions, then the cells themselves: the range calamine builds spans
    // every used cell, wherever the sheet says it ends.
    let (declared, used) = match workbook {
        calamine::Sheets::Xlsx(x) => match x.worksheet_cells_reader(name) {
            Ok(mut r) => {
                let declared = r.dimensions();
                (
                    Some(declared),
                    used_extent(|| r.next_cell().ok().flatten().map(|c| c.get_position())),
                )
            }
            Err(_) => (None, None),
        },
        calamine::Sheets::Xlsb(x) => match x.worksheet_cells_reader(name) {
            Ok(mut r) => {
                let declared = r.dimensions();
                (
                    Some(declared),
                    used_extent(|| r.next_cell().ok().flatten().map(|c| c.get_position())),
                )
            }
            Err(_) => (None, None),
        },
        _ => (None, None),
    };
    let declared = declared
        .filter(|d| d.len() > CELL_LIMIT)
        .or(used.filter(|d| d.len() > CELL_LIMIT));
    match declared {
        Some(d) if d.len() > CELL_LIMIT => Err(too_big(
            file,
            format!(
                "the sheet \"{name}\" spans {} rows by {} columns ({} cells)",
                d.end.0 - d.start.0 + 1,
                d.end.1 - d.start.1 + 1,
                d.len()
            ),
        )),
        _ => Ok(()),
    }
}

/// The extent of the cells a reader yields (stopping past the cell limit).
fn used_extent(mut next: impl FnMut() -> Option<(u32, u32)>) -> Option<calamine::Dimensions> {
    let (mut start, mut end) = ((u32::MAX, u32::MAX), (0u32, 0u32));
    let mut count: u64 = 0;
    while let Some((row, column)) = next() {
        start = (start.0.min(row), start.1.min(column));
        end = (end.0.max(row), end.1.max(column));
        count += 1;
        if count > CELL_LIMIT {
            break;
        }
    }
    (count > 0).then(|| calamine::Dimensions::new(start, end))
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
