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
}

#[derive(Debug, Clone)]
pub struct TextRecord {
    pub line: usize,
    pub cells: Vec<String>,
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
/// wrong year.
pub fn read_table(text: &str, delimiter: u8, file: &str) -> Result<TextTable> {
    let mut reader = csv::ReaderBuilder::new()
        .delimiter(delimiter)
        .has_headers(false)
        .flexible(true)
        .from_reader(text.as_bytes());
    let mut rows = reader.records();
    let header_record = match rows.next() {
        None => {
            return Err(Error::bad_input(
                Location::file(file),
                "the file is empty",
                "a header line naming the columns, then one line per figure",
                "check that the right file was given",
            ))
        }
        Some(result) => result.map_err(|e| csv_error(e, file))?,
    };
    let headers = clean_headers(&header_record, file)?;
    let mut records = Vec::new();
    for result in rows {
        let record = result.map_err(|e| csv_error(e, file))?;
        let line = record.position().map(|p| p.line() as usize).unwrap_or(0);
        if record.len() != headers.len() {
            if record.len() == 1 && record.get(0).is_some_and(|c| c.trim().is_empty()) {
                continue;
            }
            return Err(Error::bad_input(
                Location::line(file, line),
                format!("{} field(s) on this line, but the header has {}", record.len(), headers.len()),
                format!("{} fields separated by the {} delimiter", headers.len(), delimiter_name(delimiter)),
                "fix the line (a stray delimiter or a missing quote is the usual cause), or pass --delimiter if the wrong one was detected",
            ));
        }
        records.push(TextRecord {
            line,
            cells: record.iter().map(str::to_string).collect(),
        });
    }
    Ok(TextTable {
        headers,
        records,
        delimiter,
    })
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

fn csv_error(error: csv::Error, file: &str) -> Error {
    let line = error.position().map(|p| p.line() as usize);
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
