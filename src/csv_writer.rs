//! The csv writer: every csv a run writes (the output table, a streamed piece, the chart csv)
//! goes through `write_csv`, from the typed columns of a frame, or from a `CellTable` that
//! renders some of its columns only when written. Cells are formatted by `format`'s rules;
//! quoting is the csv crate's, and slices of rows are formatted on polars' threads.

use crate::cells::text_column::TextColumn;
use crate::error::{Error, Result};
use crate::format::{column_texts, format_number, runs_as_formula, Rounding};
use crate::shortest::push_shortest;
use polars::prelude::*;

/// A column's cells, appended one at a time to a slice's buffer: the csv writer's path, which
/// allocates nothing per cell for numbers and text. Gives the same text as `column_texts`.
pub enum CellSource<'a> {
    Float(FloatCells<'a>),
    Int(Box<dyn Iterator<Item = Option<i64>> + 'a>),
    Text(Box<dyn Iterator<Item = Option<&'a str>> + 'a>),
    /// Text written by the table itself, one cell per call, into the buffer it is given
    /// (a column that is not held as text: see `CellTable`).
    Rendered(Box<dyn FnMut(&mut String) + 'a>),
    Other(std::vec::IntoIter<String>),
}

impl<'a> CellSource<'a> {
    pub fn new(frame: &'a DataFrame, name: &str, rounding: Rounding) -> CellSource<'a> {
        let Ok(column) = frame.column(name) else {
            return CellSource::Other(vec![String::new(); frame.height()].into_iter());
        };
        let series = column.as_materialized_series();
        match series.dtype() {
            DataType::Float64 => match series.f64() {
                Ok(ca) => CellSource::Float(FloatCells {
                    arrays: ca.downcast_iter().collect(),
                    array: 0,
                    at: 0,
                }),
                Err(_) => CellSource::Other(column_texts(frame, name, rounding, false).into_iter()),
            },
            DataType::Int64 => match series.i64() {
                Ok(ca) => CellSource::Int(Box::new(ca.iter())),
                Err(_) => CellSource::Other(column_texts(frame, name, rounding, false).into_iter()),
            },
            DataType::Int32 => match series.i32() {
                Ok(ca) => CellSource::Int(Box::new(ca.iter().map(|v| v.map(i64::from)))),
                Err(_) => CellSource::Other(column_texts(frame, name, rounding, false).into_iter()),
            },
            DataType::String => match series.str() {
                Ok(ca) => CellSource::Text(Box::new(ca.iter())),
                Err(_) => CellSource::Other(column_texts(frame, name, rounding, false).into_iter()),
            },
            _ => CellSource::Other(column_texts(frame, name, rounding, false).into_iter()),
        }
    }

    /// Appends the next cell's text to `out` (`guard`: see `write_csv`); `row` holds the
    /// row's numbers written so far.
    fn push_next(
        &mut self,
        rounding: Rounding,
        guard: bool,
        out: &mut String,
        row: &mut RowNumbers,
    ) {
        match self {
            CellSource::Float(cells) => match cells.next() {
                Some(x) if rounding == Rounding::Full && x.is_finite() => {
                    row.push_shortest(out, if x == 0.0 { 0.0 } else { x });
                }
                Some(x) => out.push_str(&format_number(x, rounding, false)),
                None => {}
            },
            CellSource::Int(cells) => {
                if let Some(x) = cells.next().flatten() {
                    out.push_str(itoa::Buffer::new().format(x));
                }
            }
            CellSource::Text(cells) => {
                let text = cells.next().flatten().unwrap_or("");
                if guard && runs_as_formula(text) {
                    out.push('\'');
                }
                out.push_str(text);
            }
            CellSource::Rendered(render) => {
                let start = out.len();
                render(out);
                if guard && runs_as_formula(&out[start..]) {
                    out.insert(start, '\'');
                }
            }
            CellSource::Other(cells) => out.push_str(&cells.next().unwrap_or_default()),
        }
    }

    /// Appends the next cell to `out` as a csv field. Numbers never need quotes; other text
    /// is quoted as the csv crate quotes it (see `needs_quotes`).
    fn push_csv_field(
        &mut self,
        rounding: Rounding,
        guard: bool,
        out: &mut String,
        row: &mut RowNumbers,
    ) {
        if matches!(self, CellSource::Float(_) | CellSource::Int(_)) {
            return self.push_next(rounding, guard, out, row);
        }
        let start = out.len();
        self.push_next(rounding, guard, out, row);
        if needs_quotes(&out[start..]) {
            let field = out.split_off(start);
            push_quoted(out, &field);
        }
    }
}

/// A float column's cells over a slice, read straight from its arrays (none for a null).
pub struct FloatCells<'a> {
    arrays: Vec<&'a <Float64Type as PolarsDataType>::Array>,
    array: usize,
    at: usize,
}

impl FloatCells<'_> {
    fn next(&mut self) -> Option<f64> {
        loop {
            let values = self.arrays.get(self.array)?;
            if self.at < values.len() {
                let at = self.at;
                self.at += 1;
                return StaticArray::get(*values, at);
            }
            self.array += 1;
            self.at = 0;
        }
    }
}

/// The last few numbers written in a row, and where their text is in the buffer: a row often
/// writes the same number twice (the adjusted value is the last stage's; the figure in local
/// currency is the figure), and its text is then copied instead of formatted again.
#[derive(Default)]
struct RowNumbers {
    written: [(u64, usize, usize); 4],
    len: usize,
}

impl RowNumbers {
    fn start_row(&mut self) {
        self.len = 0;
    }

    /// Appends `x`'s shortest text (`push_shortest`), copied from earlier in the row when the
    /// row wrote the same number.
    fn push_shortest(&mut self, out: &mut String, x: f64) {
        let bits = x.to_bits();
        let known = self.written[..self.len.min(4)]
            .iter()
            .find(|(b, _, _)| *b == bits);
        match known {
            Some(&(_, start, end)) => out.extend_from_within(start..end),
            None => {
                let start = out.len();
                push_shortest(out, x);
                self.written[self.len % 4] = (bits, start, out.len());
                self.len += 1;
            }
        }
    }
}

/// The cells of column `name` of `frame` as the csv writer writes them (unquoted), each once:
/// a column of few distinct rows (a factor per entity-year) is formatted here and copied into
/// every row that takes it.
pub fn cell_texts(frame: &DataFrame, name: &str, rounding: Rounding) -> Result<TextColumn> {
    let mut cells = CellSource::new(frame, name, rounding);
    let mut texts = TextColumn::with_capacity(frame.height());
    let mut cell = String::new();
    let mut row = RowNumbers::default();
    for _ in 0..frame.height() {
        cell.clear();
        row.start_row();
        cells.push_next(rounding, false, &mut cell, &mut row);
        texts
            .push(&cell)
            .map_err(|e| e.error("the formatted reference factors"))?;
    }
    Ok(texts)
}

/// Whether a csv field must be quoted: it holds the delimiter, a quote or a line break (the csv
/// crate's rule for its default writer with a `\n` terminator).
fn needs_quotes(field: &str) -> bool {
    field
        .bytes()
        .any(|b| matches!(b, b',' | b'"' | b'\n' | b'\r'))
}

/// `field` in quotes, its quotes doubled (RFC 4180).
fn push_quoted(out: &mut String, field: &str) {
    out.push('"');
    out.push_str(&field.replace('"', "\"\""));
    out.push('"');
}

/// The frame as csv text; `guard` neutralises text cells a spreadsheet would run as formulas.
pub fn render_csv(frame: &DataFrame, rounding: Rounding, guard: bool) -> Result<String> {
    let mut bytes = Vec::new();
    write_csv(frame, rounding, true, guard, &mut bytes)?;
    Ok(String::from_utf8_lossy(&bytes).into_owned())
}

/// Rows formatted at a time by one thread: the text of a few slices is held, not the frame's.
const CSV_SLICE_ROWS: usize = 8_192;

/// The csv writer's settings, the same for the header and for every slice.
fn csv_writer<W: std::io::Write>(out: W) -> csv::Writer<W> {
    csv::WriterBuilder::new()
        .terminator(csv::Terminator::Any(b'\n'))
        .buffer_capacity(1 << 16)
        .from_writer(out)
}

fn write_error(e: std::io::Error) -> Error {
    Error::io("the csv output", "write", e)
}

fn csv_error(e: impl std::fmt::Display) -> Error {
    write_error(std::io::Error::other(e.to_string()))
}

/// A table the csv writer can write: a frame, and for each output column its cells over a
/// range of rows. A plain `DataFrame` writes its own columns; `output::OutputTable` also
/// writes columns it renders only when written (texts, flags).
pub trait CellTable: Sync {
    /// The rows, in the columns the table holds (sliced for each part written).
    fn frame(&self) -> &DataFrame;
    /// The output columns' names, in order.
    fn names(&self) -> Vec<String>;
    /// The cells of output column `at` for the rows `rows` (`slice` is the frame over them).
    fn cells<'a>(
        &'a self,
        at: usize,
        slice: &'a DataFrame,
        rows: std::ops::Range<usize>,
        rounding: Rounding,
    ) -> CellSource<'a>;
    /// Work that can fail, done once before any cell is asked for (`write_csv` calls it).
    fn ready(&self, _rounding: Rounding) -> Result<()> {
        Ok(())
    }
}

impl CellTable for DataFrame {
    fn frame(&self) -> &DataFrame {
        self
    }

    fn names(&self) -> Vec<String> {
        self.get_column_names()
            .iter()
            .map(|n| n.to_string())
            .collect()
    }

    fn cells<'a>(
        &'a self,
        at: usize,
        slice: &'a DataFrame,
        _rows: std::ops::Range<usize>,
        rounding: Rounding,
    ) -> CellSource<'a> {
        CellSource::new(slice, slice.get_column_names()[at].as_str(), rounding)
    }
}

/// The csv text of the rows `rows` of `table` (no header line), byte for byte what the csv
/// crate's writer gives for the same cells (the unit tests hold the two to each other),
/// written straight into one buffer: the crate's per-field state machine cost more than the
/// formatting.
fn slice_csv(
    table: &dyn CellTable,
    rows: std::ops::Range<usize>,
    width: usize,
    rounding: Rounding,
    guard: bool,
    mut out: String,
) -> String {
    let height = rows.len();
    let slice = table.frame().slice(rows.start as i64, height);
    out.clear();
    out.reserve(height * (width * 12 + 1));
    let mut columns: Vec<CellSource> = (0..width)
        .map(|at| table.cells(at, &slice, rows.clone(), rounding))
        .collect();
    let mut row = RowNumbers::default();
    for _ in 0..height {
        let row_start = out.len();
        row.start_row();
        for (i, column) in columns.iter_mut().enumerate() {
            if i > 0 {
                out.push(',');
            }
            column.push_csv_field(rounding, guard, &mut out, &mut row);
        }
        // A row of one empty cell is written `""`, so that it is not a blank line.
        if out.len() == row_start {
            out.push_str("\"\"");
        }
        out.push('\n');
    }
    out
}

/// The formatted slices' buffers, handed back once written and reused for the next slices:
/// each new buffer is fresh memory the kernel zeroes (2.5 MB a slice of the benchmark's
/// output), which cost as much as the copy into the file on this machine.
#[derive(Default)]
struct Buffers(std::sync::Mutex<Vec<String>>);

impl Buffers {
    fn take(&self) -> String {
        self.0
            .lock()
            .unwrap_or_else(std::sync::PoisonError::into_inner)
            .pop()
            .unwrap_or_default()
    }

    fn give_back(&self, batch: Vec<String>) {
        self.0
            .lock()
            .unwrap_or_else(std::sync::PoisonError::into_inner)
            .extend(batch);
    }
}

/// Writes the frame as csv (with or without the header line) to `out`. Slices of
/// `CSV_SLICE_ROWS` rows are formatted on polars' threads, one slice a thread, each by the same
/// code into its own buffer, and written in order: the bytes are those of one writer. The
/// calling thread writes one batch of slices while the pool formats the next, so the kernel's
/// copy into the file overlaps the formatting (a bounded channel holds one batch in waiting);
/// called from a pool thread, it formats and writes in turn.
/// With `guard`, a text cell that a spreadsheet would take for a formula (it starts with `=`,
/// `+`, `-`, `@`, a tab or a carriage return and is not a number) is written with a leading
/// `'`, the common defence of csv exports (OWASP, "CSV Injection"); numbers are never touched.
pub fn write_csv(
    table: &dyn CellTable,
    rounding: Rounding,
    header: bool,
    guard: bool,
    out: &mut dyn std::io::Write,
) -> Result<()> {
    table.ready(rounding)?;
    let names = table.names();
    if header {
        let mut writer = csv_writer(&mut *out);
        writer.write_record(&names).map_err(csv_error)?;
        writer.flush().map_err(write_error)?;
    }
    let format = Format {
        table,
        width: names.len(),
        rounding,
        guard,
        buffers: Buffers::default(),
    };
    let format = &format;
    if on_the_pool() {
        // On one of the pool's threads (a batch job): a writer waiting here for the pool to
        // format would hold a thread the formatting needs, so format and write in turn.
        let mut failed = None;
        format.batches(|batch| {
            failed = format.write(&mut *out, batch).err();
            failed.is_none()
        });
        return match failed {
            Some(e) => Err(e),
            None => out.flush().map_err(write_error),
        };
    }
    let (batches, written) = std::sync::mpsc::sync_channel::<Vec<String>>(1);
    std::thread::scope(|scope| {
        // The sender moves into the formatter: the channel closes when it has sent the last,
        // and the formatter stops at its next send once the receiver is gone (a failed write).
        scope.spawn(move || format.batches(|batch| batches.send(batch).is_ok()));
        written
            .into_iter()
            .try_for_each(|batch| format.write(&mut *out, batch))
    })?;
    out.flush().map_err(write_error)
}

/// Whether this thread is one of the pool's (a batch job runs its tables there). A writer that
/// waits there for the pool to format would hold a thread the formatting needs: with every
/// thread so held, nothing moves, so such a writer formats and writes in turn.
pub fn on_the_pool() -> bool {
    polars_core::runtime::THREAD_POOL
        .current_thread_index()
        .is_some()
}

/// What the slices of one csv are formatted with.
struct Format<'a> {
    table: &'a dyn CellTable,
    width: usize,
    rounding: Rounding,
    guard: bool,
    buffers: Buffers,
}

impl Format<'_> {
    /// Writes a batch of formatted slices, in order, and hands their buffers back.
    fn write(&self, out: &mut dyn std::io::Write, batch: Vec<String>) -> Result<()> {
        batch
            .iter()
            .try_for_each(|text| out.write_all(text.as_bytes()).map_err(write_error))?;
        self.buffers.give_back(batch);
        Ok(())
    }

    /// Formats the table's rows in batches of one slice per pool thread and hands each
    /// batch, in order, to `take`; stops when `take` says no (the writer has gone).
    fn batches(&self, mut take: impl FnMut(Vec<String>) -> bool) {
        use rayon::prelude::*;
        let pool = &polars_core::runtime::THREAD_POOL;
        let height = self.table.frame().height();
        let batch = CSV_SLICE_ROWS * pool.current_num_threads().max(1);
        let mut start = 0;
        while start < height {
            let starts: Vec<usize> = (start..height.min(start + batch))
                .step_by(CSV_SLICE_ROWS)
                .collect();
            let texts: Vec<String> = pool.install(|| {
                starts
                    .par_iter()
                    .map(|&s| {
                        let rows = s..height.min(s + CSV_SLICE_ROWS);
                        let (width, rounding, guard) = (self.width, self.rounding, self.guard);
                        slice_csv(
                            self.table,
                            rows,
                            width,
                            rounding,
                            guard,
                            self.buffers.take(),
                        )
                    })
                    .collect()
            });
            if !take(texts) {
                return;
            }
            start += batch;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn slices_formatted_on_several_threads_are_written_in_order() {
        // 200,003 rows span four slices and a short last one; the text must equal one csv
        // writer fed row by row (the csv crate, with `{}` for numbers).
        let rows = 2 * CSV_SLICE_ROWS * 3 / 2 + 3;
        let ids: Vec<i64> = (0..rows as i64).collect();
        let values: Vec<Option<f64>> = (0..rows)
            .map(|i| (i % 7 != 0).then(|| i as f64 / 3.0))
            .collect();
        let names: Vec<String> = (0..rows).map(|i| format!("n,{}", i % 11)).collect();
        let frame = df!("id" => ids, "value" => values.clone(), "name" => names.clone()).unwrap();
        let mut bytes = Vec::new();
        write_csv(&frame, Rounding::Full, true, false, &mut bytes).unwrap();
        let mut expected = csv::WriterBuilder::new()
            .terminator(csv::Terminator::Any(b'\n'))
            .from_writer(Vec::new());
        expected.write_record(["id", "value", "name"]).unwrap();
        for i in 0..rows {
            let value = values[i].map(|v| format!("{v}")).unwrap_or_default();
            expected
                .write_record([i.to_string(), value, names[i].clone()])
                .unwrap();
        }
        assert_eq!(bytes, expected.into_inner().unwrap());
    }

    #[test]
    fn a_failed_write_stops_the_formatter_and_the_pool_path_writes_the_same_bytes() {
        /// Takes `room` bytes, then fails as a full disk does.
        struct FullDisk {
            room: usize,
        }
        impl std::io::Write for FullDisk {
            fn write(&mut self, buf: &[u8]) -> std::io::Result<usize> {
                if self.room < buf.len() {
                    return Err(std::io::Error::other("no space left on device"));
                }
                self.room -= buf.len();
                Ok(buf.len())
            }
            fn flush(&mut self) -> std::io::Result<()> {
                Ok(())
            }
        }
        // Several batches (a batch is one slice a pool thread) and a short last one.
        let threads = polars_core::runtime::THREAD_POOL
            .current_num_threads()
            .max(1);
        let rows = (3 * threads + 1) * CSV_SLICE_ROWS + 5;
        let values: Vec<f64> = (0..rows).map(|i| i as f64 / 7.0).collect();
        let frame = df!("value" => values).unwrap();
        let failed = write_csv(
            &frame,
            Rounding::Full,
            true,
            false,
            &mut FullDisk { room: 1 << 16 },
        );
        assert!(failed.unwrap_err().to_string().contains("no space left"));
        // From one of the pool's threads (a batch job) the rows are formatted and written in
        // turn, to the same bytes.
        let mut here = Vec::new();
        write_csv(&frame, Rounding::Full, true, false, &mut here).unwrap();
        let on_pool = polars_core::runtime::THREAD_POOL.install(|| {
            let mut bytes = Vec::new();
            write_csv(&frame, Rounding::Full, true, false, &mut bytes).unwrap();
            bytes
        });
        assert_eq!(here, on_pool);
        assert_eq!(here.iter().filter(|&&b| b == b'\n').count(), rows + 1);
        // The formatter stops at the first batch the writer refuses (the channel's send fails
        // once the writer has gone), and otherwise hands over every batch, in order.
        let format = Format {
            table: &frame,
            width: 1,
            rounding: Rounding::Full,
            guard: false,
            buffers: Buffers::default(),
        };
        let mut offered = 0;
        format.batches(|_| {
            offered += 1;
            false
        });
        assert_eq!(offered, 1);
        let mut batches = Vec::new();
        format.batches(|batch| {
            batches.push(batch.concat());
            // Buffers handed back are reused, cleared, for the next slices.
            format.buffers.give_back(batch);
            true
        });
        assert_eq!(batches.len(), rows.div_ceil(CSV_SLICE_ROWS * threads));
        assert_eq!(batches.concat().as_bytes(), &here["value\n".len()..]);
    }

    #[test]
    fn fields_are_quoted_as_the_csv_crate_quotes_them() {
        let tricky = [
            "",
            "plain",
            "a,b",
            "say \"hi\"",
            "\"",
            "line\nbreak",
            "cr\rhere",
            "'=1+1",
            " x ",
            "é,ü",
            ";",
            "\t",
            "#",
            "\"\"",
        ];
        for (a, b) in tricky
            .iter()
            .flat_map(|a| tricky.iter().map(move |b| (a, b)))
        {
            let frame = df!("a" => [*a], "b" => [*b]).unwrap();
            let ours = slice_csv(&frame, 0..1, 2, Rounding::Full, false, "stale".into());
            let mut theirs = csv_writer(Vec::new());
            theirs.write_record([a, b]).unwrap();
            assert_eq!(ours.as_bytes(), theirs.into_inner().unwrap(), "{a:?} {b:?}");
        }
        // One column: an empty cell is `""`, as the crate writes it.
        for cell in tricky {
            let frame = df!("a" => [cell]).unwrap();
            let ours = slice_csv(&frame, 0..1, 1, Rounding::Full, false, String::new());
            let mut theirs = csv_writer(Vec::new());
            theirs.write_record([cell]).unwrap();
            assert_eq!(ours.as_bytes(), theirs.into_inner().unwrap(), "{cell:?}");
        }
    }
}
