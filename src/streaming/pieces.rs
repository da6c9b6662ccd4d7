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
    /// For the first piece: the header search's records and one more (the header is chosen by
    /// the block of figures below it), and the line `--header-row` names.
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
        let mut in_quotes = false;
        let mut field_filled = false;
        let mut filled = 0usize;
        let mut line: Vec<u8> = Vec::new();
        let at_least = std::mem::take(&mut self.at_least);
        let (mut records, mut lines, mut record_empty) = (0usize, 0usize, true);
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
            for &b in &line {
                record_empty &= matches!(b, b'\n' | b'\r');
                match b {
                    b'"' => in_quotes = !in_quotes,
                    b'\n' | b'\r' if !in_quotes => {}
                    b if b == self.delimiter && !in_quotes => {
                        filled += field_filled as usize;
                        field_filled = false;
                    }
                    b' ' | b'\t' => {}
                    _ => field_filled = true,
                }
            }
            piece.extend_from_slice(&line);
            if !in_quotes {
                filled += field_filled as usize;
                let record_has_cells = filled >= 2;
                records += !record_empty as usize;
                field_filled = false;
                filled = 0;
                record_empty = true;
                let enough = records >= at_least.records && lines >= at_least.lines;
                if record_has_cells && enough && piece.len() >= self.target {
                    break;
                }
            }
        }
        Ok((!piece.is_empty()).then_some(piece))
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
}
