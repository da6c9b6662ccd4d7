//! Reading a user's table into canonical rows: one row per figure with its row id, entity text,
//! year, group, the cell text exactly as given, the parsed value, its currency and the flags
//! raised while reading.
//!
//! Pipeline inside: bytes → `encoding` → `table` (delimited text) → `layout` (roles, melting)
//! → `crate::cells::number` (exact parsing). The result goes to `crate::resolve`, which adds entities.

pub mod asides;
mod body;
mod canonical;
pub mod delimiter;
pub mod encoding;
mod header;
pub mod layout;
pub mod margins;
mod reader;
pub mod record;
mod rows;
mod stretches;
pub use asides::Asides;
pub use canonical::{CanonicalRows, IngestOptions, RowId, TextColumn, Texts};
pub(crate) use rows::RecordMarks;
pub mod spreadsheet;
pub mod table;

use crate::entity::Resolver;
use crate::error::{Error, Location, Result};
use crate::flags;
use layout::{LayoutChoice, RoleFlags, Shape, YearSource};

/// The rows and what was decided while reading them (for the run summary).
#[derive(Debug, Clone)]
pub struct Ingested {
    pub rows: CanonicalRows,
    pub file: String,
    pub notes: Vec<String>,
    pub entity_column: String,
    pub has_group: bool,
    /// The header as read (cleaned), the delimiter and encoding used, the roles the columns got,
    /// and the number of data lines: what a later piece of the same file must be read with.
    pub headers: Vec<String>,
    pub delimiter: u8,
    pub encoding: Option<encoding::EncodingChoice>,
    pub roles_used: RoleFlags,
    pub data_lines: usize,
    /// The table was a statistics-office TSV whose first column joined dimension codes.
    pub dimensioned: bool,
    /// What was set aside, read leniently or left unresolved (`resolve` adds the names), and
    /// the place among `notes` where its notes go (`summary_notes`).
    pub asides: Asides,
    pub asides_at: usize,
}

impl Ingested {
    /// The notes of the run summary on reading the table: `notes` with the asides' notes in
    /// their place and the unresolved names last.
    pub fn summary_notes(&self) -> Vec<String> {
        summary_notes(&self.notes, self.asides_at, &self.asides)
    }
}

/// `notes` with the notes of `asides` put in at `at` and the unresolved names last: one
/// table's, or a streamed file's with its pieces' asides added up.
pub fn summary_notes(notes: &[String], at: usize, asides: &Asides) -> Vec<String> {
    let mut all = notes.to_vec();
    all.splice(at..at, asides.reading_notes());
    all.extend(asides.unresolved_note());
    all
}

/// Reads a user's table. `resolver`, when given, lets the entity column be found by its
/// content when no header names it.
pub fn ingest(
    bytes: &[u8],
    file: &str,
    options: &IngestOptions,
    resolver: Option<&Resolver>,
) -> Result<Ingested> {
    let DecodedInput {
        decoded,
        delimiter,
        mut sheet_notes,
        formula_rows,
    } = decode_input(bytes, file, options)?;
    let mut role_flags = options.roles.clone();
    let margin_count = options.margins.columns().len();
    role_flags.reserved = options.margins.columns();
    role_flags
        .reserved
        .extend(options.extra_columns.iter().cloned());
    let mut table = table::find_table(
        &decoded.text,
        delimiter,
        file,
        &table::FindOptions {
            hints: role_flags.named_columns(),
            header_line: options.header_row,
            lenient: options.lenient,
            line_offset: options.line_offset,
            in_one_go: false,
        },
    )?;
    crate::trace::phase("table found");
    let roles = layout::assign_roles(&table, &role_flags, file, resolver)?;
    reserved_need_a_long_table(&role_flags, &roles)?;

    let mut notes = vec![source_note(file, &decoded, delimiter, &table)];
    notes.append(&mut sheet_notes);
    notes.extend(table_notes(&table));
    let asides_at = notes.len();
    let asides = table.asides();
    let entity_column = table.headers[roles.entity].clone();
    notes.extend(role_notes(&table, &roles));
    if table.records.is_empty() {
        notes.push("the table has no data rows (only a header)".into());
    }
    notes.extend(option_notes(options));

    let currency_code = match &options.currency_code {
        Some(code) => Some(rows::checked_currency(code, None, file)?),
        None => None,
    };
    // A statistics-office TSV: dimensions other than the entity that take several values in
    // the file become the group (unless --group names one), so that each series ranks alone.
    let auto_group = varying_dimensions(&table, &roles);
    let marks = rows::RecordMarks::find(&table, &roles);
    if let (Some(p), Some(_)) = (marks.power, options.value_multiplier) {
        return Err(Error::usage(
            format!(
                "{file} states each figure's power of ten in column \"{}\", and --value-multiplier scales them again",
                table.headers[p]
            ),
            "drop --value-multiplier: the column already says the unit of every figure",
        ));
    }
    notes.extend(column_use_notes(&table, &roles, &auto_group, &marks));
    let data_lines = table.records.len();
    let records = std::mem::take(&mut table.records);
    let mut rows = rows::read_rows(
        &table,
        records,
        &rows::RowPlan {
            file,
            options,
            roles: &roles,
            marks: &marks,
            auto_group: &auto_group,
            currency_code: currency_code.as_deref(),
            margin_count,
        },
    )?;
    crate::trace::phase("rows read");
    // Formulas are never evaluated: a row whose sheet row holds one says so.
    if !formula_rows.is_empty() {
        for at in 0..rows.len() {
            if formula_rows.contains(&rows.line(at)) {
                rows.flag(at, flags::FORMULA_CELL);
            }
        }
    }
    let roles_used = roles_used(&table, &roles);
    let asides = Asides {
        semicolon_grouped: semicolon_grouped(&table, &rows, options),
        ..asides
    };
    Ok(Ingested {
        rows,
        file: file.to_string(),
        notes,
        entity_column,
        has_group: roles.group.is_some() || !auto_group.is_empty(),
        data_lines,
        dimensioned: !table.dimensions.is_empty(),
        asides,
        asides_at,
        headers: table.headers,
        delimiter,
        encoding: decoded.encoding,
        roles_used,
    })
}

/// Margin and claim columns sit beside the value of a long table; a wide one has no such place.
fn reserved_need_a_long_table(role_flags: &RoleFlags, roles: &layout::Roles) -> Result<()> {
    if !role_flags.reserved.is_empty() && matches!(roles.shape, Shape::Wide { .. }) {
        return Err(Error::usage(
            "margin and claim columns need a long table (one row per entity and year, with the margin or claim beside the value)",
            "reshape the table to long form, or pass --long with --year and --value",
        ));
    }
    Ok(())
}

/// The notes on how the columns are used: dimensions that became the group, the marks read
/// beside each figure, and the columns left unused.
fn column_use_notes(
    table: &table::TextTable,
    roles: &layout::Roles,
    auto_group: &[usize],
    marks: &rows::RecordMarks,
) -> Vec<String> {
    let mut notes = Vec::new();
    if !auto_group.is_empty() {
        let names: Vec<&str> = auto_group
            .iter()
            .map(|&d| table.headers[d].as_str())
            .collect();
        notes.push(format!(
            "group: the dimension(s) {} take several values, so each of their series is ranked on its own (--group DIM to choose)",
            names.join(", ")
        ));
    }
    notes.extend(marks.describe(table));
    let unused: Vec<String> = roles
        .ignored
        .iter()
        .filter(|h| !auto_group.iter().any(|&d| &table.headers[d] == *h))
        .filter(|h| !marks.uses(table, h))
        .cloned()
        .collect();
    if !unused.is_empty() {
        notes.push(format!("columns not used: {}", layout::list(&unused)));
    }
    notes
}

/// The first note: what was read, as what, and how many data lines it holds.
fn source_note(
    file: &str,
    decoded: &encoding::Decoded,
    delimiter: u8,
    table: &table::TextTable,
) -> String {
    if decoded.encoding.is_some() {
        format!(
            "read {file}: {}, {} delimiter, {} data line(s)",
            decoded.description,
            table::delimiter_name(delimiter),
            table.records.len()
        )
    } else {
        format!(
            "read {file}: {}, {} data line(s)",
            decoded.description,
            table.records.len()
        )
    }
}

/// What the options change in every figure: margins and a multiplier.
fn option_notes(options: &IngestOptions) -> Vec<String> {
    let mut notes = Vec::new();
    if let Some(text) = options.margins.describe() {
        notes.push(format!("uncertainty: {text}"));
    }
    if let Some(m) = options.value_multiplier {
        notes.push(format!(
            "every value multiplied by {m} (--value-multiplier) before any step"
        ));
    }
    notes
}

/// Which columns play which role, and the table's shape, for the run summary.
fn role_notes(table: &table::TextTable, roles: &layout::Roles) -> Vec<String> {
    let entity_column = &table.headers[roles.entity];
    let mut notes = Vec::new();
    if let Some(name) = roles.entity_fallback {
        notes.push(format!(
            "rows with an empty \"{entity_column}\" are read by their \"{}\"",
            table.headers[name]
        ));
    }
    notes.push(format!(
        "entity column: \"{entity_column}\"{}",
        match roles.entity_detected {
            layout::EntityFound::Header =>
                " (detected from its header; --entity to choose another)",
            layout::EntityFound::Content =>
                " (detected: its cells are country names or codes; --entity to choose another)",
            layout::EntityFound::Given => "",
        }
    ));
    match &roles.shape {
        Shape::Wide { year_columns } => notes.push(format!(
            "layout: wide, {} year column(s) {}..{} melted into rows",
            year_columns.len(),
            year_columns.iter().map(|(_, y)| *y).min().unwrap_or(0),
            year_columns.iter().map(|(_, y)| *y).max().unwrap_or(0)
        )),
        Shape::Long {
            value,
            value_detected,
            year,
        } => {
            let year_text = match year {
                YearSource::Column { index, detected } => format!(
                    "year column \"{}\"{}",
                    table.headers[*index],
                    if *detected { " (detected)" } else { "" }
                ),
                YearSource::Fixed(y) => format!("every row is year {y} (--year-value)"),
            };
            notes.push(format!(
                "layout: long, value column \"{}\"{}, {year_text}",
                table.headers[*value],
                if *value_detected { " (detected)" } else { "" }
            ));
        }
    }
    notes
}

/// The dimension columns of a statistics-office TSV, other than the entity, that take several
/// values in the file (none when the user named a group).
fn varying_dimensions(table: &table::TextTable, roles: &layout::Roles) -> Vec<usize> {
    if roles.group.is_none() {
        table
            .dimensions
            .iter()
            .copied()
            .filter(|&d| d != roles.entity)
            .filter(|&d| {
                let first = table.records.first().map(|r| r.cells.at(d).trim());
                table
                    .records
                    .iter()
                    .any(|r| Some(r.cells[d].trim()) != first)
            })
            .collect()
    } else {
        Vec::new()
    }
}

/// The input as text, with the delimiter to read it by; a spreadsheet's notes and the sheet rows
/// that hold formulas come along.
struct DecodedInput<'a> {
    decoded: encoding::Decoded<'a>,
    delimiter: u8,
    sheet_notes: Vec<String>,
    formula_rows: Vec<usize>,
}

fn decode_input<'a>(
    bytes: &'a [u8],
    file: &str,
    options: &IngestOptions,
) -> Result<DecodedInput<'a>> {
    let (decoded, delimiter, sheet_notes, formula_rows) = if file
        .to_ascii_lowercase()
        .ends_with(".parquet")
    {
        (
            encoding::Decoded {
                text: parquet_as_csv(bytes, file)?.into(),
                description: "Parquet".into(),
                encoding: None,
            },
            b',',
            Vec::new(),
            Vec::new(),
        )
    } else if spreadsheet::is_spreadsheet(file) {
        let (text, notes, formula_rows) =
            spreadsheet::sheet_to_csv(bytes, file, options.sheet.as_deref(), options.header_row)?;
        (
            encoding::Decoded {
                text: text.into(),
                description: "spreadsheet".into(),
                encoding: None,
            },
            b',',
            notes,
            formula_rows,
        )
    } else {
        let decoded = encoding::decode(bytes, options.encoding, file)?;
        let delimiter = match options.delimiter {
            Some(d) => d,
            None if file.ends_with(".tsv") || file.ends_with(".tab") => b'\t',
            None => table::sniff_delimiter(&decoded.text),
        };
        (decoded, delimiter, Vec::new(), Vec::new())
    };
    Ok(DecodedInput {
        decoded,
        delimiter,
        sheet_notes,
        formula_rows,
    })
}

/// The roles the columns got, as flags: what a later piece of the same file is read with.
fn roles_used(table: &table::TextTable, roles: &layout::Roles) -> RoleFlags {
    RoleFlags {
        entity: Some(table.headers[roles.entity].clone()),
        value: match &roles.shape {
            Shape::Long { value, .. } => Some(table.headers[*value].clone()),
            Shape::Wide { .. } => None,
        },
        year: match &roles.shape {
            Shape::Long {
                year: YearSource::Column { index, .. },
                ..
            } => Some(table.headers[*index].clone()),
            _ => None,
        },
        year_value: match &roles.shape {
            Shape::Long {
                year: YearSource::Fixed(y),
                ..
            } => Some(*y),
            _ => None,
        },
        group: roles.group.map(|g| table.headers[g].clone()),
        currency: roles.currency.map(|c| table.headers[c].clone()),
        layout: match &roles.shape {
            Shape::Long { .. } => LayoutChoice::Long,
            Shape::Wide { .. } => LayoutChoice::Wide,
        },
        reserved: Vec::new(),
        knobs: layout::Knobs::Flags,
    }
}

/// A Parquet file as CSV text, every number at full precision (shortest text that reads back to
/// the same f64), so the rest of ingest treats it like any table.
fn parquet_as_csv(bytes: &[u8], file: &str) -> Result<String> {
    use polars::prelude::{ParquetReader, SerReader};
    let frame = ParquetReader::new(std::io::Cursor::new(bytes.to_vec()))
        .finish()
        .map_err(|e| {
            Error::bad_input(
                Location::file(file),
                format!("the Parquet file cannot be read: {e}"),
                "an Apache Parquet file",
                "check that the file is complete, or export it as CSV",
            )
        })?;
    // Read as it is: no formula guard on an input.
    crate::csv_writer::render_csv(&frame, crate::format::Rounding::Full, false)
}

/// The figures of a semicolon table read without --decimal-comma that hold a comma, read as
/// a thousands separator (a likely misreading, warned of).
fn semicolon_grouped(
    table: &table::TextTable,
    rows: &CanonicalRows,
    options: &IngestOptions,
) -> usize {
    if table.delimiter != b';' || options.number_style.decimal_comma {
        return 0;
    }
    (0..rows.len())
        .filter(|&at| rows.value[at].is_some() && rows.value_input.get(at).contains(','))
        .count()
}

/// What the table finder decided, for the run summary (and `levelfield refs`), with what it
/// set aside.
pub fn reading_notes(table: &table::TextTable) -> Vec<String> {
    let mut notes = table_notes(table);
    notes.extend(table.asides().reading_notes());
    notes
}

/// The header the finder chose and how it read the header's columns.
fn table_notes(table: &table::TextTable) -> Vec<String> {
    let mut notes = vec![format!("header: {}", table.header_reason)];
    if table.trailing_delimiter {
        notes.push(
            "the header ends with an empty column that holds nothing (a trailing delimiter): dropped"
                .into(),
        );
    }
    if !table.dimensions.is_empty() {
        let names: Vec<&str> = table
            .dimensions
            .iter()
            .map(|&i| table.headers[i].as_str())
            .collect();
        notes.push(format!(
            "statistics-office layout: the first column joins the dimensions {}",
            names.join(", ")
        ));
    }
    notes
}

#[cfg(test)]
mod tests {
    use super::*;

    fn run(text: &str, options: IngestOptions) -> Result<Ingested> {
        ingest(text.as_bytes(), "t.csv", &options, None)
    }

    #[test]
    fn wide_table_melts_into_one_row_per_figure_with_ids() {
        let out = run(
            "country,2019,2020\nFrance,\"1,200\",..\nChile,3*,4\n",
            IngestOptions::default(),
        )
        .unwrap();
        let ids: Vec<String> = (0..out.rows.len())
            .map(|i| out.rows.row_id(i).to_string())
            .collect();
        assert_eq!(ids, vec!["1:2019", "1:2020", "2:2019", "2:2020"]);
        assert_eq!(out.rows.value[0], Some(1200.0));
        assert_eq!(out.rows.value[1], None);
        assert_eq!(out.rows.flags(1), &["missing_value"]);
        assert_eq!(out.rows.flags(2), &["footnote"]);
        assert_eq!(out.rows.line(3), 3);
        assert_eq!(out.rows.value_input.get(2), "3*");
    }

    #[test]
    fn bad_cell_is_an_error_unless_lenient() {
        let err = run(
            "country,year,value\nFrance,2020,abc\n",
            IngestOptions::default(),
        )
        .unwrap_err()
        .to_string();
        assert!(err.contains("t.csv, line 2, column \"value\""), "{err}");
        let lenient = IngestOptions {
            lenient: true,
            ..Default::default()
        };
        let out = run("country,year,value\nFrance,2020,abc\n", lenient).unwrap();
        assert_eq!(out.rows.len(), 1);
        assert_eq!(out.rows.flags(0), &["unparsed"]);
    }

    #[test]
    fn multiplier_is_exact() {
        let options = IngestOptions {
            value_multiplier: Some(rust_decimal::Decimal::from(1_000_000)),
            ..Default::default()
        };
        let out = run("country,year,value\nFrance,2020,0.1\n", options).unwrap();
        assert_eq!(out.rows.value[0], Some(100_000.0));
    }

    #[test]
    fn currency_codes_are_checked() {
        let flags = RoleFlags {
            currency: Some("cur".into()),
            ..Default::default()
        };
        let options = IngestOptions {
            roles: flags,
            ..Default::default()
        };
        let out = run(
            "country,year,value,cur\nFrance,2020,1,eur\nChile,2020,1,\n",
            options.clone(),
        )
        .unwrap();
        assert_eq!(out.rows.currency_text(0), Some("EUR"));
        assert_eq!(out.rows.currency_text(1), None);
        let err = run("country,year,value,cur\nFrance,2020,1,EUX\n", options)
            .unwrap_err()
            .to_string();
        assert!(err.contains("ISO 4217"), "{err}");
    }
}
