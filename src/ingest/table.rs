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
//! The text is read one record at a time. The records among which the header is chosen are
//! kept while it is chosen; every record below it is checked and put straight into the
//! table's columns (`Records`), so a table is never held as one allocation a record. The
//! records between the header and the end of the header search are parsed twice (kept while
//! the header is chosen, then read again below it); a header with empty cells at its end
//! makes every record be read twice: once to learn whether any record of the table fills
//! those columns, once to keep them.
//!
//! It knows nothing about countries; `ingest::layout` gives the columns their roles. The rules
//! live beside it: the delimiter in `delimiter`, the header in `header`, the table's end and
//! the checks of each record in `body`, the records' columns in `record`.

pub use crate::cells::words::shorten;
use crate::error::{Error, Location, Result};
use crate::ingest::asides::Asides;
use crate::ingest::body::{breaks_in, open_at_end, Body, Place, TableEnd};
pub use crate::ingest::delimiter::{delimiter_name, sniff_delimiter};
pub use crate::ingest::header::FindOptions;
pub use crate::ingest::header::HEADER_SEARCH;
use crate::ingest::header::{choose_header, Raw};
pub use crate::ingest::reader::count_line_breaks;
use crate::ingest::reader::RawReader;
pub use crate::ingest::record::{Cells, Fields, Records, TextRecord};
use crate::ingest::stretches::{self, Stretch};

/// A delimited table as text cells, with the line each record starts on.
#[derive(Debug, Clone)]
pub struct TextTable {
    pub headers: Vec<String>,
    pub records: Records,
    pub delimiter: u8,
    /// Lines set aside above the header and below the table, described for the summary.
    pub skipped: Vec<String>,
    /// The empty lines inside the table.
    pub empty_lines: Vec<usize>,
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

impl TextTable {
    /// What the finder set aside and read leniently (`Asides::set_aside` describes it).
    pub fn asides(&self) -> Asides {
        Asides {
            lines: self.skipped.clone(),
            empty_lines: self.empty_lines.clone(),
            unbalanced: self.records.unbalanced_count(),
            ..Asides::default()
        }
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
    let reading = Reading {
        text,
        delimiter,
        file,
        options,
    };
    let (prefix, header_index, header_reason) = reading.header()?;
    let header = &prefix[header_index];
    let header_line = header.line;
    let (mut skipped, above) =
        set_aside_above(&prefix[..header_index], header_line, delimiter, options);
    let (header_record, trailing_delimiter) = reading.header_without_empty_tail(header)?;
    let mut headers = clean_headers(&header_record, file, header_line)?;
    // A fault in the dimension names is told after the table's own faults, as its codes are.
    let (dimensions, dimension_error) = match dimension_count(&headers, file, header_line) {
        Ok(n) => (n, None),
        Err(e) => (None, Some(e)),
    };
    // The line the next record starts on when no blank line comes between.
    let expected = header_line + 1 + breaks_in(&header.record);
    let mut body = Body::new(
        text,
        file,
        delimiter,
        &headers,
        header_line,
        options.lenient,
        expected,
        dimensions,
    );
    body.dimension_error = dimension_error;
    let below = reading.body(header, &mut body)?;
    skipped.extend(
        below
            .iter()
            .filter(|r| r.filled() > 0)
            .map(|r| format!("line {} below the table: \"{}\"", r.line, r.text(delimiter))),
    );
    let Body {
        records,
        empty_lines,
        ..
    } = body;
    let dimensions = match dimensions {
        Some(n) => split_dimension_names(&mut headers, n),
        None => Vec::new(),
    };
    Ok(TextTable {
        headers,
        records,
        delimiter,
        skipped,
        empty_lines,
        header_line,
        header_reason,
        trailing_delimiter,
        dimensions,
        above,
    })
}

/// One text being read as a table.
struct Reading<'a> {
    text: &'a str,
    delimiter: u8,
    file: &'a str,
    options: &'a FindOptions,
}

impl Reading<'_> {
    fn records(&self, from: usize) -> RawReader<'_> {
        RawReader::new(
            self.text,
            self.delimiter,
            self.file,
            self.options.line_offset,
            from,
        )
    }

    /// The records the header is chosen among (the first `HEADER_SEARCH`, or up to the line
    /// `--header-row` names), and the header's place among them and why it was chosen.
    fn header(&self) -> Result<(Vec<Raw>, usize, String)> {
        let mut reader = self.records(0);
        let mut prefix: Vec<Raw> = Vec::new();
        let forced = self
            .options
            .header_line
            .map(|l| l + self.options.line_offset);
        while let Some(raw) = reader.next()? {
            let raw = raw.kept().map_err(|e| e.error(self.file))?;
            let found = forced.is_some_and(|l| raw.line == l && raw.filled() > 0);
            prefix.push(raw);
            if found || (forced.is_none() && prefix.len() >= HEADER_SEARCH) {
                break;
            }
        }
        if prefix.is_empty() {
            return Err(Error::bad_input(
                Location::file(self.file),
                "the file is empty",
                "a header line naming the columns, then one line per figure",
                "check that the right file was given",
            ));
        }
        let (header_index, header_reason) = choose_header(&prefix, self.options, self.file)?;
        // A file without a line of two fields is no table; say so without quoting it (it may
        // be a file that was never meant to be read as data).
        let mut two_fields = prefix.iter().any(|r| r.filled() >= 2);
        while !two_fields {
            let Some(raw) = reader.next()? else {
                return Err(Error::bad_input(
                    Location::file(self.file),
                    format!(
                        "no line holds two or more fields separated by the {} delimiter: this is not a delimited table",
                        delimiter_name(self.delimiter)
                    ),
                    "a header line naming the columns, then one line per figure",
                    "check that the right file was given, or pass --delimiter if the table uses another one",
                ));
            };
            two_fields = raw.record.filled() >= 2;
        }
        Ok((prefix, header_index, header_reason))
    }

    /// The header's cells without the empty cells at its end whose column holds nothing in
    /// the table (a trailing delimiter, on every line or on some), and whether any was
    /// dropped. Only such a header makes the table's records be read an extra time.
    fn header_without_empty_tail(&self, header: &Raw) -> Result<(Cells, bool)> {
        let mut cells = header.record.clone();
        let mut least = cells.len();
        while least > 1 && cells[least - 1].trim().is_empty() {
            least -= 1;
        }
        if least == cells.len() {
            return Ok((cells, false));
        }
        // Which of those columns a record of the table fills.
        let mut used = vec![false; cells.len()];
        let mut end = TableEnd::default();
        let mut reader = self.records(header.end);
        while let Some(raw) = reader.next()? {
            let place = end.place(raw.record, self.delimiter);
            if place != Place::Table {
                end.keep(raw.kept().map_err(|e| e.error(self.file))?, place);
                continue;
            }
            for held in end.release() {
                mark_used(&held.record, least, &mut used);
            }
            mark_used(raw.record, least, &mut used);
        }
        let mut len = cells.len();
        while len > least && !used[len - 1] {
            len -= 1;
        }
        let dropped = len < cells.len();
        cells.truncate(len);
        Ok((cells, dropped))
    }

    /// Reads the records below `header` into `body`; gives the records below the table.
    /// A file with several faults gets the error the whole-file rules give first: a record
    /// the csv reader cannot read, then a quote still open at the end of the file, then the
    /// first record of the table that fails its checks, then a statistics office's dimension
    /// codes (`Body::dimension_error`). So after a record fails, the rest is read only to find
    /// the last record. A large table is read in stretches on the pool's threads
    /// (`stretches`), joined as far as they give exactly what one reading gives, the rest
    /// read in one go.
    fn body<'b>(&self, header: &Raw, body: &mut Body<'b>) -> Result<Vec<Raw>> {
        let parallel = !self.options.in_one_go && body.dimensions_split().is_none();
        let joined = parallel
            .then(|| {
                stretches::read_joined(
                    self.text,
                    header.end,
                    |first| body.like_this(first),
                    |from, until, stretch_body, end| {
                        self.stretch(from, until, stretch_body, end, false)
                    },
                )
            })
            .flatten();
        let (end, stretch) = match joined {
            Some(joined) => {
                body.take_records_of(joined.body);
                let (mut end, mut stretch) = (joined.end, joined.stretch);
                if let Some(from) = joined.resume {
                    let rest = self.stretch(from, usize::MAX, body, &mut end, true)?;
                    stretch.last = rest.last.or(stretch.last);
                    stretch.failed = rest.failed;
                }
                (end, stretch)
            }
            None => {
                let mut end = TableEnd::default();
                let stretch = self.stretch(header.end, usize::MAX, body, &mut end, true)?;
                (end, stretch)
            }
        };
        let (start, line) = stretch.last.unwrap_or((header.start, header.line));
        open_at_end(self.text, start, line, self.file, self.options.lenient)?;
        match (stretch.failed, body.dimension_error.take()) {
            (Some(error), _) | (None, Some(error)) => Err(error),
            (None, None) => Ok(end.finish()),
        }
    }

    /// Reads the records from byte `from` (a record's start) into `body`, until one starts at
    /// or after `until`. After a record fails, the rest is read only to find the last record
    /// (`past_failure`), or not at all.
    fn stretch<'b>(
        &self,
        from: usize,
        until: usize,
        body: &mut Body<'b>,
        end: &mut TableEnd,
        past_failure: bool,
    ) -> Result<Stretch> {
        let mut reader = self.records(from);
        let mut stretch = Stretch::default();
        while let Some(raw) = reader.next()? {
            if raw.start >= until {
                stretch.next = Some(raw.start);
                break;
            }
            stretch.first.get_or_insert(raw.start);
            stretch.last = Some((raw.start, raw.line));
            if stretch.failed.is_some() {
                match past_failure {
                    true => continue,
                    false => break,
                }
            }
            let place = end.place(raw.record, self.delimiter);
            if place != Place::Table {
                match raw.kept() {
                    Ok(kept) => end.keep(kept, place),
                    Err(e) => stretch.failed = Some(e.error(self.file)),
                }
                continue;
            }
            let taken = end
                .release()
                .iter()
                .try_for_each(|held| body.take(held.spot(), &held.record))
                .and_then(|()| body.take(raw.spot(), raw.record));
            stretch.failed = taken.err();
        }
        Ok(stretch)
    }
}

/// Marks the columns from `least` on that `record` fills.
fn mark_used(record: &impl Fields, least: usize, used: &mut [bool]) {
    for (j, slot) in used.iter_mut().enumerate().skip(least) {
        *slot |= record.field(j).is_some_and(|c| !c.trim().is_empty());
    }
}

/// The filled lines above the header, described for the summary and kept as trimmed cells,
/// and the count of blank lines there.
fn set_aside_above(
    above: &[Raw],
    header_line: usize,
    delimiter: u8,
    options: &FindOptions,
) -> (Vec<String>, Vec<Vec<String>>) {
    let header_index = above.len();
    let mut skipped: Vec<String> = above
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
    let above: Vec<Vec<String>> = above
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
    (skipped, above)
}

/// A statistics-office TSV: the first header cell joins the dimension names with commas and a
/// backslash before the time dimension (`freq,unit,geo\TIME_PERIOD`), and the first cell of
/// each row joins that row's codes (`A,NR,AT`): the number of dimensions, whose codes each
/// record's first cell is split into as it is read (`Body`).
fn dimension_count(headers: &[String], file: &str, header_line: usize) -> Result<Option<usize>> {
    let Some((names, _time)) = headers.first().and_then(|h| h.split_once('\\')) else {
        return Ok(None);
    };
    if names.split(',').any(|n| n.trim().is_empty()) {
        return Err(Error::bad_input(
            Location::line(file, header_line),
            format!("the first header cell \"{}\" has an empty dimension name", headers[0]),
            "dimension names joined by commas, then a backslash and the time dimension (freq,unit,geo\\TIME_PERIOD)",
            "fix the header cell",
        ));
    }
    Ok(Some(names.split(',').count()))
}

/// The header's first cell replaced by the `n` dimension names it joins; their places.
fn split_dimension_names(headers: &mut Vec<String>, n: usize) -> Vec<usize> {
    let names = headers[0].split_once('\\').map_or("", |(names, _)| names);
    let mut expanded: Vec<String> = names.split(',').map(|n| n.trim().to_string()).collect();
    expanded.extend(headers.drain(1..));
    *headers = expanded;
    (0..n).collect()
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

#[cfg(test)]
mod tests {
    use super::*;

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
                .asides()
                .set_aside()
                .iter()
                .any(|s| s.contains("1 empty line(s) inside the table (line 3)")),
            "{:?}",
            table.asides()
        );
    }

    #[test]
    fn blank_lines_inside_and_a_quote_open_at_the_end() {
        let table = read_table("country,fee\nChile,1\n\nPeru,2\n", b',', "t.csv").unwrap();
        assert_eq!(table.empty_lines, vec![3]);
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
        assert!(table.records.iter().skip(1).all(|r| r.unbalanced_quote));
        assert_eq!(&table.records.get(2).cells[0], "Bolivia");
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
        assert_eq!(&table.records.get(1).cells[2], "EL");
        assert_eq!(&table.records.get(1).cells[4], ":");
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
