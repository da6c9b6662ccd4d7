//! Reading decoded text as a delimited table: sniffing the delimiter, checking the header and
//! keeping the physical line of every record so that later errors can point at it.
//!
//! This file knows nothing about countries or numbers; `ingest::layout` gives the columns their
//! roles.

use crate::error::{Error, Location, Result};

/// A delimited table as text cells, with the line each record starts on.
#[derive(Debug, Clone)]
pub struct TextTable {
    pub headers: Vec<String>,
    pub records: Vec<TextRecord>,
    pub delimiter: u8,
    /// Title lines above the header and note lines below the table, set aside.
    pub skipped: Vec<String>,
}

#[derive(Debug, Clone)]
pub struct TextRecord {
    pub line: usize,
    /// The cells, indexable as `&str` (one allocation per record, not one per cell).
    pub cells: csv::StringRecord,
}

const CANDIDATES: &[u8] = b",\t;|";

/// Picks the delimiter that splits the first lines into the same number of fields, preferring
/// the one that splits the header most. Quoted text is skipped.
pub fn sniff_delimiter(text: &str) -> u8 {
    let lines: Vec<&str> = text
        .lines()
        .filter(|l| !l.trim().is_empty())
        .take(20)
        .collect();
    let Some(header) = lines.first() else {
        return b',';
    };
    let mut best = (b',', 0usize, 0usize);
    for &candidate in CANDIDATES {
        let in_header = count_outside_quotes(header, candidate);
        if in_header == 0 {
            continue;
        }
        let agreeing = lines
            .iter()
            .filter(|l| count_outside_quotes(l, candidate) == in_header)
            .count();
        if (agreeing, in_header) > (best.1, best.2) {
            best = (candidate, agreeing, in_header);
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

/// Parses the whole table. Every record must have as many fields as the header; a ragged
/// record is an error naming its line, because a shifted cell would put a number under the
/// wrong year. Title lines above the header and note lines below the table (lines with at most
/// one filled cell, as spreadsheet exports write them) are set aside and listed in `skipped`,
/// never read as data.
pub fn read_table(text: &str, delimiter: u8, file: &str) -> Result<TextTable> {
    read_table_from(text, delimiter, file, 0)
}

/// As `read_table`, for a piece of a larger file: every line number is shifted by
/// `line_offset` (the piece's header is a copy; its data lines keep their place in the file).
pub fn read_table_from(
    text: &str,
    delimiter: u8,
    file: &str,
    line_offset: usize,
) -> Result<TextTable> {
    if let Some(position) = text.find('\0') {
        let line = text[..position].matches('\n').count() + 1 + line_offset;
        return Err(Error::bad_input(
            Location::line(file, line),
            "a NUL byte: the file looks binary, or is UTF-16 without a byte-order mark",
            "delimited text (CSV or TSV)",
            "check that the right file was given; for UTF-16 without a byte-order mark pass --encoding utf-16le (or utf-16be)",
        ));
    }
    let mut reader = csv::ReaderBuilder::new()
        .delimiter(delimiter)
        .has_headers(false)
        .flexible(true)
        .from_reader(text.as_bytes());
    let mut all: Vec<(usize, csv::StringRecord)> = Vec::new();
    let mut lines = LineCounter::new(text);
    lines.line += line_offset;
    for result in reader.records() {
        let record = result.map_err(|e| csv_error(e, file, line_offset))?;
        let line = record
            .position()
            .map(|p| lines.line_of(p.byte() as usize))
            .unwrap_or(0);
        all.push((line, record));
    }
    let filled = |r: &csv::StringRecord| r.iter().filter(|c| !c.trim().is_empty()).count();
    // A line with one filled cell is a title or a note only if that cell is words, not a figure:
    // a lone number is more likely a data line that lost its cells, and must stop the run.
    let note_like = |r: &csv::StringRecord| {
        filled(r) == 1
            && r.iter().any(|c| {
                c.trim()
                    .chars()
                    .any(|ch| ch.is_alphabetic() || "*†‡§#¹²³(".contains(ch))
            })
    };
    let data_like = |r: &csv::StringRecord| filled(r) >= 2 || (filled(r) == 1 && !note_like(r));
    let Some(header_index) = all
        .iter()
        .position(|(_, r)| filled(r) >= 2)
        .or(if all.is_empty() { None } else { Some(0) })
    else {
        return Err(Error::bad_input(
            Location::file(file),
            "the file is empty",
            "a header line naming the columns, then one line per figure",
            "check that the right file was given",
        ));
    };
    let mut skipped: Vec<String> = all[..header_index]
        .iter()
        .filter(|(_, r)| filled(r) > 0)
        .map(|(line, r)| {
            format!(
                "line {line} above the header: \"{}\"",
                shorten(r.iter().collect::<Vec<_>>().join(" ").trim())
            )
        })
        .collect();
    let headers = clean_headers(&all[header_index].1, file)?;
    let width = headers.len();
    // The table ends at the last line with two or more filled cells; below it, only notes.
    let last_data = all
        .iter()
        .rposition(|(_, r)| data_like(r))
        .unwrap_or(header_index);
    let tail = last_data.max(header_index) + 1;
    skipped.extend(
        all[tail..]
            .iter()
            .filter(|(_, r)| filled(r) > 0)
            .map(|(line, r)| {
                format!(
                    "line {line} below the table: \"{}\"",
                    shorten(r.iter().collect::<Vec<_>>().join(" ").trim())
                )
            }),
    );
    // Records move out of `all` (no copy of their text).
    let mut records = Vec::with_capacity(tail.saturating_sub(header_index + 1));
    for (line, mut record) in all.drain(header_index + 1..tail.max(header_index + 1)) {
        if filled(&record) == 0 {
            continue;
        }
        // Spreadsheet exports pad lines with empty cells; only filled extra cells are an error.
        let mut len = record.len();
        while len > width && record[len - 1].trim().is_empty() {
            len -= 1;
        }
        record.truncate(len);
        if record.len() != width {
            return Err(Error::bad_input(
                Location::line(file, line),
                format!("{} field(s) on this line, but the header has {width}", record.len()),
                format!("{width} fields separated by the {} delimiter", delimiter_name(delimiter)),
                "fix the line (a stray delimiter or a missing quote is the usual cause), or pass --delimiter if the wrong one was detected",
            ));
        }
        records.push(TextRecord {
            line,
            cells: record,
        });
    }
    Ok(TextTable {
        headers,
        records,
        delimiter,
        skipped,
    })
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

/// Reads a file's bytes as a table with the detected encoding and delimiter (reference tables:
/// no options to force either).
pub fn read_bytes(bytes: &[u8], file: &str) -> Result<TextTable> {
    let decoded = crate::ingest::encoding::decode(bytes, None, file)?;
    read_table(&decoded.text, sniff_delimiter(&decoded.text), file)
}

/// A cell or line cut to a length that fits in a message.
pub fn shorten(text: &str) -> String {
    const MAX: usize = 60;
    if text.chars().count() <= MAX {
        text.to_string()
    } else {
        format!("{}…", text.chars().take(MAX).collect::<String>())
    }
}

fn clean_headers(record: &csv::StringRecord, file: &str) -> Result<Vec<String>> {
    let mut headers: Vec<String> = Vec::with_capacity(record.len());
    for (i, raw) in record.iter().enumerate() {
        let name = raw.trim().trim_start_matches('\u{feff}').to_string();
        let name = if name.is_empty() {
            format!("column_{}", i + 1)
        } else {
            name
        };
        if let Some(first) = headers.iter().position(|h| h == &name) {
            return Err(Error::bad_input(
                Location::line(file, 1),
                format!(
                    "the header names column {} and column {} both \"{name}\"",
                    first + 1,
                    i + 1
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
        assert_eq!(table.records.len(), 1);
        assert_eq!(table.skipped.len(), 4, "{:?}", table.skipped);
        assert!(table.skipped[3].contains("line 8 below the table"));
        let padded =
            read_table("country,2020,,\nFrance,1,,\nSource: x,,,\n", b',', "t.csv").unwrap();
        assert_eq!(
            (
                padded.headers.len(),
                padded.records.len(),
                padded.skipped.len()
            ),
            (4, 1, 1)
        );
        let padded = read_table("country,2020\nFrance,1,,\nSource: x,,\n", b',', "t.csv").unwrap();
        assert_eq!(padded.records.len(), 1);
        assert_eq!(padded.skipped.len(), 1);
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
        let err = read_table("a,b\n1,2\n3\n", b',', "t.csv")
            .unwrap_err()
            .to_string();
        assert!(err.contains("t.csv, line 3"), "{err}");
        let err = read_table("a,a\n1,2\n", b',', "t.csv")
            .unwrap_err()
            .to_string();
        assert!(err.contains("both \"a\""), "{err}");
        let err = read_table("", b',', "t.csv").unwrap_err().to_string();
        assert!(err.contains("empty"), "{err}");
    }
}
