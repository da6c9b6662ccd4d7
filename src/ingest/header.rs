//! Finding the header of a text table by structure: the line the user forced, the line that
//! names the columns given, or the line that heads the longest block of lines holding figures.
//! `Raw` is a record before the table is known.

use crate::cells::number::{self, Cell, NumberStyle};
use crate::cells::words::shorten;
use crate::error::{Error, Location, Result};
use crate::ingest::record::{Cells, Fields};

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
    /// Read the table's records in one go, never in stretches on several threads (the
    /// reading that the stretches are checked against).
    pub in_one_go: bool,
}

/// Records searched for the header, and records looked at below each candidate.
pub const HEADER_SEARCH: usize = 1000;
const BLOCK_WINDOW: usize = 200;

/// What a cell holds, as far as finding the table is concerned.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) enum CellClass {
    Empty,
    Year,
    Number,
    Text,
}

pub(super) fn classify(cell: &str) -> CellClass {
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

/// A record being read: its line and where it lies in the text.
#[derive(Debug, Clone, Copy)]
pub(super) struct Spot {
    pub(super) line: usize,
    pub(super) start: usize,
    pub(super) end: usize,
}

/// One parsed record before the table is known.
pub(super) struct Raw {
    pub(super) line: usize,
    /// Byte range of the record in the text (for cutting a runaway quote into lines).
    pub(super) start: usize,
    pub(super) end: usize,
    pub(super) record: Cells,
}

impl Raw {
    pub(super) fn spot(&self) -> Spot {
        Spot {
            line: self.line,
            start: self.start,
            end: self.end,
        }
    }

    pub(super) fn filled(&self) -> usize {
        self.record.filled()
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
    pub(super) fn text(&self, delimiter: u8) -> String {
        let joined = self
            .record
            .iter()
            .collect::<Vec<_>>()
            .join(&(delimiter as char).to_string());
        shorten(joined.trim_end_matches(delimiter as char).trim())
    }
}

/// The header: the line the user forced, the line naming the given columns, or the line that
/// heads the longest block of figures (the nearest such line above the block).
pub(super) fn choose_header(
    all: &[Raw],
    options: &FindOptions,
    file: &str,
) -> Result<(usize, String)> {
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
