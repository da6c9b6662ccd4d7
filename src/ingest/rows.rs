//! Reading the records of a found table into canonical rows: the entity text, year, group and
//! figure of each, with the marks a record carries (footnote and status columns, a power of
//! ten, a quote cut out of a runaway) and the flags raised on the way. Long tables give a row
//! per record, wide ones a row per year column.

use super::canonical::{CanonicalRows, IngestOptions, RowId, RowParts};
use super::layout::{self, Shape, YearSource};
use super::{margins, table};
use crate::cells::number::{self, Cell};
use crate::entity::Resolver;
use crate::error::{Error, Location, Result};
use crate::flags;
use rust_decimal::Decimal;

/// What `read_rows` reads each record with.
#[derive(Clone, Copy)]
pub(super) struct RowPlan<'a> {
    pub file: &'a str,
    pub options: &'a IngestOptions,
    pub roles: &'a layout::Roles,
    pub marks: &'a RecordMarks,
    /// Dimension columns joined into the group (a statistics-office TSV), else empty.
    pub auto_group: &'a [usize],
    pub currency_code: Option<&'a str>,
    /// The first `margin_count` reserved columns are margins; the rest are carried as text.
    pub margin_count: usize,
}

/// The canonical rows of `records` (the records of `table`, taken out of it), in their order.
/// In a long table the figures' column becomes the rows' `value_input` as it is, without a
/// copy.
pub(super) fn read_rows(
    table: &table::TextTable,
    mut records: table::Records,
    plan: &RowPlan,
) -> Result<CanonicalRows> {
    use rayon::prelude::*;
    // A large table is read on the pool's threads, a range of records each; the ranges' rows
    // are joined in order, and the first range's error is the first in the file.
    let pool = &polars_core::runtime::THREAD_POOL;
    let parts = match records.len() {
        n if n >= PARALLEL_RECORDS => pool.current_num_threads().max(1),
        _ => 1,
    };
    let step = records.len().div_ceil(parts).max(1);
    let ranges: Vec<std::ops::Range<usize>> = (0..records.len())
        .step_by(step)
        .map(|start| start..records.len().min(start + step))
        .collect();
    // The first range's rows take the others': they are sized for the whole table at once.
    let read = |range: &std::ops::Range<usize>| {
        let sized_for = match range.start {
            0 => records.len(),
            _ => range.len(),
        };
        read_range(table, &records, range.clone(), sized_for, plan)
    };
    let parts: Vec<Result<CanonicalRows>> = match ranges.len() {
        0 | 1 => vec![read(&(0..records.len()))],
        _ => pool.install(|| ranges.par_iter().map(read).collect()),
    };
    let mut parts = parts.into_iter();
    let mut rows = parts
        .next()
        .unwrap_or_else(|| Ok(CanonicalRows::default()))?;
    for part in parts {
        rows.append(part?).map_err(|e| e.error(plan.file))?;
    }
    if let Shape::Long { value, .. } = &plan.roles.shape {
        rows.value_input = records.take_column(*value);
    }
    Ok(rows)
}

/// Records read on several threads from this many on (below it a thread's start costs more
/// than it saves).
const PARALLEL_RECORDS: usize = 200_000;

/// The canonical rows of the records in `range`, sized for the rows of `sized_for` records.
fn read_range(
    table: &table::TextTable,
    records: &table::Records,
    range: std::ops::Range<usize>,
    sized_for: usize,
    plan: &RowPlan,
) -> Result<CanonicalRows> {
    let RowPlan {
        file,
        options,
        roles,
        marks,
        auto_group,
        currency_code,
        margin_count,
    } = *plan;
    let reader = RowReader {
        file,
        options,
        currency_code,
    };

    let sdmx = layout::looks_like_sdmx(&table.headers);
    // Sized once: growing a vector of a million rows copies it and touches fresh pages at
    // every doubling, which cost a tenth of a 1M-row run.
    let rows_per_record = match &roles.shape {
        Shape::Long { .. } => 1,
        Shape::Wide { year_columns } => year_columns.len(),
    };
    let mut rows = CanonicalRows::with_capacity(sized_for * rows_per_record);
    rows.expect_ids(options.row_offset + range.start, &wide_years(&roles.shape));
    let with_margins = margin_count > 0 || roles.reserved.len() > margin_count;
    let mut last_entity = RunPlace::default();
    for index in range {
        let record = &records.get(index);
        let data_row = index + 1 + options.row_offset;
        let entity_input = last_entity.place(&mut rows.texts, record_entity(record, roles, sdmx));
        let multiplier = marks.multiplier(record, options.value_multiplier, file)?;
        let group = record_group(record, roles, auto_group).map(|g| rows.texts.place(&g));
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
                let value = reader.push_row(
                    &mut rows,
                    Place {
                        row_id: RowId {
                            data_row,
                            year_column: None,
                        },
                        line: record.line,
                        entity_input,
                        year,
                        group,
                    },
                    Figure {
                        cell: &record.cells[*value],
                        column: &table.headers[*value],
                        multiplier,
                        moved: true,
                    },
                    currency_cell,
                    row_flags,
                )?;
                if with_margins {
                    push_margins(&mut rows, value, record, table, plan, multiplier)?;
                }
            }
            Shape::Wide { year_columns } => {
                for &(column, year) in year_columns {
                    reader.push_row(
                        &mut rows,
                        Place {
                            row_id: RowId {
                                data_row,
                                year_column: Some(year),
                            },
                            line: record.line,
                            entity_input,
                            year: Some(year),
                            group,
                        },
                        Figure {
                            cell: &record.cells[column],
                            column: &table.headers[column],
                            multiplier,
                            moved: false,
                        },
                        currency_cell,
                        marks.flags(record),
                    )?;
                }
            }
        }
    }
    Ok(rows)
}

/// A text's place, looked up once a run: rows of one entity often follow each other.
#[derive(Default)]
struct RunPlace<'a> {
    last: Option<(&'a str, u32)>,
}

impl<'a> RunPlace<'a> {
    fn place(&mut self, texts: &mut super::Texts, text: &'a str) -> u32 {
        match self.last {
            Some((last, place)) if last == text => place,
            _ => {
                let place = texts.place(text);
                self.last = Some((text, place));
                place
            }
        }
    }
}

/// The years of a wide table's year columns, in order (none for a long table).
fn wide_years(shape: &Shape) -> Vec<i32> {
    match shape {
        Shape::Long { .. } => Vec::new(),
        Shape::Wide { year_columns } => year_columns.iter().map(|&(_, y)| y).collect(),
    }
}

/// The entity text of a record: its entity cell, or the fallback column's where that is
/// empty; of an SDMX-CSV 2.0 cell labelled `AUS: Australia`, the code.
fn record_entity<'a>(record: &table::TextRecord<'a>, roles: &layout::Roles, sdmx: bool) -> &'a str {
    match roles.entity_fallback {
        Some(name) if record.cells.at(roles.entity).trim().is_empty() => record.cells.at(name),
        _ if sdmx => layout::sdmx_code(record.cells.at(roles.entity)),
        _ => record.cells.at(roles.entity),
    }
}

/// A record's group: the group column's text, or the varying dimensions of a statistics
/// office's table joined with commas.
fn record_group<'r>(
    record: &'r table::TextRecord<'_>,
    roles: &layout::Roles,
    auto_group: &[usize],
) -> Option<std::borrow::Cow<'r, str>> {
    if auto_group.is_empty() {
        roles
            .group
            .map(|g| record.cells[g].trim())
            .filter(|g| !g.is_empty())
            .map(std::borrow::Cow::Borrowed)
    } else {
        Some(
            auto_group
                .iter()
                .map(|&d| record.cells[d].trim())
                .collect::<Vec<_>>()
                .join(",")
                .into(),
        )
    }
}

/// A long row's standard error from its margin cells, and the claim columns carried beside it,
/// set on the row just pushed.
fn push_margins(
    rows: &mut CanonicalRows,
    value: Option<f64>,
    record: &table::TextRecord<'_>,
    table: &table::TextTable,
    plan: &RowPlan,
    multiplier: Option<Decimal>,
) -> Result<()> {
    let (roles, margin_count) = (plan.roles, plan.margin_count);
    let cells = margins::MarginCells {
        cells: roles.reserved[..margin_count]
            .iter()
            .map(|&i| (table.headers[i].as_str(), &record.cells[i]))
            .collect(),
    };
    let mut flags = Vec::new();
    let se = margins::standard_error(
        &plan.options.margins,
        value,
        &cells,
        multiplier.map(number::to_f64).unwrap_or(1.0),
        plan.file,
        record.line,
        &mut flags,
    )?;
    let extra: Vec<&str> = roles.reserved[margin_count..]
        .iter()
        .map(|&i| &record.cells[i])
        .collect();
    rows.finish_last(se, &extra, flags)
        .map_err(|e| e.error(plan.file))?;
    Ok(())
}

/// Where a row sits and what it is about: all of a row but its figure and currency.
struct Place {
    row_id: RowId,
    line: usize,
    entity_input: u32,
    year: Option<i32>,
    group: Option<u32>,
}

/// A figure's cell, its column and the multiplier of its row (`--value-multiplier` times a
/// unit-multiplier column's power of ten); `moved` when the figures' column becomes the rows'
/// `value_input` whole, after the last row (a long table).
struct Figure<'a> {
    cell: &'a str,
    column: &'a str,
    multiplier: Option<Decimal>,
    moved: bool,
}

/// What a record says about its figures beyond the value: a footnote column (a data portal's
/// "Value Footnotes"), a unit-multiplier column (OECD's "PowerCode Code", SDMX's UNIT_MULT:
/// a power of ten), and the line's quoting.
pub(crate) struct RecordMarks {
    footnotes: Vec<usize>,
    pub(super) power: Option<usize>,
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
    pub(super) fn uses(&self, table: &table::TextTable, header: &str) -> bool {
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

    fn flags(&self, record: &table::TextRecord<'_>) -> Vec<&'static str> {
        let mut out = Vec::new();
        if record.unbalanced_quote {
            out.push(flags::UNBALANCED_QUOTE);
        }
        if self
            .footnotes
            .iter()
            .any(|&f| !record.cells[f].trim().is_empty())
        {
            out.push(flags::FOOTNOTE);
        }
        out
    }

    /// The row's multiplier: `--value-multiplier` times ten to the power in the unit-multiplier
    /// column, exactly.
    pub(crate) fn multiplier(
        &self,
        record: &table::TextRecord<'_>,
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

struct RowReader<'a> {
    file: &'a str,
    options: &'a IngestOptions,
    currency_code: Option<&'a str>,
}

impl RowReader<'_> {
    /// Reads the figure and currency of a row and pushes it; gives the figure's value.
    fn push_row(
        &self,
        rows: &mut CanonicalRows,
        place: Place,
        figure: Figure,
        currency_cell: Option<(&str, &str)>,
        mut row_flags: Vec<&'static str>,
    ) -> Result<Option<f64>> {
        let line = place.line;
        let Figure {
            cell,
            column,
            multiplier,
            ..
        } = figure;
        let value = match number::parse_cell(cell, self.options.number_style) {
            Ok(Cell::Number {
                value,
                float,
                footnote,
            }) => {
                if footnote {
                    row_flags.push(flags::FOOTNOTE);
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
                row_flags.push(flags::MISSING_VALUE);
                None
            }
            Err(e) if self.options.lenient => {
                let _ = e;
                row_flags.push(flags::UNPARSED);
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
                    Ok(code) => Some(rows.texts.place(&code)),
                    Err(_) if self.options.lenient => {
                        row_flags.push(flags::UNKNOWN_CURRENCY);
                        None
                    }
                    Err(e) => return Err(e),
                }
            }
            _ => self.currency_code.map(|code| rows.texts.place(code)),
        };
        rows.push(RowParts {
            row_id: place.row_id,
            line,
            entity_input: place.entity_input,
            year: place.year,
            group: place.group,
            value_input: (!figure.moved).then_some(cell),
            value,
            currency,
            flags: row_flags,
        })
        .map_err(|e| e.error(self.file))?;
        Ok(value)
    }

    fn year(
        &self,
        cell: &str,
        line: usize,
        column: &str,
        row_flags: &mut Vec<&'static str>,
    ) -> Result<Option<i32>> {
        match layout::parse_year_cell(cell) {
            Ok(Some(year)) => Ok(Some(year)),
            Ok(None) => {
                row_flags.push(flags::MISSING_YEAR);
                Ok(None)
            }
            Err(_) if self.options.lenient => {
                row_flags.push(flags::UNPARSED_YEAR);
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

pub(super) fn checked_currency(
    text: &str,
    cell: Option<(usize, &str)>,
    file: &str,
) -> Result<String> {
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
