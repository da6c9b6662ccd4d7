//! The adjusted table as it is written: the engine's columns (figures, factors, stages, ranks)
//! in a polars frame, and beside it the texts of each row (its id, the entity as given and as
//! resolved, the group, the figure as given, the currency) and its flags, each text held once
//! and written into a cell only when a file is written. Held as polars text columns, those
//! texts cost about 2 GB of fresh memory at 10M rows (sixteen bytes a cell, and more for long
//! names); here the entities are held once, the groups and currencies once per distinct text,
//! and the flags once per distinct combination.
//!
//! The csv writer renders the texts straight into its buffers (`CellTable`); every other
//! output (Parquet, json, the terminal and Markdown tables, the report, the audit) takes
//! `text_frame`, the same cells as polars text columns. Both go through `RowTexts::push`, so
//! a cell's text has one definition.

use crate::cells::text_column::TextColumn;
use crate::csv_writer::{self, CellSource, CellTable};
use crate::error::{Error, Result};
use crate::flags::{FlagColumn, FlagColumnBuilder, FlagCounts, LateFlags};
use crate::format::Rounding;
use crate::ingest::CanonicalRows;
use crate::resolve::{self, EntityColumns};
use polars::prelude::*;
use std::sync::{Arc, Mutex};

/// The column that carries a run's notice (the demo's INVENTED DATA) in its data files.
pub const NOTICE_COLUMN: &str = "data_notice";

/// An output column that is written from the rows' texts, not held in the frame.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TextKind {
    RowId,
    EntityInput,
    EntityCode,
    EntityName,
    EntityKind,
    Group,
    ValueInput,
    Currency,
}

const TEXT_KINDS: [(&str, TextKind); 8] = [
    ("row_id", TextKind::RowId),
    ("entity_input", TextKind::EntityInput),
    ("entity_code", TextKind::EntityCode),
    ("entity_name", TextKind::EntityName),
    ("entity_kind", TextKind::EntityKind),
    ("group", TextKind::Group),
    ("value_input", TextKind::ValueInput),
    ("currency", TextKind::Currency),
];

impl TextKind {
    /// The text column named `name`, if it is one.
    pub fn of(name: &str) -> Option<TextKind> {
        TEXT_KINDS
            .iter()
            .find(|(n, _)| *n == name)
            .map(|(_, kind)| *kind)
    }

    pub fn name(self) -> &'static str {
        TEXT_KINDS
            .iter()
            .find(|(_, kind)| *kind == self)
            .map_or("", |(name, _)| name)
    }
}

/// The texts of every row, in row order: what ingest read (through `CanonicalRows`, whose
/// year and figure columns have gone into the frame), the entities they resolved to, and
/// each row's entity-year with its factors and the flags they raised.
#[derive(Default)]
pub struct RowTexts {
    rows: CanonicalRows,
    entities: EntityColumns,
    /// Each row's entity-year (a row of `factors`), or none (no entity or no year).
    keys: Vec<Option<u32>>,
    /// The factors of each entity-year (`attach::lookup_frame`): written into each row that
    /// takes them, each formatted once.
    factors: DataFrame,
    /// The flags of each entity-year's factors (missing, from another year), joined with `;`.
    key_flags: Vec<Option<String>>,
    /// The factors' cells as written, per rounding asked for (formatted on first use).
    factor_texts: Mutex<Vec<(Rounding, Arc<Vec<TextColumn>>)>>,
}

/// The rows' entity-years: each row's place among them (none: no entity or no year), and
/// each one's factors and flags.
pub struct EntityYears {
    pub of_row: Vec<Option<u32>>,
    pub factors: DataFrame,
    pub flags: Vec<Option<String>>,
}

impl EntityYears {
    /// Each row's place, as polars gathers by it.
    pub fn places(&self) -> IdxCa {
        places(&self.of_row)
    }
}

fn places(of_row: &[Option<u32>]) -> IdxCa {
    of_row.iter().map(|k| k.map(|k| k as IdxSize)).collect()
}

/// A factor column (one row an entity-year) spread over the rows by their entity-years.
pub fn gather_by_rows(factor: &Column, places: &IdxCa) -> Result<Column> {
    factor
        .take(places)
        .map_err(Error::engine("attaching the reference factors"))
}

impl RowTexts {
    pub fn new(rows: CanonicalRows, entities: EntityColumns, years: EntityYears) -> RowTexts {
        RowTexts {
            rows,
            entities,
            keys: years.of_row,
            factors: years.factors,
            key_flags: years.flags,
            factor_texts: Mutex::new(Vec::new()),
        }
    }

    /// Whether output column `name` is written from the rows' texts or their entity-years'
    /// factors (the frame need not hold it).
    pub fn renders(&self, name: &str) -> bool {
        TextKind::of(name).is_some() || self.factor_at(name).is_some()
    }

    /// Whether `name` is a factor column written from the entity-years.
    fn factor_at(&self, name: &str) -> Option<usize> {
        self.factors.get_column_index(name)
    }

    /// Factor column `at`, spread over the rows.
    fn factor_column(&self, at: usize) -> Result<Column> {
        gather_by_rows(&self.factors.columns()[at], &places(&self.keys))
    }

    /// Every factor column's cells as written with `rounding`, one an entity-year.
    fn factor_texts(&self, rounding: Rounding) -> Result<Arc<Vec<TextColumn>>> {
        let mut cache = self
            .factor_texts
            .lock()
            .unwrap_or_else(std::sync::PoisonError::into_inner);
        if let Some((_, texts)) = cache.iter().find(|(r, _)| *r == rounding) {
            return Ok(texts.clone());
        }
        let texts: Vec<TextColumn> = self
            .factors
            .get_column_names()
            .iter()
            .map(|name| csv_writer::cell_texts(&self.factors, name, rounding))
            .collect::<Result<_>>()?;
        let texts = Arc::new(texts);
        cache.push((rounding, texts.clone()));
        Ok(texts)
    }

    pub fn len(&self) -> usize {
        self.keys.len()
    }

    pub fn is_empty(&self) -> bool {
        self.keys.is_empty()
    }

    /// Appends row `row`'s text of `kind` to `out`; false where the cell is empty (null).
    pub fn push(&self, kind: TextKind, row: usize, out: &mut String) -> bool {
        let entity = || self.entities.of(row);
        let text = match kind {
            TextKind::RowId => {
                let id = self.rows.row_id(row);
                out.push_str(itoa::Buffer::new().format(id.data_row));
                if let Some(year) = id.year_column {
                    out.push(':');
                    out.push_str(itoa::Buffer::new().format(year));
                }
                return true;
            }
            TextKind::EntityInput => Some(self.rows.entity_text(row)),
            TextKind::EntityCode => entity().map(|e| e.code.as_str()),
            TextKind::EntityName => entity().map(|e| e.name.as_str()),
            TextKind::EntityKind => entity().map(|e| e.kind.as_str()),
            TextKind::Group => self.rows.group_text(row),
            TextKind::ValueInput => Some(self.rows.value_input.get(row)),
            TextKind::Currency => resolve::row_currency(&self.rows, row, entity()),
        };
        match text {
            Some(text) => {
                out.push_str(text);
                true
            }
            None => false,
        }
    }

    /// The column of `kind`, as polars text (null where the cell is empty).
    pub fn column(&self, kind: TextKind) -> Column {
        let mut builder = StringChunkedBuilder::new(kind.name().into(), self.len());
        let mut text = String::new();
        for row in 0..self.len() {
            text.clear();
            if self.push(kind, row, &mut text) {
                builder.append_value(&text);
            } else {
                builder.append_null();
            }
        }
        builder.finish().into_column()
    }

    /// The factor flags of row `row`'s entity-year, and that entity-year's place.
    fn factor_flags(&self, row: usize) -> (Option<u32>, Option<&str>) {
        let key = self.keys[row];
        (key, key.and_then(|k| self.key_flags[k as usize].as_deref()))
    }

    /// Every row's flags: its early flags, then the late ones `late` gives for it.
    pub fn flags(&self, late: impl Fn(usize) -> LateFlags) -> FlagColumn {
        let mut builder = FlagColumnBuilder::new(self.len(), self.key_flags.len());
        for row in 0..self.len() {
            let (key, factor) = self.factor_flags(row);
            let own = self.rows.flags(row);
            if own.is_empty() {
                builder.push_shared(key, factor, late(row));
            } else {
                builder.push_own(own.iter().copied().chain(factor), late(row));
            }
        }
        builder.finish()
    }
}

/// One output column: a column of the frame, a text of the rows, the flags, or the notice.
#[derive(Debug, Clone, PartialEq)]
enum OutColumn {
    Frame(String),
    Text(TextKind),
    /// A factor column, written from the entity-years (its place among them, and its name).
    Factor(usize, String),
    Flags,
    Notice(String),
}

impl OutColumn {
    fn name(&self) -> &str {
        match self {
            OutColumn::Frame(name) | OutColumn::Factor(_, name) => name,
            OutColumn::Text(kind) => kind.name(),
            OutColumn::Flags => "flags",
            OutColumn::Notice(_) => NOTICE_COLUMN,
        }
    }
}

/// The output table: its columns in the documented order, each from the frame or rendered
/// from the rows' texts (see the module documentation).
#[derive(Clone)]
pub struct OutputTable {
    frame: DataFrame,
    texts: Option<Arc<RowTexts>>,
    flags: Option<Arc<FlagColumn>>,
    columns: Vec<OutColumn>,
}

impl OutputTable {
    /// A table whose columns `names` come from `frame`, the texts of `texts` and `flags`.
    pub fn compact(
        frame: DataFrame,
        texts: RowTexts,
        flags: Option<FlagColumn>,
        names: &[String],
    ) -> OutputTable {
        let columns = names
            .iter()
            .map(|name| match (TextKind::of(name), name.as_str()) {
                (Some(kind), _) => OutColumn::Text(kind),
                (None, "flags") if flags.is_some() => OutColumn::Flags,
                _ => match texts.factor_at(name) {
                    Some(at) => OutColumn::Factor(at, name.clone()),
                    None => OutColumn::Frame(name.clone()),
                },
            })
            .collect();
        OutputTable {
            frame,
            texts: Some(Arc::new(texts)),
            flags: flags.map(Arc::new),
            columns,
        }
    }

    /// A table of the columns of `frame`, as they are.
    pub fn plain(frame: DataFrame) -> OutputTable {
        let columns = frame
            .get_column_names()
            .iter()
            .map(|n| OutColumn::Frame(n.to_string()))
            .collect();
        OutputTable {
            frame,
            texts: None,
            flags: None,
            columns,
        }
    }

    pub fn height(&self) -> usize {
        self.frame.height()
    }

    pub fn width(&self) -> usize {
        self.columns.len()
    }

    pub fn column_names(&self) -> Vec<String> {
        self.columns.iter().map(|c| c.name().to_string()).collect()
    }

    /// The rows flagged and the flags by kind.
    pub fn flag_counts(&self) -> Result<FlagCounts> {
        match &self.flags {
            Some(flags) => Ok(flags.counts()),
            None => FlagCounts::of(&self.frame),
        }
    }

    /// The table with the notice as its first column, on every row.
    pub fn with_notice(&self, notice: &str) -> OutputTable {
        let mut marked = self.clone();
        marked
            .columns
            .insert(0, OutColumn::Notice(notice.to_string()));
        marked
    }

    /// The table with only the columns `names`, in that order.
    pub fn select(&self, names: &[String]) -> Result<OutputTable> {
        let columns = names
            .iter()
            .map(|name| {
                self.columns
                    .iter()
                    .find(|c| c.name() == name)
                    .cloned()
                    .ok_or_else(|| {
                        Error::engine("selecting the output columns")(polars_err!(
                            ColumnNotFound: "{name}"
                        ))
                    })
            })
            .collect::<Result<Vec<_>>>()?;
        Ok(OutputTable {
            columns,
            ..self.clone()
        })
    }

    /// Every output column as a polars column, the texts as text (null where empty).
    pub fn text_frame(&self) -> Result<DataFrame> {
        let height = self.height();
        let columns = self
            .columns
            .iter()
            .map(|column| {
                Ok(match column {
                    OutColumn::Frame(name) => self
                        .frame
                        .column(name)
                        .map_err(Error::engine("writing the output columns"))?
                        .clone(),
                    OutColumn::Text(kind) => self.texts()?.column(*kind),
                    OutColumn::Factor(at, _) => self.texts()?.factor_column(*at)?,
                    OutColumn::Flags => self.flag_column()?.to_column("flags"),
                    OutColumn::Notice(notice) => {
                        Column::new(NOTICE_COLUMN.into(), vec![notice.as_str(); height])
                    }
                })
            })
            .collect::<Result<Vec<Column>>>()?;
        DataFrame::new(height, columns).map_err(Error::engine("writing the output columns"))
    }

    fn texts(&self) -> Result<&RowTexts> {
        self.texts
            .as_deref()
            .ok_or_else(|| missing("the rows' texts"))
    }

    fn flag_column(&self) -> Result<&FlagColumn> {
        self.flags.as_deref().ok_or_else(|| missing("the flags"))
    }
}

fn missing(what: &str) -> Error {
    Error::engine("writing the output columns")(polars_err!(ComputeError: "{what} are not held"))
}

impl CellTable for OutputTable {
    fn frame(&self) -> &DataFrame {
        &self.frame
    }

    fn ready(&self, rounding: Rounding) -> Result<()> {
        match &self.texts {
            Some(texts) => texts.factor_texts(rounding).map(|_| ()),
            None => Ok(()),
        }
    }

    fn names(&self) -> Vec<String> {
        self.column_names()
    }

    fn cells<'a>(
        &'a self,
        at: usize,
        slice: &'a DataFrame,
        rows: std::ops::Range<usize>,
        rounding: Rounding,
    ) -> CellSource<'a> {
        let mut row = rows.start;
        match (&self.columns[at], &self.texts, &self.flags) {
            (OutColumn::Text(kind), Some(texts), _) => {
                let kind = *kind;
                CellSource::Rendered(Box::new(move |out| {
                    texts.push(kind, row, out);
                    row += 1;
                }))
            }
            (OutColumn::Factor(at, _), Some(texts), _) => {
                // Formatted once an entity-year, by `ready`: this is its cached result.
                let factor_texts = texts
                    .factor_texts(rounding)
                    .expect("the factor texts are formatted by CellTable::ready");
                let at = *at;
                CellSource::Rendered(Box::new(move |out| {
                    if let Some(key) = texts.keys[row] {
                        out.push_str(factor_texts[at].get(key as usize));
                    }
                    row += 1;
                }))
            }
            (OutColumn::Flags, _, Some(flags)) => CellSource::Rendered(Box::new(move |out| {
                out.push_str(flags.text(row));
                row += 1;
            })),
            (OutColumn::Notice(notice), _, _) => {
                CellSource::Rendered(Box::new(move |out| out.push_str(notice)))
            }
            (column, _, _) => CellSource::new(slice, column.name(), rounding),
        }
    }
}
