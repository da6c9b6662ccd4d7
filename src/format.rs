//! Turning frame cells into text: full precision for machine formats, rounded for reading.
//!
//! One rounding rule everywhere: half to even (banker's rounding, the IEEE 754 default), either
//! to a number of decimals (`--decimals`) or to significant digits (`--sig`). Without either,
//! machine formats (csv, json) keep every digit and reader formats (table, md) use the reading
//! rule: no decimals from 100 up, two from 1 up, three significant digits below 1.

use crate::error::{Error, Result};
use crate::shortest::{push_shortest, shortest};
use polars::prelude::*;
use rust_decimal::prelude::FromPrimitive;
use rust_decimal::{Decimal, RoundingStrategy};
use std::str::FromStr;

/// How to round numbers when writing.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, serde::Serialize)]
pub enum Rounding {
    /// Every digit (shortest text that reads back to the same f64).
    #[default]
    Full,
    /// The reading rule described above.
    Reading,
    Decimals(u32),
    Significant(u32),
}

/// Formats one number; `grouping` adds thousands separators (reader formats only).
pub fn format_number(value: f64, rounding: Rounding, grouping: bool) -> String {
    if !value.is_finite() {
        return String::new();
    }
    let text = match rounding {
        Rounding::Full => {
            let v = if value == 0.0 { 0.0 } else { value };
            shortest(v)
        }
        Rounding::Decimals(dp) => round_dp(value, dp),
        Rounding::Significant(sig) => round_sig(value, sig.max(1)),
        Rounding::Reading => {
            let magnitude = value.abs();
            if magnitude >= 100.0 {
                round_dp(value, 0)
            } else if magnitude >= 1.0 {
                round_dp(value, 2)
            } else {
                round_sig(value, 3)
            }
        }
    };
    if grouping {
        group_thousands(&text)
    } else {
        text
    }
}

/// The decimal a reader sees for `value`: its shortest round-trip text, so that 2.675 rounds as
/// 2.675 and not as the binary 2.67499999...
fn to_decimal(value: f64) -> Option<Decimal> {
    let text = shortest(value);
    Decimal::from_str(&text)
        .ok()
        .or_else(|| Decimal::from_f64(value))
}

/// Digits before the decimal point of `d` (1 for numbers below one).
fn integer_digits(d: Decimal) -> u32 {
    d.abs()
        .trunc()
        .normalize()
        .to_string()
        .trim_start_matches('-')
        .len() as u32
}

fn round_dp(value: f64, dp: u32) -> String {
    // The decimal holds 28 digits in all; beyond that, f64's own formatting (also round half
    // to even on the binary value) serves.
    match to_decimal(value).filter(|d| integer_digits(*d) + dp <= 28) {
        Some(d) => {
            let rounded = d.round_dp_with_strategy(dp, RoundingStrategy::MidpointNearestEven);
            let rounded = if rounded.is_zero() {
                Decimal::ZERO
            } else {
                rounded
            };
            format!("{:.*}", dp as usize, rounded)
        }
        // Beyond Decimal's range: f64's own formatting, which rounds half to even as well.
        None => format!("{:.*}", dp as usize, value),
    }
}

fn round_sig(value: f64, sig: u32) -> String {
    if value == 0.0 {
        return "0".into();
    }
    let exponent = value.abs().log10().floor() as i32;
    let dp = sig as i32 - 1 - exponent;
    if dp >= 0 {
        round_dp(value, dp as u32)
    } else {
        let scale = 10f64.powi(-dp);
        let rounded = match to_decimal(value / scale) {
            Some(d) => d.round_dp_with_strategy(0, RoundingStrategy::MidpointNearestEven),
            None => return format!("{value:.0}"),
        };
        let whole: f64 =
            rust_decimal::prelude::ToPrimitive::to_f64(&rounded).unwrap_or(value) * scale;
        format!("{whole:.0}")
    }
}

fn group_thousands(text: &str) -> String {
    let (sign, rest) = match text.strip_prefix('-') {
        Some(r) => ("-", r),
        None => ("", text),
    };
    let (integer, fraction) = match rest.find('.') {
        Some(i) => (&rest[..i], &rest[i..]),
        None => (rest, ""),
    };
    if integer.len() <= 3 || !integer.bytes().all(|b| b.is_ascii_digit()) {
        return text.to_string();
    }
    let mut grouped = String::new();
    for (i, c) in integer.chars().enumerate() {
        if i > 0 && (integer.len() - i) % 3 == 0 {
            grouped.push(',');
        }
        grouped.push(c);
    }
    format!("{sign}{grouped}{fraction}")
}

/// Text from an input shown to a person: control characters (ESC, BEL, carriage returns and
/// the like, which a terminal would act on) are written as `\u{1b}` escapes. Line breaks are
/// kept; callers that need one line per cell replace them (see `one_line`).
pub fn visible(text: &str) -> std::borrow::Cow<'_, str> {
    if !text.chars().any(|c| c.is_control() && c != '\n') {
        return std::borrow::Cow::Borrowed(text);
    }
    let mut out = String::with_capacity(text.len() + 8);
    for c in text.chars() {
        if c.is_control() && c != '\n' {
            out.push_str(&c.escape_unicode().to_string());
        } else {
            out.push(c);
        }
    }
    std::borrow::Cow::Owned(out)
}

/// A cell for a one-line-per-row format (terminal table, Markdown): control characters
/// escaped and line breaks written as `\n`.
pub fn one_line(text: &str) -> String {
    visible(text).replace('\n', "\\n")
}

/// The one escaping of every string written into HTML or SVG: `& < > " '` as entities, and
/// control characters made visible. The report and the charts cannot write input text by
/// another route.
pub fn html_escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in visible(text).chars() {
        match c {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&#39;"),
            other => out.push(other),
        }
    }
    out
}

/// Whether a spreadsheet would take a text cell for a formula: it starts with `=`, `+`, `-`,
/// `@`, a tab or a carriage return, and is not a number or a missing-value mark (`-12`, `+3`
/// and `-` are left as they are).
pub fn runs_as_formula(text: &str) -> bool {
    text.starts_with(['=', '+', '-', '@', '\t', '\r'])
        && crate::cells::number::parse_cell(text, Default::default()).is_err()
}

/// A float column's cells (all null when the column is absent).
pub fn floats(frame: &DataFrame, name: &str) -> Vec<Option<f64>> {
    frame
        .column(name)
        .ok()
        .and_then(|c| c.f64().ok().map(|ca| ca.iter().collect()))
        .unwrap_or_else(|| vec![None; frame.height()])
}

/// An integer column's cells as i64 (all null when the column is absent).
pub fn ints(frame: &DataFrame, name: &str) -> Vec<Option<i64>> {
    frame
        .column(name)
        .ok()
        .and_then(|c| c.cast(&DataType::Int64).ok())
        .and_then(|c| c.i64().ok().map(|ca| ca.iter().collect()))
        .unwrap_or_else(|| vec![None; frame.height()])
}

/// A column as text cells (empty for null).
pub fn column_texts(
    frame: &DataFrame,
    name: &str,
    rounding: Rounding,
    grouping: bool,
) -> Vec<String> {
    let Ok(column) = frame.column(name) else {
        return vec![String::new(); frame.height()];
    };
    let series = column.as_materialized_series();
    match series.dtype() {
        DataType::Float64 => series
            .f64()
            .map(|ca| {
                ca.iter()
                    .map(|v| {
                        v.map(|x| format_number(x, rounding, grouping))
                            .unwrap_or_default()
                    })
                    .collect()
            })
            .unwrap_or_default(),
        DataType::String => series
            .str()
            .map(|ca| ca.iter().map(|v| v.unwrap_or("").to_string()).collect())
            .unwrap_or_default(),
        _ => (0..series.len())
            .map(|i| match series.get(i) {
                Ok(AnyValue::Null) | Err(_) => String::new(),
                Ok(v) => v.to_string().trim_matches('"').to_string(),
            })
            .collect(),
    }
}

/// A column's cells, appended one at a time to a slice's buffer: the csv writer's path, which
/// allocates nothing per cell for numbers and text. Gives the same text as `column_texts`.
pub enum CellSource<'a> {
    Float(Box<dyn Iterator<Item = Option<f64>> + 'a>),
    Int(Box<dyn Iterator<Item = Option<i64>> + 'a>),
    Text(Box<dyn Iterator<Item = Option<&'a str>> + 'a>),
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
                Ok(ca) => CellSource::Float(Box::new(ca.iter())),
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

    /// Appends the next cell's text to `out` (`guard`: see `write_csv`).
    fn push_next(&mut self, rounding: Rounding, guard: bool, out: &mut String) {
        match self {
            CellSource::Float(cells) => match cells.next().flatten() {
                Some(x) if rounding == Rounding::Full && x.is_finite() => {
                    push_shortest(out, if x == 0.0 { 0.0 } else { x });
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
            CellSource::Other(cells) => out.push_str(&cells.next().unwrap_or_default()),
        }
    }

    /// Appends the next cell to `out` as a csv field. Numbers never need quotes; other text
    /// is quoted as the csv crate quotes it (see `needs_quotes`).
    fn push_csv_field(&mut self, rounding: Rounding, guard: bool, out: &mut String) {
        if matches!(self, CellSource::Float(_) | CellSource::Int(_)) {
            return self.push_next(rounding, guard, out);
        }
        let start = out.len();
        self.push_next(rounding, guard, out);
        if needs_quotes(&out[start..]) {
            let field = out.split_off(start);
            push_quoted(out, &field);
        }
    }
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

/// A column as JSON values (numbers stay numbers).
pub fn column_json(frame: &DataFrame, name: &str, rounding: Rounding) -> Vec<serde_json::Value> {
    let Ok(column) = frame.column(name) else {
        return vec![serde_json::Value::Null; frame.height()];
    };
    let series = column.as_materialized_series();
    (0..series.len())
        .map(|i| match series.get(i) {
            Ok(AnyValue::Null) | Err(_) => serde_json::Value::Null,
            Ok(AnyValue::String(s)) => serde_json::Value::String(s.to_string()),
            Ok(AnyValue::Float64(x)) => {
                let text = format_number(x, rounding, false);
                serde_json::from_str::<serde_json::Number>(&text)
                    .map(serde_json::Value::Number)
                    .unwrap_or(serde_json::Value::Null)
            }
            Ok(AnyValue::Int32(x)) => serde_json::Value::from(x),
            Ok(AnyValue::Int64(x)) => serde_json::Value::from(x),
            Ok(AnyValue::UInt32(x)) => serde_json::Value::from(x),
            Ok(AnyValue::UInt64(x)) => serde_json::Value::from(x),
            Ok(AnyValue::Boolean(b)) => serde_json::Value::Bool(b),
            Ok(other) => serde_json::Value::String(other.to_string()),
        })
        .collect()
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

/// The csv text of the rows of `slice` (no header line), byte for byte what the csv crate's
/// writer gives for the same cells (the unit tests hold the two to each other), written
/// straight into one buffer: the crate's per-field state machine cost more than the
/// formatting.
fn slice_csv(slice: &DataFrame, names: &[String], rounding: Rounding, guard: bool) -> Vec<u8> {
    let mut out = String::with_capacity(slice.height() * (names.len() * 12 + 1));
    let mut columns: Vec<CellSource> = names
        .iter()
        .map(|n| CellSource::new(slice, n, rounding))
        .collect();
    for _ in 0..slice.height() {
        let row_start = out.len();
        for (i, column) in columns.iter_mut().enumerate() {
            if i > 0 {
                out.push(',');
            }
            column.push_csv_field(rounding, guard, &mut out);
        }
        // A row of one empty cell is written `""`, so that it is not a blank line.
        if out.len() == row_start {
            out.push_str("\"\"");
        }
        out.push('\n');
    }
    out.into_bytes()
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
    if header {
        let mut writer = csv_writer(&mut *out);
        writer.write_record(&names).map_err(csv_error)?;
        writer.flush().map_err(write_error)?;
    }
    let pool = &polars_core::runtime::THREAD_POOL;
    if pool.current_thread_index().is_some() {
        // On one of the pool's threads (a batch job): a writer waiting here for the pool to
        // format would hold a thread the formatting needs, so format and write in turn.
        let mut failed = None;
        format_batches(frame, &names, rounding, guard, |batch| {
            failed = write_batch(&mut *out, batch).err();
            failed.is_none()
        });
        return match failed {
            Some(e) => Err(e),
            None => out.flush().map_err(write_error),
        };
    }
    let (batches, written) = std::sync::mpsc::sync_channel::<Vec<Vec<u8>>>(1);
    let names = &names;
    std::thread::scope(|scope| {
        // The sender moves into the formatter: the channel closes when it has sent the last,
        // and the formatter stops at its next send once the receiver is gone (a failed write).
        scope.spawn(move || {
            format_batches(frame, names, rounding, guard, |batch| {
                batches.send(batch).is_ok()
            })
        });
        written
            .into_iter()
            .try_for_each(|batch| write_batch(&mut *out, batch))
    })?;
    out.flush().map_err(write_error)
}

fn write_batch(out: &mut dyn std::io::Write, batch: Vec<Vec<u8>>) -> Result<()> {
    batch
        .iter()
        .try_for_each(|text| out.write_all(text).map_err(write_error))
}

/// Formats the frame's rows in batches of one slice per pool thread and hands each batch, in
/// order, to `take`; stops when `take` says no (the writer has gone).
fn format_batches(
    frame: &DataFrame,
    names: &[String],
    rounding: Rounding,
    guard: bool,
    mut take: impl FnMut(Vec<Vec<u8>>) -> bool,
) {
    use rayon::prelude::*;
    let pool = &polars_core::runtime::THREAD_POOL;
    let batch = CSV_SLICE_ROWS * pool.current_num_threads().max(1);
    let mut start = 0;
    while start < frame.height() {
        let starts: Vec<usize> = (start..frame.height().min(start + batch))
            .step_by(CSV_SLICE_ROWS)
            .collect();
        let texts: Vec<Vec<u8>> = pool.install(|| {
            starts
                .par_iter()
                .map(|&s| {
                    let slice = frame.slice(s as i64, CSV_SLICE_ROWS);
                    slice_csv(&slice, names, rounding, guard)
                })
                .collect()
        });
        if !take(texts) {
            return;
        }
        start += batch;
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn hostile_text_is_escaped_for_html_and_terminals() {
        assert_eq!(
            html_escape("<img src=x onerror=alert(1)> & \"'"),
            "&lt;img src=x onerror=alert(1)&gt; &amp; &quot;&#39;"
        );
        assert_eq!(visible("a\u{1b}[31mb\u{7}"), "a\\u{1b}[31mb\\u{7}");
        assert_eq!(one_line("two\nlines"), "two\\nlines");
        assert_eq!(visible("plain"), "plain");
        // Formula injection (OWASP "CSV Injection"): formulas are guarded, numbers are not.
        for formula in [
            "=HYPERLINK(\"http://x\")",
            "@SUM(A1)",
            "+1+2",
            "-2+3",
            "\t=1",
        ] {
            assert!(runs_as_formula(formula), "{formula}");
        }
        for plain in ["-12", "+3", "-", "Chile", "1,234.5", "=", ""] {
            assert_eq!(runs_as_formula(plain), plain == "=", "{plain}");
        }
    }

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
        let names = vec!["value".to_string()];
        let mut offered = 0;
        format_batches(&frame, &names, Rounding::Full, false, |_| {
            offered += 1;
            false
        });
        assert_eq!(offered, 1);
        let mut batches = Vec::new();
        format_batches(&frame, &names, Rounding::Full, false, |batch| {
            batches.push(batch.concat());
            true
        });
        assert_eq!(batches.len(), rows.div_ceil(CSV_SLICE_ROWS * threads));
        assert_eq!(batches.concat(), here["value\n".len()..]);
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
            let ours = slice_csv(&frame, &["a".into(), "b".into()], Rounding::Full, false);
            let mut theirs = csv_writer(Vec::new());
            theirs.write_record([a, b]).unwrap();
            assert_eq!(ours, theirs.into_inner().unwrap(), "{a:?} {b:?}");
        }
        // One column: an empty cell is `""`, as the crate writes it.
        for cell in tricky {
            let frame = df!("a" => [cell]).unwrap();
            let ours = slice_csv(&frame, &["a".into()], Rounding::Full, false);
            let mut theirs = csv_writer(Vec::new());
            theirs.write_record([cell]).unwrap();
            assert_eq!(ours, theirs.into_inner().unwrap(), "{cell:?}");
        }
    }

    #[test]
    fn half_to_even_at_the_requested_decimals() {
        // Round half to even (IEEE 754-2008 roundTiesToEven; common practice in statistics).
        assert_eq!(format_number(2.5, Rounding::Decimals(0), false), "2");
        assert_eq!(format_number(3.5, Rounding::Decimals(0), false), "4");
        assert_eq!(format_number(0.125, Rounding::Decimals(2), false), "0.12");
        assert_eq!(format_number(-0.0001, Rounding::Decimals(2), false), "0.00");
    }

    #[test]
    fn every_allowed_rounding_formats_without_failing() {
        // --decimals 0..=20 and --sig 1..=17 over numbers from tiny to huge never fail.
        for value in [
            0.0,
            0.1,
            -2.5,
            123456789012345.25,
            7.9e28,
            1e300,
            4.9e-324,
            -1e-300,
        ] {
            for dp in 0..=20 {
                let text = format_number(value, Rounding::Decimals(dp), false);
                assert!(!text.is_empty(), "{value} {dp}");
            }
            for sig in 1..=17 {
                let text = format_number(value, Rounding::Significant(sig), true);
                assert!(!text.is_empty(), "{value} {sig}");
            }
        }
        assert_eq!(
            format_number(123456789012345.25, Rounding::Decimals(20), false).len(),
            36
        );
    }

    #[test]
    fn significant_digits() {
        assert_eq!(
            format_number(123456.0, Rounding::Significant(3), false),
            "123000"
        );
        assert_eq!(
            format_number(0.0012345, Rounding::Significant(3), false),
            "0.00123"
        );
        assert_eq!(format_number(1.0, Rounding::Significant(2), false), "1.0");
    }

    #[test]
    fn reading_rule_and_grouping() {
        assert_eq!(
            format_number(1234567.4, Rounding::Reading, true),
            "1,234,567"
        );
        assert_eq!(format_number(12.346, Rounding::Reading, true), "12.35");
        assert_eq!(format_number(2.675, Rounding::Decimals(2), false), "2.68");
        assert_eq!(format_number(0.012345, Rounding::Reading, true), "0.0123");
        assert_eq!(format_number(-1234.5, Rounding::Reading, true), "-1,234");
    }

    #[test]
    fn full_precision_reads_back_to_the_same_number() {
        for v in [0.1, 1.0 / 3.0, 128.5634, 1e-7, 123456789.125] {
            let text = format_number(v, Rounding::Full, false);
            assert_eq!(text.parse::<f64>().unwrap(), v, "{text}");
        }
    }
}
