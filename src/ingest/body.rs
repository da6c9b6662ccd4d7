//! The records below the header, as they are read: where the table ends (only notes may
//! follow its last line of data), the checks each record passes (a repeated header, a runaway
//! quote, a ragged line), each an error at its line or, for a runaway quote with `--lenient`,
//! flagged rows; and each record of the table put into its columns (`Records`) at once.

use crate::cells::words::shorten;
use crate::error::{Error, Location, Result};
use crate::ingest::delimiter::delimiter_name;
use crate::ingest::header::{classify, CellClass, Raw, Spot};
use crate::ingest::record::{Fields, Records, TooLarge};

/// Where a record below the header goes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum Place {
    /// It holds data: it belongs to the table, and so do the records held back before it.
    Table,
    /// It may be a note: held back until a record of data follows it.
    Held,
    /// Below the table: a footnote block has begun.
    Below,
}

/// Where the table ends, found while the records below the header go by: a record that may be
/// a note is held back until a record of data follows it (then it was inside the table); the
/// notes after the last record of data, and everything from a footnote block on (a data
/// portal's `"footnoteSeqID","Footnote"` table), are below the table.
#[derive(Default)]
pub(super) struct TableEnd {
    held: Vec<Raw>,
    below: Vec<Raw>,
    in_footnotes: bool,
}

impl TableEnd {
    /// Where `record` goes; `Place::Held` and `Place::Below` records are the caller's to
    /// `keep`, and on `Place::Table` the held ones are `release`d first.
    pub(super) fn place(&mut self, record: &impl Fields, delimiter: u8) -> Place {
        if self.in_footnotes {
            Place::Below
        } else if starts_footnotes(record) {
            self.in_footnotes = true;
            self.below.append(&mut self.held);
            Place::Below
        } else if is_note(record, delimiter) {
            Place::Held
        } else {
            Place::Table
        }
    }

    /// Keeps a record `place` did not put into the table.
    pub(super) fn keep(&mut self, raw: Raw, place: Place) {
        match place {
            Place::Below => self.below.push(raw),
            _ => self.held.push(raw),
        }
    }

    /// The records held back, now known to be inside the table, in order.
    pub(super) fn release(&mut self) -> Vec<Raw> {
        std::mem::take(&mut self.held)
    }

    /// Whether nothing is held back and no footnote block has begun (only a footnote block
    /// puts records below the table before the end): the next record is placed as by a table
    /// end that saw none of these records.
    pub(super) fn is_clear(&self) -> bool {
        self.held.is_empty() && !self.in_footnotes
    }

    /// The records below the table, in order.
    pub(super) fn finish(mut self) -> Vec<Raw> {
        self.below.append(&mut self.held);
        self.below
    }
}

/// The table's records as they are read: each record checked against the header, then put
/// into its columns (a runaway quote cut into flagged lines when lenient), and the empty
/// lines among them counted.
pub(super) struct Body<'a> {
    pub(super) text: &'a str,
    pub(super) file: &'a str,
    pub(super) delimiter: u8,
    /// The header, as the table's records are checked against it (before a statistics
    /// office's first column is split into its dimensions).
    pub(super) headers: &'a [String],
    pub(super) header_line: usize,
    pub(super) lenient: bool,
    header_key: Vec<String>,
    /// The line the next record starts on when no blank line comes between.
    expected: usize,
    /// The line of the first record taken.
    first_line: Option<usize>,
    pub(super) empty_lines: Vec<usize>,
    /// The number of dimension codes each record's first cell joins (a statistics office's
    /// TSV), split into that many cells as the record is kept.
    dimensions: Option<usize>,
    /// The first fault in the dimensions (the header's names, or a record's count of codes):
    /// told after every other fault of the table, once the records are read.
    pub(super) dimension_error: Option<Error>,
    pub(super) records: Records,
}

impl<'a> Body<'a> {
    /// Checks records against `headers`; the first record starts on `expected` when no blank
    /// line comes between; `dimensions` as above.
    #[allow(clippy::too_many_arguments)]
    pub(super) fn new(
        text: &'a str,
        file: &'a str,
        delimiter: u8,
        headers: &'a [String],
        header_line: usize,
        lenient: bool,
        expected: usize,
        dimensions: Option<usize>,
    ) -> Body<'a> {
        let width = headers.len() + dimensions.map_or(0, |n| n - 1);
        Body {
            text,
            file,
            delimiter,
            headers,
            header_line,
            lenient,
            header_key: headers.iter().map(|h| h.to_lowercase()).collect(),
            expected,
            first_line: None,
            empty_lines: Vec::new(),
            dimensions,
            dimension_error: None,
            records: Records::new(width),
        }
    }

    /// Reads one record of the table. A repeated header, a runaway quote (unless lenient) and
    /// a ragged line are errors at their line.
    pub(super) fn take(&mut self, spot: Spot, record: &impl Fields) -> Result<()> {
        let width = self.headers.len();
        let plain = record.plain(self.delimiter);
        self.first_line.get_or_insert(spot.line);
        self.empty_lines.extend(self.expected..spot.line);
        self.expected = spot.line + 1 + if plain { 0 } else { breaks_in(record) };
        if record.filled() == 0 {
            self.empty_lines.push(spot.line);
            return Ok(());
        }
        if repeats_header(record, &self.header_key) {
            return Err(Error::bad_input(
                Location::line(self.file, spot.line),
                format!("this line repeats the header of line {}: the file holds two tables", self.header_line),
                "one table per file (one header, then its rows)",
                "split the file into one file per table, or delete the second header and check that the rows below it are in the same columns",
            ));
        }
        let runaway = match plain {
            true => None,
            false => runaway_quote(spot.line, record, width, self.delimiter),
        };
        if let Some(opened) = runaway {
            if !self.lenient {
                return Err(Error::bad_input(
                    Location::line(self.file, spot.line),
                    format!(
                        "a quote opened on this line is not closed until line {opened} (or the end of the file): it swallows the lines between"
                    ),
                    "balanced double quotes: a cell that starts with \" must end with \"",
                    "remove or close the stray quote on this line, or pass --lenient to keep those lines as rows flagged `unbalanced_quote`",
                ));
            }
            let text = self.text;
            for (line, cells) in cut_runaway(text, spot, self.delimiter, width) {
                self.keep(line, cells.into_iter(), true)?;
            }
            return Ok(());
        }
        // Spreadsheet exports pad lines with empty cells; only filled extra cells are an error.
        let mut len = record.count();
        while len > width && record.field(len - 1).is_some_and(|c| c.trim().is_empty()) {
            len -= 1;
        }
        if len != width {
            return Err(ragged(self.file, spot.line, len, width, self.delimiter));
        }
        self.keep(spot.line, record.fields().take(len), false)
    }

    /// Whether each record's first cell is split into this many dimension codes.
    pub(super) fn dimensions_split(&self) -> Option<usize> {
        self.dimensions
    }

    /// A body with no records that reads as this one does: the first of a table read in
    /// stretches expects this one's next line, a later one no line (`append`).
    pub(super) fn like_this(&self, first: bool) -> Body<'a> {
        let mut body = Body::new(
            self.text,
            self.file,
            self.delimiter,
            self.headers,
            self.header_line,
            self.lenient,
            self.expected,
            self.dimensions,
        );
        if !first {
            body.expected = usize::MAX;
        }
        body
    }

    /// Takes the records, empty lines and next line of `read`, a body `like_this` that read
    /// the table (its dimension fault stays this body's).
    pub(super) fn take_records_of(&mut self, read: Body<'a>) {
        self.records = read.records;
        self.empty_lines = read.empty_lines;
        self.expected = read.expected;
        self.first_line = read.first_line;
    }

    /// Adds the records that `later` took: a body that read the records right after this
    /// one's, made with no line expected (`usize::MAX`), so the empty lines between the two
    /// are counted here. Refused when a column would pass 4 GiB.
    pub(super) fn append(&mut self, later: Body) -> std::result::Result<(), TooLarge> {
        let Some(first) = later.first_line else {
            return Ok(());
        };
        self.records.append(&later.records)?;
        self.empty_lines.extend(self.expected..first);
        self.empty_lines.extend(later.empty_lines);
        self.expected = later.expected;
        self.first_line.get_or_insert(first);
        Ok(())
    }

    /// Puts a record's cells into the columns, its first cell split into its dimension codes
    /// where the table has them.
    fn keep<'c>(
        &mut self,
        line: usize,
        mut cells: impl Iterator<Item = &'c str>,
        unbalanced_quote: bool,
    ) -> Result<()> {
        let file = self.file;
        let kept = match self.dimensions {
            None => self.records.push(line, cells, unbalanced_quote),
            Some(n) => {
                let first = cells.next().unwrap_or("");
                let codes: Vec<&str> = first.split(',').map(str::trim).collect();
                if codes.len() != n {
                    let error = self.wrong_codes(line, first, codes.len(), n);
                    self.dimension_error.get_or_insert(error);
                    return Ok(());
                }
                self.records
                    .push(line, codes.into_iter().chain(cells), unbalanced_quote)
            }
        };
        kept.map_err(|e| e.error(file))
    }

    fn wrong_codes(&self, line: usize, first: &str, found: usize, n: usize) -> Error {
        let header = &self.headers[0];
        let names = header.split_once('\\').map_or("", |(names, _)| names);
        Error::bad_input(
            Location::cell(self.file, line, header),
            format!(
                "\"{}\" has {found} code(s), but the header names {n} dimension(s)",
                shorten(first)
            ),
            format!(
                "{n} codes joined by commas ({})",
                names
                    .split(',')
                    .map(str::trim)
                    .collect::<Vec<_>>()
                    .join(",")
            ),
            "fix the row's first cell",
        )
    }
}

/// Whether a record's first cells are the header again (trimmed, case aside): the mark of a
/// second table in the file. `header_key` holds the header cells lowercased. An ASCII cell is
/// compared without lowercasing a copy (the same answer, with no allocation per cell).
fn repeats_header(record: &impl Fields, header_key: &[String]) -> bool {
    record.count() >= header_key.len()
        && record.fields().zip(header_key).all(|(cell, key)| {
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
pub(super) fn breaks_in(record: &impl Fields) -> usize {
    record.fields().map(|c| c.matches('\n').count()).sum()
}

/// A quote still open at the end of the file: the last record (starting at `start`, on
/// `line`) starts a quoted cell that never closes (an odd number of quotes from where it
/// opened). An error at that line, or with `lenient` nothing (its lines are read as they are
/// by the runaway-quote rule).
pub(super) fn open_at_end(
    text: &str,
    start: usize,
    line: usize,
    file: &str,
    lenient: bool,
) -> Result<()> {
    let raw = &text[start.min(text.len())..];
    let opens_quote = raw.trim_start().starts_with('"')
        || raw.contains(",\"")
        || raw.contains("\t\"")
        || raw.contains(";\"");
    if !lenient && opens_quote && raw.matches('"').count() % 2 == 1 {
        return Err(Error::bad_input(
            Location::line(file, line),
            "a quote opened on this line is never closed: the file ends inside it",
            "balanced double quotes: a cell that starts with \" must end with \"",
            "close or remove the stray quote on this line, or pass --lenient to read the line as it is",
        ));
    }
    Ok(())
}

/// The first line of a footnote block below the table (a data portal's `"footnoteSeqID",
/// "Footnote"` header).
fn starts_footnotes(record: &impl Fields) -> bool {
    record
        .fields()
        .map(str::trim)
        .find(|c| !c.is_empty())
        .is_some_and(|c| starts_lowercased_with(c, "footnote"))
}

/// Whether `text` lowercased starts with `prefix` (itself lowercase), without lowercasing a
/// copy: no character outside ASCII lowercases to the ASCII letters of the prefixes used here,
/// and their other characters (`†`, `©` ...) have no case.
fn starts_lowercased_with(text: &str, prefix: &str) -> bool {
    text.as_bytes()
        .get(..prefix.len())
        .is_some_and(|head| head.eq_ignore_ascii_case(prefix.as_bytes()))
}

/// A line below the table that is a note: one filled cell of words, or words that open with a
/// note marker (`Source:`, `Note`, `*`), holding no figure but years.
fn is_note(record: &impl Fields, delimiter: u8) -> bool {
    // A cell that runs over several lines with delimiters in it is a stray quote, not a note.
    if !record.plain(delimiter)
        && record
            .fields()
            .any(|c| c.contains('\n') && c.as_bytes().contains(&delimiter))
    {
        return false;
    }
    let mut filled = record.fields().map(str::trim).filter(|c| !c.is_empty());
    let Some(first) = filled.next() else {
        return true;
    };
    if filled.next().is_none() {
        return first
            .chars()
            .any(|ch| ch.is_alphabetic() || "*†‡§#¹²³(".contains(ch));
    }
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
    .any(|m| starts_lowercased_with(first, m));
    marker && record.fields().all(|c| classify(c) != CellClass::Number)
}

/// The last line swallowed by an open quote in a record on `line`, when a field holds a line
/// break and at least a line's worth of delimiters (a quoted cell with a line break in it is
/// fine).
fn runaway_quote(line: usize, record: &impl Fields, width: usize, delimiter: u8) -> Option<usize> {
    let needed = width.saturating_sub(1).max(1);
    record.fields().find_map(|field| {
        let breaks = field.trim_end().matches('\n').count();
        let delimiters = field.bytes().filter(|&b| b == delimiter).count();
        (breaks >= 1 && delimiters >= needed).then_some(line + breaks)
    })
}

/// The lines of a runaway quote, each read as written (quotes as characters), `width` cells
/// each, with their lines.
fn cut_runaway(text: &str, spot: Spot, delimiter: u8, width: usize) -> Vec<(usize, Vec<&str>)> {
    // The record's span starts at the blank lines before it, its line at its first character.
    let body =
        text[spot.start.min(text.len())..spot.end.min(text.len())].trim_start_matches(['\n', '\r']);
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
        out.push((spot.line + offset, cells));
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ingest::record::Cells;

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
    fn markers_are_matched_as_the_lowercased_text_would_match_them() {
        for (text, prefix) in [
            ("Source: x", "source"),
            ("SOURCE", "source"),
            ("Sourc", "source"),
            ("† provisional", "†"),
            ("©2024", "©"),
            ("Ümlaut", "u"),
            ("FOOTNOTE 1", "footnote"),
            ("", "note"),
        ] {
            assert_eq!(
                starts_lowercased_with(text, prefix),
                text.to_lowercase().starts_with(prefix),
                "{text:?} {prefix:?}"
            );
        }
    }

    #[test]
    fn notes_are_held_until_data_follows_and_a_footnote_block_ends_the_table() {
        let record = |cells: &[&str]| cells.iter().collect::<Cells>();
        let mut end = TableEnd::default();
        let raw = |line: usize, cells: &[&str]| Raw {
            line,
            start: 0,
            end: 0,
            record: record(cells),
        };
        assert_eq!(end.place(&record(&["Chile", "1"]), b','), Place::Table);
        // A note-like line, then data: the note was inside the table.
        let note = record(&["Source: invented", ""]);
        assert_eq!(end.place(&note, b','), Place::Held);
        end.keep(raw(3, &["Source: invented", ""]), Place::Held);
        assert_eq!(end.place(&record(&["Peru", "2"]), b','), Place::Table);
        assert_eq!(end.release().len(), 1);
        // A note, a footnote block, then anything: all below, in order.
        let place = end.place(&record(&["* estimate"]), b',');
        end.keep(raw(5, &["* estimate"]), place);
        let block = record(&["footnoteSeqID", "Footnote"]);
        assert_eq!(end.place(&block, b','), Place::Below);
        end.keep(raw(6, &["footnoteSeqID", "Footnote"]), Place::Below);
        assert_eq!(end.place(&record(&["1", "2"]), b','), Place::Below);
        end.keep(raw(7, &["1", "2"]), Place::Below);
        let lines: Vec<usize> = end.finish().iter().map(|r| r.line).collect();
        assert_eq!(lines, vec![5, 6, 7]);
    }
}
