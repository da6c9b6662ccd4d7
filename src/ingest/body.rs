//! The records below the header: where the table ends (only notes may follow its last line of
//! data), and the checks each record passes (a repeated header, a runaway quote, a ragged
//! line), each an error at its line or, for a runaway quote with `--lenient`, flagged rows.

use crate::error::{Error, Location, Result};
use crate::ingest::delimiter::delimiter_name;
use crate::ingest::header::{classify, CellClass, Raw};
use crate::ingest::record::{Cells, TextRecord};

/// One past the last record of the table: the table ends at the last line that holds data, and
/// only notes may follow it. A footnote block (a data portal's "footnoteSeqID","Footnote"
/// table below the data) is notes too.
pub(super) fn table_end(all: &[Raw], header_index: usize, delimiter: u8) -> usize {
    let notes_from = all[header_index + 1..]
        .iter()
        .position(starts_footnotes)
        .map_or(all.len(), |p| p + header_index + 1);
    let last_data = all[..notes_from]
        .iter()
        .rposition(|r| !is_note(r, delimiter))
        .unwrap_or(header_index)
        .max(header_index);
    last_data + 1
}
/// What the records below the header are checked against.
pub(super) struct Body<'a> {
    pub(super) text: &'a str,
    pub(super) file: &'a str,
    pub(super) delimiter: u8,
    pub(super) headers: &'a [String],
    pub(super) header_line: usize,
    pub(super) lenient: bool,
}

impl Body<'_> {
    /// The table's records (a runaway quote cut into flagged lines when lenient) and the empty
    /// lines among them; `expected` is the line the first record starts on when no blank line
    /// comes between. A repeated header, a runaway quote (unless lenient) and a ragged line
    /// are errors at their line.
    pub(super) fn records(
        &self,
        raws: impl ExactSizeIterator<Item = Raw>,
        mut expected: usize,
    ) -> Result<(Vec<TextRecord>, Vec<usize>)> {
        let width = self.headers.len();
        let header_key: Vec<String> = self.headers.iter().map(|h| h.to_lowercase()).collect();
        let mut empty_lines: Vec<usize> = Vec::new();
        let mut records = Vec::with_capacity(raws.len());
        for raw in raws {
            empty_lines.extend(expected..raw.line);
            expected = raw.line + 1 + breaks_in(&raw);
            if raw.filled() == 0 {
                empty_lines.push(raw.line);
                continue;
            }
            if repeats_header(&raw.record, &header_key) {
                return Err(Error::bad_input(
                Location::line(self.file, raw.line),
                format!("this line repeats the header of line {}: the file holds two tables", self.header_line),
                "one table per file (one header, then its rows)",
                "split the file into one file per table, or delete the second header and check that the rows below it are in the same columns",
            ));
            }
            if let Some(opened) = runaway_quote(&raw, width, self.delimiter) {
                if !self.lenient {
                    return Err(Error::bad_input(
                    Location::line(self.file, raw.line),
                    format!(
                        "a quote opened on this line is not closed until line {opened} (or the end of the file): it swallows the lines between"
                    ),
                    "balanced double quotes: a cell that starts with \" must end with \"",
                    "remove or close the stray quote on this line, or pass --lenient to keep those lines as rows flagged `unbalanced_quote`",
                ));
                }
                records.extend(cut_runaway(self.text, &raw, self.delimiter, width));
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
                return Err(ragged(
                    self.file,
                    raw.line,
                    record.len(),
                    width,
                    self.delimiter,
                ));
            }
            records.push(TextRecord {
                line: raw.line,
                cells: record,
                unbalanced_quote: false,
            });
        }
        Ok((records, empty_lines))
    }
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
pub(super) fn breaks_in(raw: &Raw) -> usize {
    raw.record.iter().map(|c| c.matches('\n').count()).sum()
}

/// A quote still open at the end of the file: the last record starts a quoted cell that never
/// closes (an odd number of quotes from where it opened). An error at that line, or with
/// `lenient` nothing (its lines are read as they are by the runaway-quote rule).
pub(super) fn open_at_end(text: &str, last: &Raw, file: &str, lenient: bool) -> Result<()> {
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

#[cfg(test)]
mod tests {
    use super::*;

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
}
