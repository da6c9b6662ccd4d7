//! The second pass of `--streaming`: the pieces read again as the first pass read them (their
//! bytes, rows and data lines checked against it), several at once, each finished like an
//! in-memory table with its slice of the whole file's ranks, and written in order by a thread
//! of its own while the next pieces are read.

use super::piece::{
    changed_while_read, prepare_piece, FirstPiece, PieceSize, PieceStart, StreamRun,
};
use super::pieces::{self, Pieces};
use super::ranks::Ranks;
use crate::error::{Error, Result};
use crate::flags::FlagCounts;
use crate::model::PipelineSettings;
use crate::output::OutputTable;
use crate::pipeline;
use crate::report;
use std::io::Write;
use std::path::Path;

/// The second pass: the pieces read again as the first pass read them, each finished like an
/// in-memory table with its slice of the whole file's ranks, and written in order.
pub(super) struct WritePass<'a> {
    pub(super) plan: &'a StreamRun<'a>,
    pub(super) settings: &'a PipelineSettings,
    pub(super) first: &'a FirstPiece,
    pub(super) ranks: &'a mut Ranks,
    /// The output columns asked for, when not every one (`--write-columns`).
    pub(super) order: Option<&'a [String]>,
    /// Each piece's bytes and rows as the first pass read them.
    pub(super) sizes: &'a [PieceSize],
}

impl WritePass<'_> {
    /// Writes every piece into one csv staged at `output`; the flag counts and rows written.
    /// The pieces are prepared on this thread while another writes those already finished.
    pub(super) fn run(
        &mut self,
        pieces: Pieces<std::fs::File>,
        output: &Path,
        staging: &mut report::Staging,
    ) -> Result<(FlagCounts, usize)> {
        let temp = report::temp_beside(output)?;
        let mut buffered = std::io::BufWriter::with_capacity(1 << 20, temp);
        let mut writer = TableWriter {
            rounding: self.plan.rounding,
            guard: self.plan.guard_formulas,
            counts: FlagCounts::default(),
            written: 0,
            rows: 0,
        };
        let (written, prepared) = if crate::csv_writer::on_the_pool() {
            // A batch job: a writer thread would format on the pool while this thread, waiting
            // to hand it a table, holds a thread of it. So the pieces are written in turn.
            let mut failed = None;
            let prepared = self.finish_pieces(pieces, |table| {
                failed = writer.write(&table, &mut buffered).err();
                failed.is_none()
            });
            (failed.map_or(Ok(()), Err), prepared)
        } else {
            // One finished table waits while another is written: more only held memory
            // (measured).
            let (tables, finished) = std::sync::mpsc::sync_channel::<OutputTable>(1);
            std::thread::scope(|scope| {
                let out = &mut buffered;
                let writer = scope.spawn(|| {
                    finished
                        .into_iter()
                        .try_for_each(|table| writer.write(&table, out))
                });
                // `tables` moves in: the writer stops once the last table is sent, or a piece
                // failed.
                let prepared = self.finish_pieces(pieces, move |table| tables.send(table).is_ok());
                match writer.join() {
                    Ok(written) => (written, prepared),
                    Err(panic) => std::panic::resume_unwind(panic),
                }
            })
        };
        // The writer's error first: it is about an earlier piece than any this thread read.
        written?;
        prepared?;
        if writer.written != self.sizes.len() {
            return Err(changed_while_read(self.plan.input_label));
        }
        buffered
            .flush()
            .map_err(|e| Error::io(output.display(), "write the output", e))?;
        let temp = buffered
            .into_inner()
            .map_err(|e| Error::io(output.display(), "write the output", e.into_error()))?;
        staging.file(temp, output);
        Ok((writer.counts, writer.rows))
    }

    /// Reads the pieces again, several at once, finishes each with its ranks and hands its
    /// table to `write`, in order (which says whether to go on).
    fn finish_pieces(
        &mut self,
        mut pieces: Pieces<std::fs::File>,
        mut write: impl FnMut(OutputTable) -> bool,
    ) -> Result<()> {
        let mut start = PieceStart {
            lines_before: 0,
            rows_before: 0,
        };
        // The table rows before the piece: where its slice of the ranks starts.
        let mut ord = 0u64;
        let label = self.plan.input_label;
        let mut piece = 0;
        loop {
            let cuts = pieces.next_cuts(label, pieces::pieces_at_once(), start.lines_before)?;
            if cuts.is_empty() {
                return Ok(());
            }
            // Each piece's place in the file and its ranks, from what the first pass read.
            let mut jobs = Vec::with_capacity(cuts.len());
            for cut in cuts {
                let at = piece + jobs.len();
                let Some(&expected) = self.sizes.get(at) else {
                    return Err(changed_while_read(label));
                };
                let ranks = self.ranks.slice(ord, expected.rows)?;
                let piece_start = PieceStart {
                    lines_before: cut.lines_before,
                    ..start
                };
                start.lines_before += cut.breaks;
                start.rows_before += expected.data_lines;
                ord += expected.rows as u64;
                jobs.push((at, cut, piece_start, ranks, expected));
            }
            let (plan, settings, first, order) = (self.plan, self.settings, self.first, self.order);
            let finished = pieces::in_parallel(jobs, |(at, cut, start, ranks, expected)| {
                let first = (at > 0).then_some(first);
                let seen = super::piece::digest(&cut.bytes);
                if seen != (expected.bytes, expected.digest) {
                    return Err(changed_while_read(label));
                }
                let mut prepared =
                    prepare_piece(plan, settings, first, cut.bytes, &start)?.prepared()?;
                if PieceSize::of(&prepared, seen) != expected {
                    return Err(changed_while_read(label));
                }
                let table = pipeline::finish(&mut prepared, settings, Some(ranks))?;
                match order {
                    Some(order) => table.select(order),
                    None => Ok(table),
                }
            });
            for table in finished {
                if !write(table?) {
                    // The writer failed: its error is the run's.
                    return Ok(());
                }
                piece += 1;
            }
        }
    }
}

/// Writes tables into the output in order, the header with the first, and counts them, their
/// rows and their flags.
struct TableWriter {
    rounding: crate::format::Rounding,
    guard: bool,
    counts: FlagCounts,
    written: usize,
    rows: usize,
}

impl TableWriter {
    fn write(&mut self, table: &OutputTable, out: &mut dyn Write) -> Result<()> {
        self.counts.add(table.flag_counts()?);
        report::write_csv(table, self.rounding, self.written == 0, self.guard, out)?;
        self.written += 1;
        self.rows += table.height();
        Ok(())
    }
}
