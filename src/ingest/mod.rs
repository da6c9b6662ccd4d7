//! Reading a user's table into canonical rows: one row per figure with its row id, entity text,
//! year, group, the cell text exactly as given, the parsed value, its currency and the flags
//! raised while reading.
//!
//! Pipeline inside: bytes → `encoding` → `table` (delimited text) → `layout` (roles, melting)
//! → `crate::cells::number` (exact parsing). The result goes to `crate::resolve`, which adds entities.

pub mod encoding;
pub mod layout;
pub mod margins;
pub mod record;
pub mod spreadsheet;
pub mod table;

use crate::cells::number::{self, Cell, NumberStyle};
use crate::entity::Resolver;
use crate::error::{Error, Location, Result};
use crate::flags;
use layout::{LayoutChoice, RoleFlags, Shape, YearSource};
use rust_decimal::Decimal;

/// How to read the input.
#[derive(Debug, Clone, Default)]
pub struct IngestOptions {
    pub delimiter: Option<u8>,
    pub encoding: Option<encoding::EncodingChoice>,
    pub roles: RoleFlags,
    pub currency_code: Option<String>,
    pub value_multiplier: Option<Decimal>,
    pub number_style: NumberStyle,
    pub lenient: bool,
    pub margins: margins::MarginSpec,
    /// Columns carried as text (the claimed figures of `audit`); they need a long table.
    pub extra_columns: Vec<String>,
    /// Spreadsheets: the sheet (name or position from 1) and a forced header row.
    pub sheet: Option<String>,
    pub header_row: Option<usize>,
    /// A piece of a larger file (`--streaming`): lines and data rows before this piece.
    pub line_offset: usize,
    pub row_offset: usize,
}

/// One figure of the input.
#[derive(Debug, Clone, PartialEq)]
pub struct CanonicalRow {
    pub row_id: String,
    pub line: usize,
    pub entity_input: String,
    pub year: Option<i32>,
    pub group: Option<String>,
    pub value_input: String,
    pub value: Option<f64>,
    /// Standard error of `value`, in its unit, when margins were given.
    pub se: Option<f64>,
    pub currency: Option<String>,
    pub flags: Vec<String>,
    /// The text of `IngestOptions::extra_columns`, in their order (long tables only).
    pub extra: Vec<String>,
}

/// The rows and what was decided while reading them (for the run summary).
#[derive(Debug, Clone)]
pub struct Ingested {
    pub rows: Vec<CanonicalRow>,
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
    /// What a user must see even with --quiet: lines set aside, likely misreadings.
    pub warnings: Vec<String>,
}

/// Reads a user's table. `resolver`, when given, lets the entity column be found by its
/// content when no header names it.
pub fn ingest(
    bytes: &[u8],
    file: &str,
    options: &IngestOptions,
    resolver: Option<&Resolver>,
) -> Result<Ingested> {
    let (decoded, delimiter, mut sheet_notes, formula_rows) = if file
        .to_ascii_lowercase()
        .ends_with(".parquet")
    {
        (
            encoding::Decoded {
                text: parquet_as_csv(bytes, file)?,
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
                text,
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
    let mut role_flags = options.roles.clone();
    let margin_count = options.margins.columns().len();
    role_flags.reserved = options.margins.columns();
    role_flags
        .reserved
        .extend(options.extra_columns.iter().cloned());
    let table = table::find_table(
        &decoded.text,
        delimiter,
        file,
        &table::FindOptions {
            hints: role_flags.named_columns(),
            header_line: options.header_row,
            lenient: options.lenient,
            line_offset: options.line_offset,
        },
    )?;
    let roles = layout::assign_roles(&table, &role_flags, file, resolver)?;
    if !role_flags.reserved.is_empty() && matches!(roles.shape, Shape::Wide { .. }) {
        return Err(Error::usage(
            "margin and claim columns need a long table (one row per entity and year, with the margin or claim beside the value)",
            "reshape the table to long form, or pass --long with --year and --value",
        ));
    }

    let mut notes = vec![if decoded.encoding.is_some() {
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
    }];
    notes.append(&mut sheet_notes);
    notes.extend(reading_notes(&table));
    let entity_column = table.headers[roles.entity].clone();
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
    if table.records.is_empty() {
        notes.push("the table has no data rows (only a header)".into());
    }
    if let Some(text) = options.margins.describe() {
        notes.push(format!("uncertainty: {text}"));
    }
    if let Some(m) = options.value_multiplier {
        notes.push(format!(
            "every value multiplied by {m} (--value-multiplier) before any step"
        ));
    }

    let currency_code = match &options.currency_code {
        Some(code) => Some(checked_currency(code, None, file)?),
        None => None,
    };
    // A statistics-office TSV: dimensions other than the entity that take several values in
    // the file become the group (unless --group names one), so that each series ranks alone.
    let auto_group: Vec<usize> = if roles.group.is_none() {
        table
            .dimensions
            .iter()
            .copied()
            .filter(|&d| d != roles.entity)
            .filter(|&d| {
                let first = table.records.first().map(|r| r.cells[d].trim());
                table
                    .records
                    .iter()
                    .any(|r| Some(r.cells[d].trim()) != first)
            })
            .collect()
    } else {
        Vec::new()
    };
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
    let marks = RecordMarks::find(&table, &roles);
    if let (Some(p), Some(_)) = (marks.power, options.value_multiplier) {
        return Err(Error::usage(
            format!(
                "{file} states each figure's power of ten in column \"{}\", and --value-multiplier scales them again",
                table.headers[p]
            ),
            "drop --value-multiplier: the column already says the unit of every figure",
        ));
    }
    notes.extend(marks.describe(&table));
    let unused: Vec<String> = roles
        .ignored
        .iter()
        .filter(|h| !auto_group.iter().any(|&d| &table.headers[d] == *h))
        .filter(|h| !marks.uses(&table, h))
        .cloned()
        .collect();
    if !unused.is_empty() {
        notes.push(format!("columns not used: {}", layout::list(&unused)));
    }
    let reader = RowReader {
        file,
        options,
        currency_code: currency_code.as_deref(),
    };

    let sdmx = layout::looks_like_sdmx(&table.headers);
    // Sized once: growing a vector of a million rows copies it and touches fresh pages at
    // every doubling, which cost a tenth of a 1M-row run.
    let rows_per_record = match &roles.shape {
        Shape::Long { .. } => 1,
        Shape::Wide { year_columns } => year_columns.len(),
    };
    let mut rows = Vec::with_capacity(table.records.len() * rows_per_record);
    for (index, record) in table.records.iter().enumerate() {
        let data_row = index + 1 + options.row_offset;
        let entity_input = match roles.entity_fallback {
            Some(name) if record.cells[roles.entity].trim().is_empty() => {
                record.cells[name].to_string()
            }
            // SDMX-CSV 2.0 may label its codes (`AUS: Australia`): the code names the entity.
            _ if sdmx => layout::sdmx_code(&record.cells[roles.entity]).to_string(),
            _ => record.cells[roles.entity].to_string(),
        };
        let multiplier = marks.multiplier(record, options.value_multiplier, file)?;
        let group = if auto_group.is_empty() {
            roles
                .group
                .map(|g| record.cells[g].trim().to_string())
                .filter(|g| !g.is_empty())
        } else {
            Some(
                auto_group
                    .iter()
                    .map(|&d| record.cells[d].trim())
                    .collect::<Vec<_>>()
                    .join(","),
            )
        };
        let currency_cell = roles
            .currency
            .map(|c| (table.headers[c].as_str(), &record.cells[c]));
        match &roles.shape {
            Shape::Long { value, year, .. } => {
                let mut row_flags = marks.flags(record);
                let year = match year {
                    YearSource::Fixed(y) => Some(*y),
                    YearSource::Column { index, .. } => reader.year(
                        &record.cells[*index],
                        record.line,
                        &table.headers[*index],
                        &mut row_flags,
                    )?,
                };
                let mut row = reader.row(
                    data_row.to_string(),
                    record.line,
                    entity_input,
                    year,
                    group,
                    Figure {
                        cell: &record.cells[*value],
                        column: &table.headers[*value],
                        multiplier,
                    },
                    currency_cell,
                    row_flags,
                )?;
                let cells = margins::MarginCells {
                    cells: roles.reserved[..margin_count]
                        .iter()
                        .map(|&i| (table.headers[i].as_str(), &record.cells[i]))
                        .collect(),
                };
                row.se = margins::standard_error(
                    &options.margins,
                    row.value,
                    &cells,
                    multiplier.map(number::to_f64).unwrap_or(1.0),
                    file,
                    record.line,
                    &mut row.flags,
                )?;
                row.extra = roles.reserved[margin_count..]
                    .iter()
                    .map(|&i| record.cells[i].to_string())
                    .collect();
                rows.push(row);
            }
            Shape::Wide { year_columns } => {
                for &(column, year) in year_columns {
                    rows.push(reader.row(
                        format!("{data_row}:{year}"),
                        record.line,
                        entity_input.clone(),
                        Some(year),
                        group.clone(),
                        Figure {
                            cell: &record.cells[column],
                            column: &table.headers[column],
                            multiplier,
                        },
                        currency_cell,
                        marks.flags(record),
                    )?);
                }
            }
        }
    }
    // Formulas are never evaluated: a row whose sheet row holds one says so.
    for row in rows.iter_mut().filter(|r| formula_rows.contains(&r.line)) {
        row.flags.push(flags::FORMULA_CELL.into());
    }
    let roles_used = RoleFlags {
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
    };
    let warnings = reading_warnings(&table, &rows, options);
    Ok(Ingested {
        rows,
        file: file.to_string(),
        notes,
        entity_column,
        has_group: roles.group.is_some() || !auto_group.is_empty(),
        data_lines: table.records.len(),
        dimensioned: !table.dimensions.is_empty(),
        warnings,
        headers: table.headers,
        delimiter,
        encoding: decoded.encoding,
        roles_used,
    })
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
    crate::format::render_csv(&frame, crate::format::Rounding::Full, false)
}

/// A figure's cell, its column and the multiplier of its row (`--value-multiplier` times a
/// unit-multiplier column's power of ten).
struct Figure<'a> {
    cell: &'a str,
    column: &'a str,
    multiplier: Option<Decimal>,
}

/// What a record says about its figures beyond the value: a footnote column (a data portal's
/// "Value Footnotes"), a unit-multiplier column (OECD's "PowerCode Code", SDMX's UNIT_MULT:
/// a power of ten), and the line's quoting.
pub(crate) struct RecordMarks {
    footnotes: Vec<usize>,
    power: Option<usize>,
}

/// Headers of unit-multiplier columns: the figure is times ten to the cell (common practice of
/// OECD.Stat exports and SDMX).
const POWER_HEADERS: &[&str] = &[
    "powercode code",
    "unit_mult",
    "unit multiplier",
    "unit_multiplier",
];
/// Headers of status columns whose filled cells mark a figure (Eurostat's OBS_FLAG, OECD's
/// "Flag Codes"), besides any header with "footnote" in it. SDMX's OBS_STATUS is left out: its
/// "A" means a normal value.
const FLAG_HEADERS: &[&str] = &["obs_flag", "flag codes", "flags"];

impl RecordMarks {
    pub(crate) fn find(table: &table::TextTable, roles: &layout::Roles) -> RecordMarks {
        let ignored: std::collections::HashSet<&str> =
            roles.ignored.iter().map(String::as_str).collect();
        let unused = |i: &usize| ignored.contains(table.headers[*i].as_str());
        let columns = 0..table.headers.len();
        RecordMarks {
            footnotes: columns
                .clone()
                .filter(unused)
                .filter(|&i| {
                    let h = layout::sdmx_code(&table.headers[i]).to_lowercase();
                    h.contains("footnote") || FLAG_HEADERS.contains(&h.as_str())
                })
                .collect(),
            power: columns.filter(unused).find(|&i| {
                POWER_HEADERS
                    .contains(&layout::sdmx_code(&table.headers[i]).to_lowercase().as_str())
            }),
        }
    }

    /// Whether the column headed `header` is one of the marks (so it is used, not ignored).
    fn uses(&self, table: &table::TextTable, header: &str) -> bool {
        self.footnotes
            .iter()
            .chain(self.power.iter())
            .any(|&i| table.headers[i] == header)
    }

    pub(crate) fn describe(&self, table: &table::TextTable) -> Vec<String> {
        let mut notes = Vec::new();
        if let Some(p) = self.power {
            notes.push(format!(
                "figures scaled by ten to the power in column \"{}\"",
                table.headers[p]
            ));
        }
        for &f in &self.footnotes {
            notes.push(format!(
                "rows with a footnote in column \"{}\" are flagged footnote",
                table.headers[f]
            ));
        }
        notes
    }

    fn flags(&self, record: &table::TextRecord) -> Vec<String> {
        let mut out = Vec::new();
        if record.unbalanced_quote {
            out.push(flags::UNBALANCED_QUOTE.into());
        }
        if self
            .footnotes
            .iter()
            .any(|&f| !record.cells[f].trim().is_empty())
        {
            out.push(flags::FOOTNOTE.into());
        }
        out
    }

    /// The row's multiplier: `--value-multiplier` times ten to the power in the unit-multiplier
    /// column, exactly.
    pub(crate) fn multiplier(
        &self,
        record: &table::TextRecord,
        given: Option<Decimal>,
        file: &str,
    ) -> Result<Option<Decimal>> {
        let Some(p) = self.power else {
            return Ok(given);
        };
        // SDMX-CSV 2.0 labels its codes: `6: Millions`.
        let text = layout::sdmx_code(&record.cells[p]);
        if text.is_empty() {
            return Ok(given);
        }
        let power = text
            .parse::<i32>()
            .ok()
            .filter(|k| (-12..=12).contains(k))
            .ok_or_else(|| {
                Error::bad_input(
                    Location::cell(file, record.line, format!("column {}", p + 1)),
                    format!("\"{}\" is not a power of ten", table::shorten(text)),
                    "an integer from -12 to 12 (3 for thousands, 6 for millions)",
                    "fix the cell",
                )
            })?;
        let scale = if power >= 0 {
            Decimal::from(10i64.pow(power as u32))
        } else {
            Decimal::new(1, (-power) as u32)
        };
        Ok(Some(given.unwrap_or(Decimal::ONE) * scale))
    }
}

/// Warnings about the reading: lines set aside (never read as rows), and a semicolon table
/// whose numbers look like decimal commas read as thousands separators.
fn reading_warnings(
    table: &table::TextTable,
    rows: &[CanonicalRow],
    options: &IngestOptions,
) -> Vec<String> {
    let mut warnings = Vec::new();
    if !table.skipped.is_empty() {
        let shown: Vec<&str> = table.skipped.iter().take(3).map(String::as_str).collect();
        warnings.push(format!(
            "{} line(s) of the input were set aside, not read as rows: {}{}",
            table.skipped.len(),
            shown.join("; "),
            if table.skipped.len() > 3 { "; ..." } else { "" }
        ));
    }
    let grouped = rows
        .iter()
        .filter(|r| r.value.is_some() && r.value_input.contains(','))
        .count();
    if table.delimiter == b';' && !options.number_style.decimal_comma && grouped > 0 {
        warnings.push(format!(
            "the table is separated by semicolons and {grouped} figure(s) hold a comma read as a thousands separator (1,500 as 1500): if the comma is a decimal comma, pass --decimal-comma"
        ));
    }
    warnings
}

/// What the table finder decided, for the run summary (and `levelfield refs`).
pub fn reading_notes(table: &table::TextTable) -> Vec<String> {
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
    if !table.skipped.is_empty() {
        notes.push(format!(
            "set aside {} line(s) that are not part of the table: {}",
            table.skipped.len(),
            table.skipped.join("; ")
        ));
    }
    let quoted = table.records.iter().filter(|r| r.unbalanced_quote).count();
    if quoted > 0 {
        notes.push(format!(
            "{quoted} line(s) inside an unclosed quote read as written and flagged unbalanced_quote (--lenient)"
        ));
    }
    notes
}

struct RowReader<'a> {
    file: &'a str,
    options: &'a IngestOptions,
    currency_code: Option<&'a str>,
}

impl RowReader<'_> {
    #[allow(clippy::too_many_arguments)]
    fn row(
        &self,
        row_id: String,
        line: usize,
        entity_input: String,
        year: Option<i32>,
        group: Option<String>,
        figure: Figure,
        currency_cell: Option<(&str, &str)>,
        mut row_flags: Vec<String>,
    ) -> Result<CanonicalRow> {
        let Figure {
            cell,
            column,
            multiplier,
        } = figure;
        let value = match number::parse_cell(cell, self.options.number_style) {
            Ok(Cell::Number {
                value,
                float,
                footnote,
            }) => {
                if footnote {
                    row_flags.push(flags::FOOTNOTE.into());
                }
                match multiplier {
                    Some(m) => Some(number::to_f64(value.checked_mul(m).ok_or_else(|| {
                        Error::bad_input(
                            Location::cell(self.file, line, column),
                            format!("\"{cell}\" times the multiplier {m} is too large for an exact decimal"),
                            "a value that stays below about 7.9e28 after --value-multiplier",
                            "use a smaller --value-multiplier",
                        )
                    })?)),
                    None => Some(float),
                }
            }
            Ok(Cell::Missing) => {
                row_flags.push(flags::MISSING_VALUE.into());
                None
            }
            Err(e) if self.options.lenient => {
                let _ = e;
                row_flags.push(flags::UNPARSED.into());
                None
            }
            Err(e) => {
                let fix = if cell.contains('\n') {
                    "the cell spans several lines: a quote is probably not closed on this line"
                } else {
                    "correct the cell, or pass --lenient to keep such rows flagged `unparsed`"
                };
                return Err(Error::bad_input(
                    Location::cell(self.file, line, column),
                    e.reason,
                    e.hint,
                    fix,
                ));
            }
        };
        let currency = match currency_cell {
            Some((header, text)) if !text.trim().is_empty() => {
                match checked_currency(text, Some((line, header)), self.file) {
                    Ok(code) => Some(code),
                    Err(_) if self.options.lenient => {
                        row_flags.push(flags::UNKNOWN_CURRENCY.into());
                        None
                    }
                    Err(e) => return Err(e),
                }
            }
            _ => self.currency_code.map(str::to_string),
        };
        Ok(CanonicalRow {
            row_id,
            line,
            entity_input,
            year,
            group,
            value_input: cell.to_string(),
            value,
            se: None,
            extra: Vec::new(),
            currency,
            flags: row_flags,
        })
    }

    fn year(
        &self,
        cell: &str,
        line: usize,
        column: &str,
        row_flags: &mut Vec<String>,
    ) -> Result<Option<i32>> {
        match layout::parse_year_cell(cell) {
            Ok(Some(year)) => Ok(Some(year)),
            Ok(None) => {
                row_flags.push(flags::MISSING_YEAR.into());
                Ok(None)
            }
            Err(_) if self.options.lenient => {
                row_flags.push(flags::UNPARSED_YEAR.into());
                Ok(None)
            }
            Err(text) => Err(Error::bad_input(
                Location::cell(self.file, line, column),
                format!("\"{text}\" is not a calendar year"),
                "a four-digit calendar year (1000-2200) such as 2021; fiscal-year labels (2019/20, FY2021) are not matched to reference years automatically",
                "relabel the year with the calendar year your reference tables use for it, or pass --lenient to keep the row flagged `unparsed_year`",
            )),
        }
    }
}

fn checked_currency(text: &str, cell: Option<(usize, &str)>, file: &str) -> Result<String> {
    let code = text.trim().to_uppercase();
    if Resolver::is_valid_currency_code(&code) {
        return Ok(code);
    }
    let location = match cell {
        Some((line, column)) => Location::cell(file, line, column),
        None => Location::file("--currency-code"),
    };
    Err(Error::bad_input(
        location,
        format!("\"{}\" is not an ISO 4217 currency code", text.trim()),
        "a three-letter ISO 4217 code such as USD, EUR or JPY",
        "correct the code; leave the currency out for figures in each country's own currency",
    ))
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
        let ids: Vec<&str> = out.rows.iter().map(|r| r.row_id.as_str()).collect();
        assert_eq!(ids, vec!["1:2019", "1:2020", "2:2019", "2:2020"]);
        assert_eq!(out.rows[0].value, Some(1200.0));
        assert_eq!(out.rows[1].value, None);
        assert_eq!(out.rows[1].flags, vec!["missing_value".to_string()]);
        assert_eq!(out.rows[2].flags, vec!["footnote".to_string()]);
        assert_eq!(out.rows[3].line, 3);
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
        assert_eq!(out.rows[0].flags, vec!["unparsed".to_string()]);
    }

    #[test]
    fn multiplier_is_exact() {
        let options = IngestOptions {
            value_multiplier: Some(Decimal::from(1_000_000)),
            ..Default::default()
        };
        let out = run("country,year,value\nFrance,2020,0.1\n", options).unwrap();
        assert_eq!(out.rows[0].value, Some(100_000.0));
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
        assert_eq!(out.rows[0].currency.as_deref(), Some("EUR"));
        assert_eq!(out.rows[1].currency, None);
        let err = run("country,year,value,cur\nFrance,2020,1,EUX\n", options)
            .unwrap_err()
            .to_string();
        assert!(err.contains("ISO 4217"), "{err}");
    }
}
