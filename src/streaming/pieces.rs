//! The cutter of `--streaming`: a byte stream cut into pieces of about the target size, each
//! ending at a record boundary (aware of quotes, and only after a line with two or more filled
//! cells, so no piece ends in what would look like notes below a table).

use crate::error::{Error, Result};
use std::io::{BufRead, BufReader, Read};

/// A piece as cut: its bytes, its line breaks, and the lines of the file before it.
pub(super) struct Cut {
    pub(super) bytes: Vec<u8>,
    pub(super) breaks: usize,
    pub(super) lines_before: usize,
}

/// How many pieces are read at once: one a thread of the pool, at most four (each holds a
/// piece's working memory). The finder reads a piece on one thread; two pieces keep both
/// cores of a small machine busy.
pub(super) fn pieces_at_once() -> usize {
    polars_core::runtime::THREAD_POOL
        .current_num_threads()
        .clamp(1, 4)
}

/// `work` on each item on the pool's threads, the results in the items' order.
pub(super) fn in_parallel<T: Send, R: Send>(
    items: Vec<T>,
    work: impl Fn(T) -> R + Sync + Send,
) -> Vec<R> {
    use rayon::prelude::*;
    match items.len() {
        0 | 1 => items.into_iter().map(work).collect(),
        _ => {
            polars_core::runtime::THREAD_POOL.install(|| items.into_par_iter().map(work).collect())
        }
    }
}

/// Cuts a byte stream into pieces that end at a record boundary.
pub(super) struct Pieces<R: Read> {
    pub(super) reader: BufReader<R>,
    pub(super) delimiter: u8,
    pub(super) target: usize,
    pub(super) finished: bool,
    /// What the next piece must hold at least, whatever the target: the first piece decides
    /// the header for all, so it holds every record the header is chosen among.
    pub(super) at_least: AtLeast,
}

/// The least a piece holds: records (lines with something on them, outside quotes, as the
/// csv reader counts them) and physical lines.
#[derive(Clone, Copy, Default)]
pub(super) struct AtLeast {
    pub(super) records: usize,
    pub(super) lines: usize,
}

impl AtLeast {
    /// For the first piece: the records the header is chosen among (it is chosen among them
    /// alone, as a whole-file reading chooses it) and one more, and the line `--header-row`
    /// names.
    pub(super) fn first_piece(header_row: Option<usize>) -> AtLeast {
        AtLeast {
            records: crate::ingest::table::HEADER_SEARCH + 1,
            lines: header_row.map_or(0, |row| row + 1),
        }
    }
}

impl<R: Read> Pieces<R> {
    /// Up to `count` pieces, the first after `lines_before` lines of the file.
    pub(super) fn next_cuts(
        &mut self,
        label: &str,
        count: usize,
        mut lines_before: usize,
    ) -> Result<Vec<Cut>> {
        let mut cuts = Vec::with_capacity(count);
        while cuts.len() < count {
            let Some(bytes) = self.next_piece(label)? else {
                break;
            };
            let breaks = crate::ingest::table::count_line_breaks(&bytes);
            cuts.push(Cut {
                bytes,
                breaks,
                lines_before,
            });
            lines_before += breaks;
        }
        Ok(cuts)
    }

    pub(super) fn next_piece(&mut self, label: &str) -> Result<Option<Vec<u8>>> {
        if self.finished {
            return Ok(None);
        }
        let mut piece: Vec<u8> = Vec::with_capacity(self.target + (1 << 16));
        let mut scan = RecordScan::new(self.delimiter);
        let mut line: Vec<u8> = Vec::new();
        let at_least = std::mem::take(&mut self.at_least);
        let mut lines = 0usize;
        loop {
            line.clear();
            let n = self
                .reader
                .read_until(b'\n', &mut line)
                .map_err(|e| Error::io(label, "read", e))?;
            if n == 0 {
                self.finished = true;
                break;
            }
            lines += 1;
            let ended_with_cells = scan.line(&line);
            piece.extend_from_slice(&line);
            let enough = scan.records >= at_least.records && lines >= at_least.lines;
            if ended_with_cells && enough && piece.len() >= self.target {
                break;
            }
        }
        Ok((!piece.is_empty()).then_some(piece))
    }
}

/// Where the csv reader stands in the text, byte by byte, by its rules (those of `csv_core`
/// with the reader's settings: double quotes, no escape character, no comments): a quote opens
/// a quoted cell only at a cell's start (elsewhere it is a character, as in `5" screens`); in a
/// quoted cell two quotes are one, and a quote followed by anything else ends the quoting (the
/// rest of the cell is read as written); `\r`, `\n` or `\r\n` end a record outside quotes, and
/// lines with nothing on them are no record.
struct RecordScan {
    /// Each byte's part in the rules.
    classes: [ByteClass; 256],
    state: ScanState,
    field_filled: bool,
    filled: usize,
    /// Records ended (lines with something on them).
    records: usize,
}

#[derive(Clone, Copy, PartialEq, Eq)]
enum ScanState {
    StartRecord,
    StartField,
    Unquoted,
    Quoted,
    QuoteInQuoted,
}

/// What a byte is to the scan: blanks leave a cell unfilled.
#[derive(Clone, Copy, PartialEq, Eq)]
enum ByteClass {
    Other,
    Blank,
    Quote,
    Delimiter,
    Terminator,
}

impl RecordScan {
    fn new(delimiter: u8) -> RecordScan {
        let mut classes = [ByteClass::Other; 256];
        for b in [b' ', b'\t', 0x0b, 0x0c] {
            classes[b as usize] = ByteClass::Blank;
        }
        classes[b'"' as usize] = ByteClass::Quote;
        classes[delimiter as usize] = ByteClass::Delimiter;
        classes[b'\n' as usize] = ByteClass::Terminator;
        classes[b'\r' as usize] = ByteClass::Terminator;
        RecordScan {
            classes,
            state: ScanState::StartRecord,
            field_filled: false,
            filled: 0,
            records: 0,
        }
    }

    /// Reads one line (up to and with its `\n`); whether it ends a record outside quotes that
    /// holds two or more filled cells (a piece may end after it: no piece ends in notes, or in
    /// blank lines, which belong to the table when rows follow them).
    fn line(&mut self, line: &[u8]) -> bool {
        use ByteClass::*;
        use ScanState::*;
        let (mut state, mut field_filled, mut filled) =
            (self.state, self.field_filled, self.filled);
        let mut ended_with_cells = false;
        for &b in line {
            let class = self.classes[b as usize];
            match (state, class) {
                (Quoted, Quote) => state = QuoteInQuoted,
                (Quoted, Other | Delimiter) => field_filled = true,
                (Quoted, Blank | Terminator) => {}
                (QuoteInQuoted, Quote) => (state, field_filled) = (Quoted, true),
                (StartRecord, Terminator) => {}
                (StartRecord | StartField, Quote) => state = Quoted,
                (_, Terminator) => {
                    ended_with_cells = filled + field_filled as usize >= 2;
                    self.records += 1;
                    (state, field_filled, filled) = (StartRecord, false, 0);
                }
                (_, Delimiter) => {
                    filled += field_filled as usize;
                    (state, field_filled) = (StartField, false);
                }
                (_, Blank) => state = Unquoted,
                (_, Other | Quote) => (state, field_filled) = (Unquoted, true),
            }
        }
        (self.state, self.field_filled, self.filled) = (state, field_filled, filled);
        ended_with_cells && state == StartRecord
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn cut(text: &str, target: usize) -> Vec<String> {
        cut_first_at_least(text, target, AtLeast::default())
    }

    fn cut_first_at_least(text: &str, target: usize, at_least: AtLeast) -> Vec<String> {
        let mut pieces = Pieces {
            reader: BufReader::new(text.as_bytes()),
            delimiter: b',',
            target,
            finished: false,
            at_least,
        };
        let mut out = Vec::new();
        while let Some(p) = pieces.next_piece("t.csv").unwrap() {
            out.push(String::from_utf8(p).unwrap());
        }
        out
    }

    #[test]
    fn pieces_end_at_records_with_cells_and_lose_nothing() {
        let text = "a,b\n1,2\n\"x\ny\",3\n4,5\nnote only\n6,7\n";
        let pieces = cut(text, 1);
        assert_eq!(pieces.concat(), text);
        // A quoted line break never ends a piece; a one-cell line never ends one either.
        assert_eq!(
            pieces,
            vec![
                "a,b\n",
                "1,2\n",
                "\"x\ny\",3\n",
                "4,5\n",
                "note only\n6,7\n"
            ]
        );
        assert_eq!(cut(text, 1 << 20), vec![text.to_string()]);
    }

    #[test]
    fn the_first_piece_holds_at_least_the_records_and_lines_asked_for() {
        // A title with commas is a record with cells: alone it would be the first piece.
        let text = "Fees, by country, 2020\n\ncountry,2020\n\"A\nB\",1\nC,2\nD,3\n";
        let records = AtLeast {
            records: 3,
            lines: 0,
        };
        // Blank lines are no records; the quoted line break is one record of two lines.
        assert_eq!(
            cut_first_at_least(text, 1, records),
            vec![
                "Fees, by country, 2020\n\ncountry,2020\n\"A\nB\",1\n",
                "C,2\n",
                "D,3\n"
            ]
        );
        let lines = AtLeast {
            records: 0,
            lines: 6,
        };
        assert_eq!(
            cut_first_at_least(text, 1, lines),
            vec![
                "Fees, by country, 2020\n\ncountry,2020\n\"A\nB\",1\nC,2\n",
                "D,3\n"
            ]
        );
        assert_eq!(AtLeast::first_piece(Some(7)).lines, 8);
    }

    #[test]
    fn a_quote_inside_a_cell_is_a_character_and_pieces_still_end_between_records() {
        // An inch mark in an unquoted cell was taken for an opening quote: the cutter then took
        // the next real quoted cell's line break for the end of a record, and a piece ended
        // inside it (the streamed run failed where the in-memory run read the file).
        let text = "country,year,item\nKOR,2021,5\" screens\n\"a, b\nc\",2020,x\nKOR,2022,y\n";
        let pieces = cut(text, 1);
        assert_eq!(pieces.concat(), text);
        assert_eq!(
            pieces,
            vec![
                "country,year,item\n",
                "KOR,2021,5\" screens\n",
                "\"a, b\nc\",2020,x\n",
                "KOR,2022,y\n"
            ]
        );
    }

    /// Random texts of cells with quotes in every place, and line breaks of every kind: after
    /// each line, the scan stands between records exactly where the csv reader does, and has
    /// counted the records the reader has begun.
    #[test]
    fn the_scan_follows_the_csv_reader() {
        const CELLS: [&str; 12] = [
            "a",
            "",
            " ",
            "\"q\"",
            "\"x,y\"",
            "\"two\nlines\"",
            "5\" screens",
            "\"a\"\"b\"",
            "\"open",
            "\"x\"tail",
            " \"sp\"",
            "\"\r\n\"",
        ];
        let mut numbers = crate::test_numbers::TestNumbers::new(7);
        let mut next = |n: usize| numbers.below(n);
        for case in 0..2000 {
            let mut text = String::new();
            for _ in 0..next(8) + 1 {
                let cells: Vec<&str> = (0..next(4) + 1).map(|_| CELLS[next(CELLS.len())]).collect();
                text.push_str(&cells.join(","));
                text.push_str(["\n", "\r\n", "\n\n", "\r"][next(4)]);
            }
            let bytes = text.as_bytes();
            let mut reader = csv::ReaderBuilder::new()
                .has_headers(false)
                .flexible(true)
                .from_reader(bytes);
            // Where each record's first character is (its position may point at blank lines).
            let starts: Vec<usize> = reader
                .byte_records()
                .map(|r| {
                    let mut at = r.unwrap().position().unwrap().byte() as usize;
                    while at < bytes.len() && matches!(bytes[at], b'\n' | b'\r') {
                        at += 1;
                    }
                    at
                })
                .collect();
            let mut scan = RecordScan::new(b',');
            let mut at = 0;
            for line in text.split_inclusive('\n') {
                scan.line(line.as_bytes());
                at += line.len();
                let begun = starts.iter().filter(|&&s| s < at).count();
                let open = usize::from(scan.state != ScanState::StartRecord);
                assert_eq!(scan.records + open, begun, "case {case}: {text:?} at {at}");
            }
        }
    }
}
