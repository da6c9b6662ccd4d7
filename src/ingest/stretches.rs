//! A large table's records read in parallel. The text below the header is cut at line breaks
//! into one stretch a thread of the pool; each stretch is read on its own thread as if its
//! first line started a record, and the stretches are joined only when joining them gives what
//! one reading from the header gives:
//!
//! - the records are the same: where one stretch ends, the reading of the stretch before it
//!   and the reading of the stretch itself meet at the same record's start (a quoted cell
//!   that runs over the cut would make them start elsewhere; the csv reader holds no state
//!   between records, so from a common start on both read alike);
//! - every record is placed as one reading places it: a stretch before the last ends with no
//!   record held back as a possible note and no footnote block begun;
//! - no record fails its checks and the csv reader fails nowhere, so the first error in the
//!   file is the one reading it in one go finds (the caller reads it again to find it);
//! - no column of the joined records passes 4 GiB.
//!
//! From the first stretch that cannot be joined on, the caller reads the rest in one go, from
//! where the joined ones end; when the first fails, all of it, as it reads a small table.
//! Empty lines between two stretches are counted when they are joined (`Body::append`).

use crate::error::{Error, Result};
use crate::ingest::body::{Body, TableEnd};

/// Text below the header from which it is read in stretches: about 16 MiB a thread of a
/// small machine. Below it the threads would cost more than they give; `--streaming` pieces
/// (16 MiB by default, read two at once) stay below it.
#[cfg(not(test))]
pub(super) const PARALLEL_FROM: usize = 24 << 20;
/// In the unit tests every table of more than a few lines is read in stretches, so that
/// each test of the finder checks them against what it expects of one reading.
#[cfg(test)]
pub(super) const PARALLEL_FROM: usize = 1;

/// The least number of stretches: one a thread, and in the unit tests more (cut in more places).
#[cfg(not(test))]
const STRETCHES_AT_LEAST: usize = 1;
#[cfg(test)]
const STRETCHES_AT_LEAST: usize = 5;

/// What reading a stretch of records left.
#[derive(Default)]
pub(super) struct Stretch {
    /// Where the stretch's first record starts.
    pub(super) first: Option<usize>,
    /// The start and line of the last record read.
    pub(super) last: Option<(usize, usize)>,
    /// Where the first record at or after the stretch's end starts, as this stretch's reading
    /// found it (none at the end of the text).
    pub(super) next: Option<usize>,
    /// The first record that failed its checks.
    pub(super) failed: Option<Error>,
}

/// Stretches joined: their records in one body, the last one's table end, the reading's first
/// and last record so far, and where the rest of the text is to be read in one go (none when
/// every stretch was joined).
pub(super) struct Joined<'a> {
    pub(super) body: Body<'a>,
    pub(super) end: TableEnd,
    pub(super) stretch: Stretch,
    pub(super) resume: Option<usize>,
}

/// Reads the records from byte `from` (the first record below the header) to the end of
/// `text` in stretches, each into a body from `new_body` (`true` for the first) by `read`
/// (`from`, `until`, the body, the table end); the stretches joined as far as joining them
/// gives what one reading gives, or none when the text is small, there is one thread, or the
/// first stretch failed.
pub(super) fn read_joined<'a>(
    text: &str,
    from: usize,
    new_body: impl Fn(bool) -> Body<'a> + Sync,
    read: impl Fn(usize, usize, &mut Body<'a>, &mut TableEnd) -> Result<Stretch> + Sync,
) -> Option<Joined<'a>> {
    use rayon::prelude::*;
    let pool = &polars_core::runtime::THREAD_POOL;
    let cuts = cuts(
        text,
        from,
        pool.current_num_threads().max(STRETCHES_AT_LEAST),
    )?;
    let bounds: Vec<(usize, usize)> = cuts.windows(2).map(|w| (w[0], w[1])).collect();
    let read_one = |(i, &(start, until)): (usize, &(usize, usize))| {
        let mut body = new_body(i == 0);
        let mut end = TableEnd::default();
        let stretch = read(start, until, &mut body, &mut end).ok()?;
        stretch.failed.is_none().then_some((body, end, stretch))
    };
    let read: Vec<Option<_>> =
        pool.install(|| bounds.par_iter().enumerate().map(read_one).collect());
    // The first stretch is one reading's; each next one that meets it is joined. From the
    // first that does not (or failed), the rest is read in one go from where the joined ones
    // end, with their table end.
    let mut read = read.into_iter();
    let (mut body, mut end, mut stretch) = read.next()??;
    let mut resume = None;
    for later in read {
        let meets = |(_, _, later): &(Body, TableEnd, Stretch)| {
            stretch.next == later.first && end.is_clear()
        };
        let Some((later_body, later_end, later)) = later.filter(meets) else {
            resume = stretch.next;
            break;
        };
        body.append(later_body).ok()?;
        #[cfg(test)]
        tests::JOINS.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
        end = later_end;
        stretch.last = later.last.or(stretch.last);
        stretch.next = later.next;
    }
    Some(Joined {
        body,
        end,
        stretch,
        resume,
    })
}

/// Where the stretches start and end: `from`, then one place after a line break for each
/// further thread, then the end of `text`; none when the text is too small or one thread
/// reads it.
fn cuts(text: &str, from: usize, threads: usize) -> Option<Vec<usize>> {
    let bytes = text.as_bytes();
    let len = bytes.len().checked_sub(from)?;
    if threads < 2 || len < PARALLEL_FROM {
        return None;
    }
    let mut cuts = vec![from];
    for k in 1..threads {
        let target = from + len / threads * k;
        let Some(at) = memchr::memchr(b'\n', &bytes[target..]) else {
            break;
        };
        let cut = target + at + 1;
        // A byte-order mark starting a stretch would be read as no part of its first cell.
        if cut > *cuts.last()? && cut < bytes.len() && !text[cut..].starts_with('\u{feff}') {
            cuts.push(cut);
        }
    }
    cuts.push(bytes.len());
    (cuts.len() > 2).then_some(cuts)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Stretches joined to the ones before them, in the unit tests: the comparison with one
    /// reading covers joined stretches, not only readings in one go.
    pub(super) static JOINS: std::sync::atomic::AtomicUsize =
        std::sync::atomic::AtomicUsize::new(0);

    #[test]
    fn stretches_start_after_line_breaks_and_cover_the_text() {
        let line = "Chile,2020,1.5\n";
        let text = line.repeat(10);
        let cuts = cuts(&text, 4, 3).unwrap();
        assert_eq!((cuts[0], *cuts.last().unwrap()), (4, text.len()));
        assert_eq!(cuts.len(), 4);
        for cut in &cuts[1..cuts.len() - 1] {
            assert_eq!(text.as_bytes()[cut - 1], b'\n');
        }
        assert!(cuts.windows(2).all(|w| w[0] < w[1]));
        assert_eq!(super::cuts(&text, 4, 1), None);
        assert_eq!(super::cuts(&text[..PARALLEL_FROM - 1], 0, 2), None);
    }

    /// Random tables with every line the finder treats apart, read in stretches and in one
    /// go: the same table, or the same error.
    #[test]
    fn tables_read_in_stretches_are_the_tables_read_in_one_go() {
        use crate::ingest::table::{find_table, FindOptions};
        const LINES: [&str; 16] = [
            "Chile,2020,1.5",
            "Peru,2021,7",
            "\"Korea, Rep.\",2020,\"1,234\"",
            "\"two\nlines\",2022,3",
            "\"three\n\nlines\",2022,3",
            "",
            ",,",
            "Source: invented",
            "Note, see the text",
            "footnoteSeqID,Footnote",
            "\"stray,2020,5",
            "x,y,z,w",
            "country,year,value",
            "Chile,2020,1.5,,",
            "   ",
            "Bolivia,2019,\"\"\"quoted\"\"\"",
        ];
        let mut numbers = crate::test_numbers::TestNumbers::new(20261205);
        let mut next = |n: usize| numbers.below(n);
        let mut joined = 0;
        for case in 0..3000 {
            let break_with = ["\n", "\r\n", "\r"][next(3)];
            let mut lines = vec!["country,year,value"];
            if next(4) == 0 {
                lines.insert(0, "Fees, invented for this test");
            }
            for _ in 0..next(40) + 2 {
                // Mostly data, so that most tables are read to their end.
                let line = match next(8) {
                    0 => LINES[next(LINES.len())],
                    _ => LINES[next(2)],
                };
                lines.push(line);
            }
            let text = lines.join(break_with) + if next(2) == 0 { break_with } else { "" };
            for lenient in [false, true] {
                let read = |in_one_go| {
                    let options = FindOptions {
                        lenient,
                        in_one_go,
                        ..Default::default()
                    };
                    match find_table(&text, b',', "t.csv", &options) {
                        Ok(table) => format!("{table:?}"),
                        Err(error) => format!("error: {error}"),
                    }
                };
                let (stretched, whole) = (read(false), read(true));
                assert_eq!(stretched, whole, "case {case}, lenient {lenient}: {text:?}");
                joined += !whole.starts_with("error") as usize;
            }
        }
        // Most cases were tables, not errors: the comparison covered the records, and
        // stretches joined, not only tables read again in one go.
        assert!(joined > 2000, "{joined}");
        let joins = JOINS.load(std::sync::atomic::Ordering::Relaxed);
        assert!(joins > 2000, "{joins} stretches joined");
    }
}
