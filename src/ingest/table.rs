//! The table finder: reading decoded text as a delimited table and finding the table inside it.
//! Every delimited input, every reference table and every spreadsheet sheet (as text) goes
//! through `find_table`, so they all follow the same rules:
//!
//! - The header is found by structure, never by position: the line that names the columns the
//!   user gave, or else the line that heads the longest block of lines holding figures (each
//!   filled cell of those lines under a filled header cell), the nearest one above that block
//!   when several qualify (a title above a header covers the same block, and loses).
//! - Everything above the header is set aside and listed: titles, source and "last updated"
//!   lines and blank lines, whatever delimiters they contain.
//! - A trailing delimiter on every line is an empty last column, and it is dropped.
//! - Below the last data line only notes may follow; a line there that holds figures is an
//!   error, never a silently dropped row.
//! - A quote that swallows a line's worth of delimiters (or runs to the end of the file) is an
//!   error naming the line where it opened; with `lenient` its lines become rows flagged
//!   `unbalanced_quote`.
//! - A statistics-office TSV whose first header cell joins dimension names
//!   (`freq,unit,geo\TIME_PERIOD`) has that column split into one column per dimension.
//!
//! It knows nothing about countries; `ingest::layout` gives the columns their roles.

use crate::cells::number::{self, Cell, NumberStyle};
pub use crate::cells::words::shorten;
use crate::error::{Error, Location, Result};
pub use crate::ingest::record::Cells;

/// A delimited table as text cells, with the line each record starts on.
#[derive(Debug, Clone)]
pub struct TextTable {
    pub headers: Vec<String>,
    pub records: Vec<TextRecord>,
    pub delimiter: u8,
    /// Lines set aside above the header and below the table, described for the summary.
    pub skipped: Vec<String>,
    /// The physical line of the header and why it was chosen.
    pub header_line: usize,
    pub header_reason: String,
    /// Set when every line ended with the delimiter (the empty last column was dropped).
    pub trailing_delimiter: bool,
    /// Dimension columns of a statistics-office TSV (indices into `headers`), empty otherwise.
    pub dimensions: Vec<usize>,
    /// The cells of the filled lines above the header (titles, "Data Source", "Last Updated").
    pub above: Vec<Vec<String>>,
}

#[derive(Debug, Clone)]
pub struct TextRecord {
    pub line: usize,
    /// The cells, indexable as `&str` (held compactly, not one allocation per cell).
    pub cells: Cells,
    /// The line was cut out of a runaway quote (`--lenient`): its cells are as written.
    pub unbalanced_quote: bool,
}

/// What the caller knows about the table.
#[derive(Debug, Clone, Default)]
pub struct FindOptions {
    /// Column names the user gave (flags or catalog fields): the header is the line naming them.
    pub hints: Vec<String>,
    /// The header's physical line, when the user forced it (`--header-row`).
    pub header_line: Option<usize>,
    /// Runaway quotes become flagged rows instead of an error.
    pub lenient: bool,
    /// A piece of a larger file (`--streaming`): lines before this piece.
    pub line_offset: usize,
}

const CANDIDATES: &[u8] = b",\t;|";
/// Records searched for the header, and records looked at below each candidate.
const HEADER_SEARCH: usize = 1000;
const BLOCK_WINDOW: usize = 200;

/// Picks the delimiter that splits the most lines into the same number of fields, preferring
/// the one that splits them most. Quoted text is skipped. Title lines above the header do not
/// decide: every line of the first twenty votes.
pub fn sniff_delimiter(text: &str) -> u8 {
    let lines: Vec<&str> = text
        .lines()
        .filter(|l| !l.trim().is_empty())
        .take(40)
        .collect();
    if lines.is_empty() {
        return b',';
    }
    let mut best = (b',', 0usize, 0usize);
    for &candidate in CANDIDATES {
        let counts: Vec<usize> = lines
            .iter()
            .map(|l| count_outside_quotes(l, candidate))
            .collect();
        // The most common non-zero count is this delimiter's table width.
        let mut tally: std::collections::BTreeMap<usize, usize> = Default::default();
        for &c in counts.iter().filter(|&&c| c > 0) {
            *tally.entry(c).or_default() += 1;
        }
        let Some((&width, &agreeing)) = tally.iter().max_by_key(|(w, n)| (**n, **w)) else {
            continue;
        };
        if (agreeing, width) > (best.1, best.2) {
            best = (candidate, agreeing, width);
        }
    }
    best.0
}

fn count_outside_quotes(line: &str, delimiter: u8) -> usize {
    let mut quoted = false;
    let mut count = 0;
    for b in line.bytes() {
        if b == b'"' {
            quoted = !quoted;
        } else if b == delimiter && !quoted {
            count += 1;
        }
    }
    count
}

pub fn delimiter_name(delimiter: u8) -> &'static str {
    match delimiter {
        b',' => "comma",
        b'\t' => "tab",
        b';' => "semicolon",
        b'|' => "pipe",
        _ => "custom",
    }
}

/// The finder with no hints (tests, and tables whose columns nobody named).
pub fn read_table(text: &str, delimiter: u8, file: &str) -> Result<TextTable> {
    find_table(text, delimiter, file, &FindOptions::default())
}

/// Reads a reference file's bytes with the detected encoding and delimiter (or its first
/// sheet, for a spreadsheet).
pub fn read_bytes(bytes: &[u8], file: &str, hints: &[String]) -> Result<TextTable> {
    if crate::ingest::spreadsheet::is_spreadsheet(file) {
        // The first sheet, as text with one line per sheet row, through the same finder.
        let (text, _, _) = crate::ingest::spreadsheet::sheet_to_csv(bytes, file, None, None)?;
        let options = FindOptions {
            hints: hints.to_vec(),
            ..Default::default()
        };
        return find_table(&text, b',', file, &options);
    }
    let decoded = crate::ingest::encoding::decode(bytes, None, file)?;
    let delimiter = if file.ends_with(".tsv") || file.ends_with(".tab") {
        b'\t'
    } else {
        sniff_delimiter(&decoded.text)
    };
    find_table(
        &decoded.text,
        delimiter,
        file,
        &FindOptions {
            hints: hints.to_vec(),
            ..Default::default()
        },
    )
}

/// What a cell holds, as far as finding the table is concerned.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum CellClass {
    Empty,
    Year,
    Number,
    Text,
}

fn classify(cell: &str) -> CellClass {
    let t = cell.trim();
    if t.is_empty() {
        return CellClass::Empty;
    }
    if crate::cells::words::header_year(t).is_some() {
        return CellClass::Year;
    }
    match number::parse_cell(t, NumberStyle::default()) {
        Ok(Cell::Number { .. }) => CellClass::Number,
        Ok(Cell::Missing) => CellClass::Empty,
        Err(_) => CellClass::Text,
    }
}

/// One parsed record before the table is known.
struct Raw {
    line: usize,
    /// Byte range of the record in the text (for cutting a runaway quote into lines).
    start: usize,
    end: usize,
    record: Cells,
}

impl Raw {
    fn filled(&self) -> usize {
        self.record.iter().filter(|c| !c.trim().is_empty()).count()
    }

    /// The classes of the cells. Several four-digit numbers count as years only where they look
    /// like the year columns of a header, in increasing or decreasing order: an unordered
    /// 1180,1144,1292 is figures (prices, rates and counts often fall in the range of years).
    fn classes(&self) -> Vec<CellClass> {
        let mut classes: Vec<CellClass> = self.record.iter().map(classify).collect();
        let years: Vec<i32> = self
            .record
            .iter()
            .zip(&classes)
            .filter(|(_, c)| **c == CellClass::Year)
            .filter_map(|(cell, _)| crate::cells::words::header_year(cell))
            .collect();
        let ordered = years.len() < 2
            || years.windows(2).all(|w| w[0] < w[1])
            || years.windows(2).all(|w| w[0] > w[1]);
        if !ordered {
            for class in classes.iter_mut().filter(|c| **c == CellClass::Year) {
                *class = CellClass::Number;
            }
        }
        classes
    }

    /// The line as written (cells joined by the delimiter), shortened for a message.
    fn text(&self, delimiter: u8) -> String {
        let joined = self
            .record
            .iter()
            .collect::<Vec<_>>()
            .join(&(delimiter as char).to_string());
        shorten(joined.trim_end_matches(delimiter as char).trim())
    }
}

/// Finds the table in `text`; see the module documentation for the rules.
pub fn find_table(
    text: &str,
    delimiter: u8,
    file: &str,
    options: &FindOptions,
) -> Result<TextTable> {
    if let Some(position) = text.find('\0') {
        let line = text[..position].matches('\n').count() + 1 + options.line_offset;
        return Err(Error::bad_input(
            Location::line(file, line),
            "a NUL byte: the file looks binary, or is UTF-16 without a byte-order mark",
            "delimited text (CSV or TSV)",
            "check that the right file was given; for UTF-16 without a byte-order mark pass --encoding utf-16le (or utf-16be)",
        ));
    }
    let mut all = parse_records(text, delimiter, file, options.line_offset)?;
    if all.is_empty() {
        return Err(Error::bad_input(
            Location::file(file),
            "the file is empty",
            "a header line naming the columns, then one line per figure",
            "check that the right file was given",
        ));
    }
    let (header_index, header_reason) = choose_header(&all, options, file)?;
    // A file without a line of two fields is no table; say so without quoting it (it may be
    // a file that was never meant to be read as data).
    if all.iter().all(|r| r.filled() < 2) {
        return Err(Error::bad_input(
            Location::file(file),
            format!(
                "no line holds two or more fields separated by the {} delimiter: this is not a delimited table",
                delimiter_name(delimiter)
            ),
            "a header line naming the columns, then one line per figure",
            "check that the right file was given, or pass --delimiter if the table uses another one",
        ));
    }
    let header_line = all[header_index].line;
    let mut skipped: Vec<String> = all[..header_index]
        .iter()
        .filter(|r| r.filled() > 0)
        .map(|r| {
            format!(
                "line {} above the header: \"{}\"",
                r.line,
                r.text(delimiter)
            )
        })
        .collect();
    let above: Vec<Vec<String>> = all[..header_index]
        .iter()
        .filter(|r| r.filled() > 0)
        .map(|r| r.record.iter().map(|c| c.trim().to_string()).collect())
        .collect();
    let blank_above = header_line
        .saturating_sub(1 + options.line_offset)
        .saturating_sub(header_index);
    if blank_above > 0 {
        skipped.push(format!("{blank_above} blank line(s) above the header"));
    }
    // The table ends at the last line that holds data; only notes may follow it. A footnote
    // block (a data portal's "footnoteSeqID","Footnote" table below the data) is notes too.
    let notes_from = all[header_index + 1..]
        .iter()
        .position(starts_footnotes)
        .map_or(all.len(), |p| p + header_index + 1);
    let last_data = all[..notes_from]
        .iter()
        .rposition(|r| !is_note(r, delimiter))
        .unwrap_or(header_index)
        .max(header_index);
    let tail = last_data + 1;
    skipped.extend(
        all[tail..]
            .iter()
            .filter(|r| r.filled() > 0)
            .map(|r| format!("line {} below the table: \"{}\"", r.line, r.text(delimiter))),
    );
    // Empty header cells at the end whose column holds nothing: a trailing delimiter (on every
    // line, or on some), dropped rather than counted.
    let mut header_record = all[header_index].record.clone();
    let mut dropped = 0;
    while header_record.len() > 1 {
        let last = header_record.len() - 1;
        let empty = header_record[last].trim().is_empty()
            && all[header_index + 1..tail]
                .iter()
                .all(|r| r.record.get(last).is_none_or(|c| c.trim().is_empty()));
        if !empty {
            break;
        }
        header_record.truncate(last);
        dropped += 1;
    }
    let trailing_delimiter = dropped > 0;
    let mut headers = clean_headers(&header_record, file, header_line)?;
    let width = headers.len();
    let header_key: Vec<String> = headers.iter().map(|h| h.to_lowercase()).collect();
    let mut empty_lines: Vec<usize> = Vec::new();
    if let Some(last) = all.last() {
        open_at_end(text, last, file, options.lenient)?;
    }
    let mut records = Vec::with_capacity(tail.saturating_sub(header_index + 1));
    // The line the next record starts on when no blank line comes between.
    let mut expected = header_line + 1 + breaks_in(&all[header_index]);
    for raw in all.drain(header_index + 1..tail) {
        empty_lines.extend(expected..raw.line);
        expected = raw.line + 1 + breaks_in(&raw);
        if raw.filled() == 0 {
            empty_lines.push(raw.line);
            continue;
        }
        if repeats_header(&raw.record, &header_key) {
            return Err(Error::bad_input(
                Location::line(file, raw.line),
                format!("this line repeats the header of line {header_line}: the file holds two tables"),
                "one table per file (one header, then its rows)",
                "split the file into one file per table, or delete the second header and check that the rows below it are in the same columns",
            ));
        }
        if let Some(opened) = runaway_quote(&raw, width, delimiter) {
            if !options.lenient {
                return Err(Error::bad_input(
                    Location::line(file, raw.line),
                    format!(
                        "a quote opened on this line is not closed until line {opened} (or the end of the file): it swallows the lines between"
                    ),
                    "balanced double quotes: a cell that starts with \" must end with \"",
                    "remove or close the stray quote on this line, or pass --lenient to keep those lines as rows flagged `unbalanced_quote`",
                ));
            }
            records.extend(cut_runaway(text, &raw, delimiter, width));
            continue;
        }
        let mut record = raw.record;
        // Spreadsheet exports pad lines with empty cells; only filled extra cells are an error.
        let mut len = record.len();
        while len > width && record[len - 1].trim().is_empty() {
            len -= 1;
        }
        record.truncate(len);
        if record.len() != width {
            return Err(ragged(file, raw.line, record.len(), width, delimiter));
        }
        records.push(TextRecord {
            line: raw.line,
            cells: record,
            unbalanced_quote: false,
        });
    }
    if !empty_lines.is_empty() {
        let shown: Vec<String> = empty_lines.iter().take(10).map(|l| l.to_string()).collect();
        skipped.push(format!(
            "{} empty line(s) inside the table (line {}{})",
            empty_lines.len(),
            shown.join(", "),
            if empty_lines.len() > 10 { ", ..." } else { "" }
        ));
    }
    let dimensions = split_dimensions(&mut headers, &mut records, file, header_line)?;
    Ok(TextTable {
        headers,
        records,
        delimiter,
        skipped,
        header_line,
        header_reason,
        trailing_delimiter,
        dimensions,
        above,
    })
}

fn parse_records(text: &str, delimiter: u8, file: &str, line_offset: usize) -> Result<Vec<Raw>> {
    let mut reader = csv::ReaderBuilder::new()
        .delimiter(delimiter)
        .has_headers(false)
        .flexible(true)
        .from_reader(text.as_bytes());
    let mut all: Vec<Raw> = Vec::new();
    let mut lines = LineCounter::new(text);
    lines.line += line_offset;
    // One record buffer, reused: each record is kept as compact `Cells`.
    let mut record = csv::ByteRecord::new();
    while reader
        .read_byte_record(&mut record)
        .map_err(|e| csv_error(e, file, line_offset))?
    {
        let start = record.position().map(|p| p.byte() as usize).unwrap_or(0);
        let line = lines.line_of(start);
        let cells = Cells::from_byte_record(&record).ok_or_else(|| {
            Error::bad_input(
                Location::line(file, line),
                "the record cannot be read as text (or is longer than 4 GiB)",
                "delimited text (CSV or TSV)",
                "check that the right file was given",
            )
        })?;
        if let Some(previous) = all.last_mut() {
            previous.end = start;
        }
        all.push(Raw {
            line,
            start,
            end: text.len(),
            record: cells,
        });
    }
    Ok(all)
}

/// The header: the line the user forced, the line naming the given columns, or the line that
/// heads the longest block of figures (the nearest such line above the block).
fn choose_header(all: &[Raw], options: &FindOptions, file: &str) -> Result<(usize, String)> {
    if let Some(wanted) = options.header_line {
        let wanted = wanted + options.line_offset;
        return all
            .iter()
            .position(|r| r.line == wanted && r.filled() > 0)
            .map(|i| (i, format!("line {wanted}, as --header-row says")))
            .ok_or_else(|| {
                Error::bad_input(
                    Location::line(file, wanted),
                    "--header-row names a line that is empty or past the end of the file",
                    "the line of the table's header",
                    "pass --header-row with the line that names the columns, or leave it out to let the header be found",
                )
            });
    }
    let window = &all[..all.len().min(HEADER_SEARCH)];
    let hints: Vec<String> = options
        .hints
        .iter()
        .map(|h| h.trim().to_lowercase())
        .filter(|h| !h.is_empty())
        .collect();
    if !hints.is_empty() {
        let named = window.iter().position(|r| {
            let cells: Vec<String> = r.record.iter().map(|c| c.trim().to_lowercase()).collect();
            hints.iter().all(|h| cells.contains(h))
        });
        if let Some(i) = named {
            return Ok((
                i,
                format!(
                    "line {}: it names the columns given ({})",
                    window[i].line,
                    options.hints.join(", ")
                ),
            ));
        }
    }
    let classes: Vec<Vec<CellClass>> = window.iter().map(Raw::classes).collect();
    let header_like = |i: usize| {
        let c = &classes[i];
        c.iter().filter(|k| **k != CellClass::Empty).count() >= 2 && !c.contains(&CellClass::Number)
    };
    // The most lines of figures headed; among equals the line that names more columns the way
    // headers do (country, code, year, value ...), for a title covers the same block as the
    // header below it; then the earliest.
    let mut best: Option<(usize, (usize, usize, usize))> = None;
    for h in (0..window.len()).filter(|&i| header_like(i)) {
        let (covered, exact) = block_score(window, &classes, h);
        if covered + exact == 0 {
            continue;
        }
        let names = window[h]
            .record
            .iter()
            .filter(|c| crate::cells::words::is_role_word(c))
            .count();
        let score = (covered, exact, names);
        if best.is_none_or(|(_, b)| score > b) {
            best = Some((h, score));
        }
    }
    if let Some((h, _)) = best {
        return Ok((
            h,
            format!(
                "line {}: it heads the longest block of lines holding figures",
                window[h].line
            ),
        ));
    }
    let first = (0..window.len())
        .find(|&i| header_like(i))
        .or_else(|| window.iter().position(|r| r.filled() >= 2))
        .unwrap_or(0);
    Ok((
        first,
        format!(
            "line {}: the first line naming two or more columns (no line heads a block of figures)",
            window[first].line
        ),
    ))
}

/// How well header candidate `h` heads the lines below it: (lines holding figures whose filled
/// cells all sit under filled cells of `h`, lines holding figures with as many fields as `h`).
/// The count stops at the first line with a filled cell beyond `h`'s width.
fn block_score(window: &[Raw], classes: &[Vec<CellClass>], h: usize) -> (usize, usize) {
    let header = &classes[h];
    let width = window[h].record.len();
    let (mut exact, mut covered) = (0, 0);
    for i in (h + 1..window.len()).take(BLOCK_WINDOW) {
        let row = &classes[i];
        let span = row
            .iter()
            .rposition(|c| *c != CellClass::Empty)
            .map_or(0, |p| p + 1);
        if span > width {
            break;
        }
        // Years alone do not make a line of figures: a header of years is not data.
        if !row.contains(&CellClass::Number) {
            continue;
        }
        let under_header = row
            .iter()
            .enumerate()
            .all(|(j, c)| *c == CellClass::Empty || header[j] != CellClass::Empty);
        covered += under_header as usize;
        exact += (window[i].record.len() == width) as usize;
    }
    (covered, exact)
}

/// Whether a record's first cells are the header again (trimmed, case aside): the mark of a
/// second table in the file. `header_key` holds the header cells lowercased. An ASCII cell is
/// compared without lowercasing a copy (the same answer, with no allocation per cell).
fn repeats_header(record: &Cells, header_key: &[String]) -> bool {
    record.len() >= header_key.len()
        && record.iter().zip(header_key).all(|(cell, key)| {
            let cell = cell.trim();
            if cell.is_ascii() {
                cell.len() == key.len()
                    && cell
                        .bytes()
                        .zip(key.bytes())
                        .all(|(c, k)| c.to_ascii_lowercase() == k)
            } else {
                cell.to_lowercase() == *key
            }
        })
}

/// Line breaks inside a record's quoted cells (the record spans that many more lines).
fn breaks_in(raw: &Raw) -> usize {
    raw.record.iter().map(|c| c.matches('\n').count()).sum()
}

/// A quote still open at the end of the file: the last record starts a quoted cell that never
/// closes (an odd number of quotes from where it opened). An error at that line, or with
/// `lenient` nothing (its lines are read as they are by the runaway-quote rule).
fn open_at_end(text: &str, last: &Raw, file: &str, lenient: bool) -> Result<()> {
    let raw = &text[last.start.min(text.len())..];
    let opens_quote = raw.trim_start().starts_with('"')
        || raw.contains(",\"")
        || raw.contains("\t\"")
        || raw.contains(";\"");
    if !lenient && opens_quote && raw.matches('"').count() % 2 == 1 {
        return Err(Error::bad_input(
            Location::line(file, last.line),
            "a quote opened on this line is never closed: the file ends inside it",
            "balanced double quotes: a cell that starts with \" must end with \"",
            "close or remove the stray quote on this line, or pass --lenient to read the line as it is",
        ));
    }
    Ok(())
}

/// The first line of a footnote block below the table (a data portal's `"footnoteSeqID",
/// "Footnote"` header).
fn starts_footnotes(raw: &Raw) -> bool {
    raw.record
        .iter()
        .map(str::trim)
        .find(|c| !c.is_empty())
        .is_some_and(|c| c.to_lowercase().starts_with("footnote"))
}

/// A line below the table that is a note: one filled cell of words, or words that open with a
/// note marker (`Source:`, `Note`, `*`), holding no figure but years.
fn is_note(raw: &Raw, delimiter: u8) -> bool {
    // A cell that runs over several lines with delimiters in it is a stray quote, not a note.
    if raw
        .record
        .iter()
        .any(|c| c.contains('\n') && c.as_bytes().contains(&delimiter))
    {
        return false;
    }
    let filled: Vec<&str> = raw
        .record
        .iter()
        .map(str::trim)
        .filter(|c| !c.is_empty())
        .collect();
    let Some(first) = filled.first() else {
        return true;
    };
    let words = |c: &&str| {
        c.chars()
            .any(|ch| ch.is_alphabetic() || "*†‡§#¹²³(".contains(ch))
    };
    if filled.len() == 1 {
        return words(first);
    }
    let lower = first.to_lowercase();
    let marker = [
        "source",
        "note",
        "notes",
        "*",
        "†",
        "‡",
        "§",
        "(a)",
        "(1)",
        "1)",
        "footnote",
        "data from",
        "last updated",
        "©",
        "copyright",
    ]
    .iter()
    .any(|m| lower.starts_with(m));
    marker && raw.record.iter().all(|c| classify(c) != CellClass::Number)
}

/// The last line swallowed by an open quote in `raw`, when a field holds a line break and at
/// least a line's worth of delimiters (a quoted cell with a line break in it is fine).
fn runaway_quote(raw: &Raw, width: usize, delimiter: u8) -> Option<usize> {
    let needed = width.saturating_sub(1).max(1);
    raw.record.iter().find_map(|field| {
        let breaks = field.trim_end().matches('\n').count();
        let delimiters = field.bytes().filter(|&b| b == delimiter).count();
        (breaks >= 1 && delimiters >= needed).then_some(raw.line + breaks)
    })
}

/// The lines of a runaway quote, each read as written (quotes as characters), flagged.
fn cut_runaway(text: &str, raw: &Raw, delimiter: u8, width: usize) -> Vec<TextRecord> {
    let body = &text[raw.start.min(text.len())..raw.end.min(text.len())];
    let mut out = Vec::new();
    for (offset, line) in body.split('\n').enumerate() {
        let line = line.trim_end_matches('\r');
        if line.trim().is_empty() {
            continue;
        }
        let mut cells: Vec<&str> = line.split(delimiter as char).collect();
        while cells.len() > width && cells.last().is_some_and(|c| c.trim().is_empty()) {
            cells.pop();
        }
        cells.resize(width.max(cells.len()), "");
        cells.truncate(width);
        out.push(TextRecord {
            line: raw.line + offset,
            cells: cells.into_iter().collect(),
            unbalanced_quote: true,
        });
    }
    out
}

fn ragged(file: &str, line: usize, found: usize, width: usize, delimiter: u8) -> Error {
    let what = if found <= 1 {
        " (a title or note between rows, or a second table below, reads like this)"
    } else {
        ""
    };
    Error::bad_input(
        Location::line(file, line),
        format!("{found} field(s) on this line, but the header has {width}{what}"),
        format!(
            "{width} fields separated by the {} delimiter",
            delimiter_name(delimiter)
        ),
        "fix the line (a stray delimiter or a missing quote is the usual cause), or pass --delimiter if the wrong one was detected",
    )
}

/// A statistics-office TSV: the first header cell joins the dimension names with commas and a
/// backslash before the time dimension (`freq,unit,geo\TIME_PERIOD`), and the first cell of
/// each row joins that row's codes (`A,NR,AT`). The column becomes one column per dimension.
fn split_dimensions(
    headers: &mut Vec<String>,
    records: &mut [TextRecord],
    file: &str,
    header_line: usize,
) -> Result<Vec<usize>> {
    let Some((names, _time)) = headers.first().and_then(|h| h.split_once('\\')) else {
        return Ok(Vec::new());
    };
    let names: Vec<String> = names.split(',').map(|n| n.trim().to_string()).collect();
    if names.iter().any(String::is_empty) {
        return Err(Error::bad_input(
            Location::line(file, header_line),
            format!("the first header cell \"{}\" has an empty dimension name", headers[0]),
            "dimension names joined by commas, then a backslash and the time dimension (freq,unit,geo\\TIME_PERIOD)",
            "fix the header cell",
        ));
    }
    let n = names.len();
    for record in records.iter_mut() {
        let codes: Vec<String> = record.cells[0]
            .split(',')
            .map(|c| c.trim().to_string())
            .collect();
        if codes.len() != n {
            return Err(Error::bad_input(
                Location::cell(file, record.line, &headers[0]),
                format!(
                    "\"{}\" has {} code(s), but the header names {n} dimension(s)",
                    shorten(&record.cells[0]),
                    codes.len()
                ),
                format!("{n} codes joined by commas ({})", names.join(",")),
                "fix the row's first cell",
            ));
        }
        record.cells = codes
            .iter()
            .map(String::as_str)
            .chain(record.cells.iter().skip(1))
            .collect();
    }
    let mut expanded = names;
    expanded.extend(headers.drain(1..));
    *headers = expanded;
    Ok((0..n).collect())
}

/// The number of line breaks in `bytes` as `LineCounter` counts them (`\n`, `\r\n`, lone `\r`).
pub fn count_line_breaks(bytes: &[u8]) -> usize {
    let mut count = 0;
    for (i, b) in bytes.iter().enumerate() {
        match b {
            b'\n' => count += 1,
            b'\r' if bytes.get(i + 1) != Some(&b'\n') => count += 1,
            _ => {}
        }
    }
    count
}

/// Physical line numbers from byte offsets, counting `\n`, `\r\n` and lone `\r` breaks. The
/// csv reader's own line count points at skipped blank lines before a record, so the line is
/// taken where the record's first character is.
struct LineCounter<'a> {
    bytes: &'a [u8],
    at: usize,
    line: usize,
}

impl<'a> LineCounter<'a> {
    fn new(text: &'a str) -> Self {
        LineCounter {
            bytes: text.as_bytes(),
            at: 0,
            line: 1,
        }
    }

    fn line_of(&mut self, start: usize) -> usize {
        let mut target = start.min(self.bytes.len());
        while target < self.bytes.len() && matches!(self.bytes[target], b'\n' | b'\r') {
            target += 1;
        }
        while self.at < target {
            match self.bytes[self.at] {
                b'\n' => self.line += 1,
                b'\r' if self.bytes.get(self.at + 1) != Some(&b'\n') => self.line += 1,
                _ => {}
            }
            self.at += 1;
        }
        self.line
    }
}

fn clean_headers(record: &Cells, file: &str, line: usize) -> Result<Vec<String>> {
    let mut headers: Vec<String> = Vec::with_capacity(record.len());
    let mut seen: std::collections::HashMap<String, usize> = Default::default();
    for (i, raw) in record.iter().enumerate() {
        let name = raw.trim().trim_start_matches('\u{feff}').to_string();
        let name = if name.is_empty() {
            format!("column_{}", i + 1)
        } else {
            name
        };
        if let Some(first) = seen.insert(name.clone(), i) {
            return Err(Error::bad_input(
                Location::line(file, line),
                format!(
                    "the header names column {} and column {} both \"{}\"",
                    first + 1,
                    i + 1,
                    shorten(&name)
                ),
                "a header with a different name for every column",
                "rename one of the columns",
            ));
        }
        headers.push(name);
    }
    Ok(headers)
}

fn csv_error(error: csv::Error, file: &str, line_offset: usize) -> Error {
    let line = error.position().map(|p| p.line() as usize + line_offset);
    let location = match line {
        Some(line) => Location::line(file, line),
        None => Location::file(file),
    };
    Error::bad_input(
        location,
        format!("the table cannot be read: {error}"),
        "delimited text (CSV or TSV) with balanced quotes",
        "check quoting on that line",
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sniffs_common_delimiters() {
        assert_eq!(sniff_delimiter("a,b,c\n1,2,3\n"), b',');
        assert_eq!(sniff_delimiter("a\tb\tc\n1,5\t2\t3\n"), b'\t');
        assert_eq!(sniff_delimiter("country;2019;2020\nFrance;1,5;2,5\n"), b';');
        assert_eq!(sniff_delimiter("\"a,x\"|b\n1|2\n"), b'|');
        // A title with commas above a semicolon table does not decide.
        assert_eq!(
            sniff_delimiter("Fees, invented, 2020\ncountry;fee\nA;1\nB;2\n"),
            b';'
        );
    }

    #[test]
    fn records_keep_their_physical_line() {
        let table = read_table("a,b\n1,2\n\"multi\nline\",3\n4,5\n", b',', "t.csv").unwrap();
        let lines: Vec<usize> = table.records.iter().map(|r| r.line).collect();
        assert_eq!(lines, vec![2, 3, 5]);
    }

    #[test]
    fn title_lines_above_and_notes_below_are_set_aside() {
        let text = "Table 3: Fees\nInvented figures\n\ncountry,2020\nFrance,1\n\nSource: invented\n* estimate\n";
        let table = read_table(text, b',', "t.csv").unwrap();
        assert_eq!(table.headers, vec!["country", "2020"]);
        assert_eq!(table.header_line, 4);
        assert_eq!(table.records.len(), 1);
        assert!(table
            .skipped
            .iter()
            .any(|s| s.contains("line 8 below the table")));
        assert!(table.skipped.iter().any(|s| s.contains("1 blank line(s)")));
        let padded =
            read_table("country,2020,,\nFrance,1,,\nSource: x,,,\n", b',', "t.csv").unwrap();
        assert_eq!((padded.records.len(), padded.skipped.len()), (1, 1));
        let padded = read_table("country,2020\nFrance,1,,\nSource: x,,\n", b',', "t.csv").unwrap();
        assert_eq!(padded.records.len(), 1);
        assert_eq!(padded.skipped.len(), 1);
    }

    #[test]
    fn a_title_with_the_delimiter_is_not_the_header() {
        // The failing case of a title line with a comma above a long table.
        let text =
            "Prices of a standard item, 2017\ncountry,year,price\nChile,2017,12\nPeru,2017,14\n";
        let table = read_table(text, b',', "t.csv").unwrap();
        assert_eq!(table.headers, vec!["country", "year", "price"]);
        assert_eq!(table.records.len(), 2);
        assert!(
            table.header_reason.contains("longest block"),
            "{}",
            table.header_reason
        );
        // A title of words only, as wide as the table, loses to the header nearer the data.
        let text = "Fees, invented\ncountry,fee\nChile,12\nPeru,14\n";
        let table = read_table(text, b',', "t.csv").unwrap();
        assert_eq!(table.headers, vec!["country", "fee"]);
        // A title wider than the table.
        let text = "Gross domestic product, million dollars, (invented), 2020\ncountry,2019,2020\nChile,1,2\n";
        let table = read_table(text, b',', "t.csv").unwrap();
        assert_eq!(table.headers, vec!["country", "2019", "2020"]);
    }

    #[test]
    fn a_bulk_download_preamble_and_trailing_delimiters() {
        // The layout of a data bank's bulk download: preamble lines with blank lines between,
        // quoted cells, a trailing comma on every line, empty years, aggregates at the end.
        let text = "\"Data Source\",\"Invented Indicators\",\n\n\"Last Updated Date\",\"2024-06-28\",\n\n\
            \"Country Name\",\"Country Code\",\"Indicator Name\",\"Indicator Code\",\"2019\",\"2020\",\n\
            \"Aruba\",\"ABW\",\"Population\",\"SP.POP\",\"\",\"\",\n\
            \"Chile\",\"CHL\",\"Population\",\"SP.POP\",\"19\",\"19.5\",\n\
            \"World\",\"WLD\",\"Population\",\"SP.POP\",\"7700\",\"7800\",\n";
        let table = read_table(text, b',', "t.csv").unwrap();
        assert_eq!(table.header_line, 5);
        assert_eq!(table.headers.len(), 6, "{:?}", table.headers);
        assert!(table.trailing_delimiter);
        assert_eq!(table.records.len(), 3);
        assert_eq!(table.skipped.len(), 3, "{:?}", table.skipped);
    }

    #[test]
    fn the_given_column_names_choose_the_header() {
        let text = "a,b\nx,y\nplace,fee\nChile,1\n";
        let options = FindOptions {
            hints: vec!["place".into(), "FEE".into()],
            ..Default::default()
        };
        let table = find_table(text, b',', "t.csv", &options).unwrap();
        assert_eq!(table.header_line, 3);
        assert!(table.header_reason.contains("names the columns given"));
    }

    #[test]
    fn a_data_line_that_looks_like_a_title_stays_in_the_table() {
        // Aruba has no figures: words only, but it sits inside the block.
        let text = "country,code,2019\nAruba,ABW,\nChile,CHL,3\nPeru,PER,4\n";
        let table = read_table(text, b',', "t.csv").unwrap();
        assert_eq!(table.header_line, 1);
        assert_eq!(table.records.len(), 3);
    }

    #[test]
    fn a_footnote_block_below_the_table_is_set_aside() {
        // A data portal's layout: the data, a blank line, then a small table of footnotes.
        let text = "\"Country or Area\",\"Year\",\"Value\",\"Value Footnotes\"\n\"Chile\",\"2006\",\"12\",\"1\"\n\n\"footnoteSeqID\",\"Footnote\"\n\"1\",\"Provisional data.\"\n";
        let table = read_table(text, b',', "t.csv").unwrap();
        assert_eq!(table.records.len(), 1);
        assert!(
            table.skipped.iter().any(|s| s.contains("Provisional data")),
            "{:?}",
            table.skipped
        );
    }

    #[test]
    fn figures_in_the_range_of_years_are_figures() {
        // Exchange rates of about 1,100 to 1,300 won per dollar read like years; unordered,
        // they are figures, and a lone one below a header does not take its place.
        let text = "Country Name,Country Code,2020,2021\n\"Korea, Rep.\",KOR,1180,1144\nTurkiye,TUR,7.0,8.9\n";
        let table = read_table(text, b',', "t.csv").unwrap();
        assert_eq!(table.header_line, 1);
        let table = read_table("country,fee\nChile,1180\nPeru,980\n", b',', "t.csv").unwrap();
        assert_eq!((table.header_line, table.records.len()), (1, 2));
    }

    #[test]
    fn a_repeated_header_is_two_tables_not_a_data_row() {
        let err = read_table("country,fee\nChile,1\ncountry,fee\nPeru,2\n", b',', "t.csv")
            .unwrap_err()
            .to_string();
        assert!(
            err.contains("line 3") && err.contains("repeats the header"),
            "{err}"
        );
    }

    #[test]
    fn a_repeated_header_is_found_whatever_its_case_spacing_or_script() {
        let key = |h: &[&str]| h.iter().map(|c| c.to_lowercase()).collect::<Vec<_>>();
        let record = |cells: &[&str]| cells.iter().collect::<Cells>();
        let header = key(&["Country", "Fee"]);
        assert!(repeats_header(&record(&[" COUNTRY ", "fee"]), &header));
        assert!(repeats_header(
            &record(&["country", "fee", "extra"]),
            &header
        ));
        assert!(!repeats_header(&record(&["country"]), &header));
        assert!(!repeats_header(&record(&["Chile", "fee"]), &header));
        // Non-ASCII headers are lowercased as Unicode (Σ, É), as the header was.
        let header = key(&["ΧΏΡΑ", "Élément"]);
        assert!(repeats_header(&record(&["χώρα", "ÉLÉMENT"]), &header));
        assert!(!repeats_header(&record(&["χώρα", "element"]), &header));
    }

    #[test]
    fn a_title_of_years_as_wide_as_the_header_is_not_the_header() {
        let text = "GDP, 2006, 2007\ncountry,2006,2007\nChile,10,11\nPeru,12,13\n";
        let table = read_table(text, b',', "t.csv").unwrap();
        assert_eq!(table.headers, vec!["country", "2006", "2007"]);
    }

    #[test]
    fn a_trailing_delimiter_on_some_lines_and_empty_lines_inside() {
        let table = read_table(
            "country,year,value,\nChile,2006,1,\n,,\nPeru,2006,2\n",
            b',',
            "t.csv",
        )
        .unwrap();
        assert_eq!(table.headers, vec!["country", "year", "value"]);
        assert_eq!(table.records.len(), 2);
        assert!(
            table
                .skipped
                .iter()
                .any(|s| s.contains("1 empty line(s) inside the table (line 3)")),
            "{:?}",
            table.skipped
        );
    }

    #[test]
    fn blank_lines_inside_and_a_quote_open_at_the_end() {
        let table = read_table("country,fee\nChile,1\n\nPeru,2\n", b',', "t.csv").unwrap();
        assert!(
            table.skipped.iter().any(|s| s.contains("(line 3)")),
            "{:?}",
            table.skipped
        );
        let err = read_table("country,fee\nChile,1\n\"\n", b',', "t.csv")
            .unwrap_err()
            .to_string();
        assert!(
            err.contains("line 3") && err.contains("never closed"),
            "{err}"
        );
        let table = read_table("a,b\n\"x\ny\",1\nc,2\n", b',', "t.csv").unwrap();
        assert!(table.skipped.is_empty(), "{:?}", table.skipped);
    }

    #[test]
    fn figures_below_the_table_are_an_error_not_a_note() {
        let err = read_table("country,fee\nChile,1\nSource: x\nPeru,2,3\n", b',', "t.csv")
            .unwrap_err()
            .to_string();
        assert!(err.contains("line 3"), "{err}");
    }

    #[test]
    fn a_stray_quote_is_an_error_at_its_line_or_flagged_rows_when_lenient() {
        let text = "country,fee\nChile,1\n\"Peru,2\nBolivia,3\nEcuador,4\n";
        let err = read_table(text, b',', "t.csv").unwrap_err().to_string();
        assert!(
            err.contains("t.csv, line 3") && err.contains("quote"),
            "{err}"
        );
        let options = FindOptions {
            lenient: true,
            ..Default::default()
        };
        let table = find_table(text, b',', "t.csv", &options).unwrap();
        assert_eq!(table.records.len(), 4);
        let lines: Vec<usize> = table.records.iter().map(|r| r.line).collect();
        assert_eq!(lines, vec![2, 3, 4, 5]);
        assert!(table.records[1..].iter().all(|r| r.unbalanced_quote));
        assert_eq!(&table.records[2].cells[0], "Bolivia");
        // A quoted cell with a line break but no swallowed delimiters is fine.
        let table = read_table("a,b\n\"two\nlines\",1\n", b',', "t.csv").unwrap();
        assert_eq!(table.records.len(), 1);
    }

    #[test]
    fn statistics_office_tsv_dimensions_are_split() {
        let text = "freq,unit,geo\\TIME_PERIOD\t2019 \t2020 \nA,NR,AT\t8858 \t8901 p\nA,NR,EL\t10725 e\t:\n";
        let table = read_table(text, b'\t', "t.tsv").unwrap();
        assert_eq!(table.headers, vec!["freq", "unit", "geo", "2019", "2020"]);
        assert_eq!(table.dimensions, vec![0, 1, 2]);
        assert_eq!(&table.records[1].cells[2], "EL");
        assert_eq!(&table.records[1].cells[4], ":");
    }

    #[test]
    fn a_forced_header_row_wins() {
        let options = FindOptions {
            header_line: Some(2),
            ..Default::default()
        };
        let table = find_table("x,y\ncountry,fee\nChile,1\n", b',', "t.csv", &options).unwrap();
        assert_eq!(table.headers, vec!["country", "fee"]);
    }

    #[test]
    fn nul_bytes_are_refused_with_their_line() {
        let err = read_table("a,b\n1,\0\n", b',', "t.csv")
            .unwrap_err()
            .to_string();
        assert!(err.contains("line 2") && err.contains("NUL"), "{err}");
    }

    #[test]
    fn ragged_and_duplicate_headers_are_errors_with_lines() {
        let err = read_table("a,b\n1,2\n3,4,5\n", b',', "t.csv")
            .unwrap_err()
            .to_string();
        assert!(err.contains("t.csv, line 3"), "{err}");
        let err = read_table("x\na,a\n1,2\n", b',', "t.csv")
            .unwrap_err()
            .to_string();
        assert!(
            err.contains("line 2") && err.contains("both \"a\""),
            "{err}"
        );
        let err = read_table("", b',', "t.csv").unwrap_err().to_string();
        assert!(err.contains("empty"), "{err}");
    }
}
