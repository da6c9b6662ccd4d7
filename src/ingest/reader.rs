//! The records of a text, one at a time: the csv crate's reader over the decoded text, each
//! record with its physical line and byte range, the next one read ahead so the current one's
//! end is known. The table finder (`table`) reads every input,
//! reference table and sheet through it.

use crate::error::{Error, Location, Result};
use crate::ingest::header::{Raw, Spot};
use crate::ingest::record::{Cells, TooLarge};

/// The records of a text, one at a time, each with its line and byte range. The record after
/// the current one is read ahead, so that the current one's end is known.
pub(super) struct RawReader<'t> {
    text: &'t str,
    from: usize,
    file: &'t str,
    reader: csv::Reader<&'t [u8]>,
    lines: LineCounter<'t>,
    current: csv::StringRecord,
    ahead: csv::StringRecord,
    /// Where the record read ahead starts, and its line (none at the end of the text).
    ahead_at: Option<(usize, usize)>,
    started: bool,
}

/// A record as the reader holds it, until the next one is read.
pub(super) struct RawRef<'r> {
    pub(super) line: usize,
    pub(super) start: usize,
    pub(super) end: usize,
    pub(super) record: &'r csv::StringRecord,
}

impl RawRef<'_> {
    pub(super) fn spot(&self) -> Spot {
        Spot {
            line: self.line,
            start: self.start,
            end: self.end,
        }
    }

    /// The record, kept (it is held back, or may be the header); refused at 4 GiB of text.
    pub(super) fn kept(&self) -> std::result::Result<Raw, TooLarge> {
        Ok(Raw {
            line: self.line,
            start: self.start,
            end: self.end,
            record: Cells::of(self.record)?,
        })
    }
}

impl<'t> RawReader<'t> {
    /// Reads `text` from byte `from` (a record's start); lines count from the text's start,
    /// after `line_offset` lines before it.
    pub(super) fn new(
        text: &'t str,
        delimiter: u8,
        file: &'t str,
        line_offset: usize,
        from: usize,
    ) -> Self {
        let from = from.min(text.len());
        let reader = csv::ReaderBuilder::new()
            .delimiter(delimiter)
            .has_headers(false)
            .flexible(true)
            .from_reader(&text.as_bytes()[from..]);
        let mut lines = LineCounter::at(text, from);
        lines.line += line_offset;
        RawReader {
            text,
            from,
            file,
            reader,
            lines,
            current: csv::StringRecord::new(),
            ahead: csv::StringRecord::new(),
            ahead_at: None,
            started: false,
        }
    }

    pub(super) fn next(&mut self) -> Result<Option<RawRef<'_>>> {
        if !self.started {
            self.started = true;
            self.ahead_at = self.read_ahead()?;
        }
        let Some((start, line)) = self.ahead_at else {
            return Ok(None);
        };
        std::mem::swap(&mut self.current, &mut self.ahead);
        self.ahead_at = self.read_ahead()?;
        Ok(Some(RawRef {
            line,
            start,
            end: self.ahead_at.map_or(self.text.len(), |(s, _)| s),
            record: &self.current,
        }))
    }

    fn read_ahead(&mut self) -> Result<Option<(usize, usize)>> {
        match self.reader.read_record(&mut self.ahead) {
            Ok(false) => Ok(None),
            Ok(true) => {
                let start = self.from + self.ahead.position().map_or(0, |p| p.byte() as usize);
                Ok(Some((start, self.lines.line_of(start))))
            }
            Err(error) => {
                let at = self.from + error.position().map_or(0, |p| p.byte() as usize);
                let line = self.lines.line_of(at);
                Err(match error.kind() {
                    csv::ErrorKind::Utf8 { .. } => Error::bad_input(
                        Location::line(self.file, line),
                        "the record cannot be read as text",
                        "delimited text (CSV or TSV)",
                        "check that the right file was given",
                    ),
                    _ => Error::bad_input(
                        Location::line(self.file, line),
                        format!("the table cannot be read: {error}"),
                        "delimited text (CSV or TSV) with balanced quotes",
                        "check quoting on that line",
                    ),
                })
            }
        }
    }
}

/// The number of line breaks in `bytes` as `LineCounter` counts them (`\n`, `\r\n`, lone `\r`).
pub fn count_line_breaks(bytes: &[u8]) -> usize {
    memchr::memchr2_iter(b'\n', b'\r', bytes)
        .filter(|&i| bytes[i] == b'\n' || bytes.get(i + 1) != Some(&b'\n'))
        .count()
}

/// Physical line numbers from byte offsets, counting `\n`, `\r\n` and lone `\r` breaks. The
/// csv reader's own line count points at skipped blank lines before a record, so the line is
/// taken where the record's first character is.
pub(super) struct LineCounter<'a> {
    bytes: &'a [u8],
    at: usize,
    line: usize,
}

impl<'a> LineCounter<'a> {
    #[cfg(test)]
    fn new(text: &'a str) -> Self {
        LineCounter::at(text, 0)
    }

    /// A counter whose next count starts at byte `from`, with the breaks before it counted.
    pub(super) fn at(text: &'a str, from: usize) -> Self {
        let bytes = text.as_bytes();
        let from = from.min(bytes.len());
        // A `\r` just before `from` is one break with a `\n` at `from`, counted there.
        let breaks = memchr::memchr2_iter(b'\n', b'\r', &bytes[..from])
            .filter(|&i| bytes[i] == b'\n' || bytes.get(i + 1) != Some(&b'\n'))
            .count();
        LineCounter {
            bytes,
            at: from,
            line: 1 + breaks,
        }
    }

    pub(super) fn line_of(&mut self, start: usize) -> usize {
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn line_breaks_are_counted_as_the_line_counter_counts_them() {
        // `\n`, `\r\n` and a lone `\r` (old Mac files) are one break each (common practice).
        for (text, breaks) in [
            ("", 0),
            ("a", 0),
            ("a\nb\n", 2),
            ("a\r\nb\r\n", 2),
            ("a\rb\r", 2),
            ("a\r\rb\n\r\n", 4),
            ("\r", 1),
            ("\n\r", 2),
        ] {
            assert_eq!(count_line_breaks(text.as_bytes()), breaks, "{text:?}");
            let mut lines = LineCounter::new(text);
            assert_eq!(lines.line_of(text.len()) - 1, breaks, "{text:?}");
            // A counter started anywhere counts every later place as one started at 0.
            for from in 0..=text.len() {
                for place in from..=text.len() {
                    assert_eq!(
                        LineCounter::at(text, from).line_of(place),
                        LineCounter::new(text).line_of(place),
                        "{text:?} from {from} at {place}"
                    );
                }
            }
        }
    }
}
