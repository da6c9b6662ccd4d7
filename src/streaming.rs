//! `--streaming`: a table larger than memory, adjusted piece by piece, with the same output as
//! the in-memory run, byte for byte.
//!
//! The file is cut into pieces of about `--chunk-mb` megabytes at record boundaries (aware of
//! quotes, and only after a line with two or more filled cells, so no piece ends in what would
//! look like notes below a table). The first piece is read like any table and fixes the
//! delimiter, encoding and column roles for the rest; every later piece is given a copy of the
//! header and keeps its lines' numbers and row ids. The file is read twice. In the first pass
//! each piece goes through the same `pipeline::prepare` as an in-memory run, and only what the
//! ranks need is kept, 41 bytes a row in bucket files beside the output (`ranks`); the ranks are
//! then computed bucket by bucket by the in-memory rules. In the second pass each piece is
//! prepared again, finished with its slice of the ranks by `pipeline::finish` (the in-memory
//! run's own path) and appended to the csv output, which is renamed into place only when
//! complete. Memory is a piece and a bucket, never the file.
//!
//! Inputs: CSV or TSV files in UTF-8 or Windows-1252 (UTF-16, spreadsheets, Parquet and
//! standard input are read whole: run them without `--streaming`). Output: csv to `-o FILE`.
//! Margins of error are refused: their rank intervals and ties need every row at once.

use crate::entity::Resolver;
use crate::error::{Error, Result};
use crate::flags::FlagCounts;
use crate::ingest::encoding::EncodingChoice;
use crate::ingest::table;
use crate::output::{OutputTable, TextKind};
use crate::pipeline::{self, PipelineSettings};
use crate::reference::References;
use crate::report::{self, Format};
use polars::prelude::*;
use std::collections::HashMap;
use std::io::{BufRead, BufReader, Write};
use std::path::{Path, PathBuf};

mod pieces;
mod ranks;
use pieces::Pieces;
use ranks::{Input, RankRules, RankSpill, Ranks};

/// What a streaming run reads and how big its pieces are.
#[derive(Debug, Clone)]
pub struct StreamingPlan {
    pub path: PathBuf,
    pub chunk_bytes: usize,
}

/// Checks that a run can stream, before anything is read.
pub fn check(
    plan_input: &str,
    format: Format,
    output: Option<&Path>,
    settings: &PipelineSettings,
    report: bool,
) -> Result<()> {
    let refuse = |problem: &str, fix: &str| Err(Error::usage(problem.to_string(), fix.to_string()));
    let lower = plan_input.to_ascii_lowercase();
    if plan_input == "-" {
        return refuse(
            "--streaming reads a file, not standard input",
            "save the table to a file and pass its path",
        );
    }
    if lower.ends_with(".parquet") || crate::ingest::spreadsheet::is_spreadsheet(&lower) {
        return refuse(
            "--streaming reads CSV or TSV files; spreadsheets and Parquet files are read whole",
            "run without --streaming, or export the table as CSV",
        );
    }
    if output.is_none() || format != Format::Csv {
        return refuse(
            "--streaming writes csv to a file",
            "pass -o FILE.csv (and no other --format)",
        );
    }
    if settings.intervals.is_some() {
        return refuse(
            "--streaming does not compute margins of error: rank intervals and ties need every row at once",
            "run without --streaming (raise --max-input-mb if needed), or drop the margin options",
        );
    }
    if report {
        return refuse(
            "--streaming does not write the HTML report (it holds every row)",
            "drop --report, or run without --streaming",
        );
    }
    Ok(())
}

/// What the first piece decided for the others.
struct FirstPiece {
    header_line: String,
    settings: PipelineSettings,
    encoding: Option<EncodingChoice>,
    notes: Vec<String>,
    warnings: Vec<String>,
    data_lines: usize,
}

/// The output columns and the steps, as the first piece planned them.
struct Columns {
    head: Vec<String>,
    baseline_steps: Vec<&'static dyn crate::adjust::Step>,
    deflator_used: Option<crate::adjust::Deflator>,
    missing_tables: Vec<crate::reference::Kind>,
}

/// The run needs restarting with `assume_base_rows` (a later piece holds base-currency rows).
struct Restart;

/// What a streamed run reads from the plan (the plan itself lives above this module).
pub struct StreamRun<'a> {
    pub settings: &'a PipelineSettings,
    pub input_label: &'a str,
    pub resolver: &'a Resolver,
    pub references: Option<&'a References>,
    pub output_path: Option<&'a Path>,
    pub rounding: crate::format::Rounding,
    pub guard_formulas: bool,
    pub columns: &'a crate::model::ColumnSet,
}

/// Runs the table in pieces; the csv is staged in `staging`, to be renamed into place with the
/// run's other outputs.
pub fn execute(
    plan: &StreamRun<'_>,
    stream: &StreamingPlan,
    staging: &mut report::Staging,
) -> Result<pipeline::AdjustOutput> {
    let mut settings = plan.settings.clone();
    loop {
        match run(plan, stream, &settings, staging)? {
            Ok(output) => return Ok(output),
            Err(Restart) => settings.assume_base_rows = true,
        }
    }
}

fn run(
    plan: &StreamRun<'_>,
    stream: &StreamingPlan,
    settings: &PipelineSettings,
    staging: &mut report::Staging,
) -> Result<std::result::Result<pipeline::AdjustOutput, Restart>> {
    let output = plan
        .output_path
        .ok_or_else(|| Error::usage("--streaming writes csv to a file", "pass -o FILE.csv"))?;
    let stamp = file_stamp(plan.input_label, &stream.path)?;
    let pieces = open_pieces(plan.input_label, stream, settings)?;
    let read = match read_rank_inputs(plan, pieces, settings, RankSpill::new(output)?)? {
        Ok(read) => read,
        Err(Restart) => return Ok(Err(Restart)),
    };
    let FirstPass {
        first: Some(first),
        shape: Some(columns),
        spill,
        later_notes,
        rows_before,
        ord,
        pieces,
        sizes,
        ..
    } = read
    else {
        return Err(Error::bad_input(
            crate::error::Location::file(plan.input_label),
            "the file is empty",
            "a header line naming the columns, then one line per figure",
            "check that the right file was given",
        ));
    };

    // Ranks, once, bucket by bucket of the ranking partitions.
    let mut ranks = spill.rank(RankRules {
        one_unit: settings.one_unit(),
        order: settings.order,
        baseline_missing: !columns.missing_tables.is_empty(),
    })?;
    let rows_in = ord as usize;

    // The pieces again, in order, each finished with its slice of the ranks, into the output.
    let all = pipeline::output_columns(&columns.head, settings);
    let order = plan.columns.pick(&all)?;
    let column_note = plan.columns.describe(order.len(), all.len());
    let mut write = WritePass {
        plan,
        settings,
        first: &first,
        ranks: &mut ranks,
        order: (order.len() < all.len()).then_some(order.as_slice()),
        sizes: &sizes,
    };
    if file_stamp(plan.input_label, &stream.path)? != stamp {
        return Err(changed_while_read(plan.input_label));
    }
    let (counts, rows_out) = write.run(
        open_pieces(plan.input_label, stream, settings)?,
        output,
        staging,
    )?;
    if file_stamp(plan.input_label, &stream.path)? != stamp {
        return Err(changed_while_read(plan.input_label));
    }
    if rows_out != rows_in {
        return Err(Error::engine("checking that no row was lost")(polars_err!(
            ComputeError: "{} rows in, {} rows out", rows_in, rows_out
        )));
    }

    let summary = streamed_summary(
        plan,
        stream,
        settings,
        &first,
        Tally {
            pieces,
            data_lines: rows_before,
            rows_in,
            rows_out,
            counts,
        },
        &columns,
        later_notes.into_iter().chain(column_note).collect(),
    );
    Ok(Ok(pipeline::AdjustOutput {
        table: OutputTable::plain(DataFrame::empty()),
        summary,
    }))
}

/// What the first pass over the pieces leaves: the rank inputs of every row, spilled by
/// bucket, and what the first piece decided.
struct FirstPass {
    first: Option<FirstPiece>,
    shape: Option<Columns>,
    spill: RankSpill,
    /// Group, entity and unit texts as small numbers, the same in every piece's rank inputs.
    ids: TextIds,
    lines_before: usize,
    rows_before: usize,
    ord: u64,
    pieces: usize,
    /// Each piece's bytes and rows, for the second pass to check that it reads the same.
    sizes: Vec<PieceSize>,
    /// Later pieces' notes of rows set aside (the first piece's notes are in `first`).
    later_notes: Vec<String>,
}

/// Texts numbered for the rank inputs, the same number for the same text in every piece.
#[derive(Default)]
struct TextIds {
    groups: HashMap<String, u32>,
    entities: HashMap<String, u32>,
    units: HashMap<String, u32>,
}

impl TextIds {
    fn id(ids: &mut HashMap<String, u32>, text: &str) -> u32 {
        if let Some(&id) = ids.get(text) {
            return id;
        }
        let next = ids.len() as u32;
        ids.insert(text.to_string(), next);
        next
    }
}

/// A piece read with what the first piece decided (`first`, none for the first piece itself).
fn prepare_piece(
    plan: &StreamRun<'_>,
    settings: &PipelineSettings,
    first: Option<&FirstPiece>,
    bytes: Vec<u8>,
    start: &PieceStart,
) -> Result<pipeline::Prepared> {
    match first {
        None => pipeline::prepare(
            bytes.into(),
            plan.input_label,
            settings,
            plan.resolver,
            plan.references,
        ),
        Some(f) => prepare_later_piece(plan, f, bytes, start),
    }
}

/// The first pass: every piece prepared like an in-memory table and its rank inputs kept;
/// `Restart` when a piece holds base-currency rows that the first piece's columns did not
/// plan for.
fn read_rank_inputs(
    plan: &StreamRun<'_>,
    mut pieces: Pieces<std::fs::File>,
    settings: &PipelineSettings,
    spill: RankSpill,
) -> Result<std::result::Result<FirstPass, Restart>> {
    let label = plan.input_label;
    let mut state = FirstPass {
        first: None,
        shape: None,
        spill,
        ids: TextIds::default(),
        lines_before: 0,
        rows_before: 0,
        ord: 0,
        pieces: 0,
        sizes: Vec::new(),
        later_notes: Vec::new(),
    };
    loop {
        // The first piece alone (it decides for the others), then several at once.
        let count = match state.first {
            None => 1,
            Some(_) => pieces::pieces_at_once(),
        };
        let cuts = pieces.next_cuts(label, count, state.lines_before)?;
        if cuts.is_empty() {
            break;
        }
        let sizes: Vec<(usize, usize)> = cuts.iter().map(|c| (c.bytes.len(), c.breaks)).collect();
        let first = state.first.as_ref();
        // Row ids are not kept in this pass, so every piece of the batch is read with the
        // batch's row offset (a piece's own is known only once the piece before it is read).
        let (rows_before, ord) = (state.rows_before, state.ord);
        let prepared = pieces::in_parallel(cuts, |cut| {
            let start = PieceStart {
                lines_before: cut.lines_before,
                rows_before,
                ord,
            };
            prepare_piece(plan, settings, first, cut.bytes, &start).map(|mut prepared| {
                let frame = rank_frame(&mut prepared);
                (prepared, frame)
            })
        });
        for (prepared, (size, breaks)) in prepared.into_iter().zip(sizes) {
            let (prepared, frame) = prepared?;
            if let Err(restart) = state.take(prepared, frame, size, breaks, plan, settings)? {
                return Ok(Err(restart));
            }
        }
    }
    Ok(Ok(state))
}

impl FirstPass {
    /// Keeps a prepared piece's rank inputs (`frame`: `rank_frame`), in the file's order;
    /// `Restart` when it holds base-currency rows that the first piece's columns did not plan
    /// for.
    fn take(
        &mut self,
        prepared: pipeline::Prepared,
        frame: Result<DataFrame>,
        size: usize,
        breaks: usize,
        plan: &StreamRun<'_>,
        settings: &PipelineSettings,
    ) -> Result<std::result::Result<(), Restart>> {
        let (state, label) = (self, plan.input_label);
        if prepared.any_base && !settings.assume_base_rows {
            return Ok(Err(Restart));
        }
        let ingested = &prepared.ingested;
        match &state.first {
            None => state.first = Some(first_piece(ingested, settings, label)?),
            Some(_) => state.later_notes.extend(
                ingested
                    .notes
                    .iter()
                    .filter(|n| n.starts_with("set aside"))
                    .cloned(),
            ),
        }
        state.shape.get_or_insert_with(|| Columns {
            head: prepared.head_columns.clone(),
            baseline_steps: prepared.baseline_steps.clone(),
            deflator_used: prepared.deflator_used,
            missing_tables: prepared.missing_tables.clone(),
        });
        let (rows, data_lines) = (prepared.rows_in, prepared.ingested.data_lines);
        state.sizes.push(PieceSize::of(&prepared, size));
        rank_inputs(
            &prepared,
            &frame?,
            &mut state.ids,
            state.ord,
            &mut state.spill,
        )?;
        state.lines_before += breaks;
        state.rows_before += data_lines;
        state.ord += rows as u64;
        state.pieces += 1;
        Ok(Ok(()))
    }
}

/// The second pass: the pieces read again as the first pass read them, each finished like an
/// in-memory table with its slice of the whole file's ranks, and written in order.
struct WritePass<'a> {
    plan: &'a StreamRun<'a>,
    settings: &'a PipelineSettings,
    first: &'a FirstPiece,
    ranks: &'a mut Ranks,
    /// The output columns asked for, when not every one (`--write-columns`).
    order: Option<&'a [String]>,
    /// Each piece's bytes and rows as the first pass read them.
    sizes: &'a [PieceSize],
}

impl WritePass<'_> {
    /// Writes every piece into one csv staged at `output`; the flag counts and rows written.
    /// The pieces are prepared on this thread while another writes those already finished.
    fn run(
        &mut self,
        pieces: Pieces<std::fs::File>,
        output: &Path,
        staging: &mut report::Staging,
    ) -> Result<(FlagCounts, usize)> {
        let temp = report::temp_beside(output)?;
        let mut buffered = std::io::BufWriter::with_capacity(1 << 20, temp);
        let (rounding, guard) = (self.plan.rounding, self.plan.guard_formulas);
        // One finished table waits while another is written: more only held memory (measured).
        let (tables, finished) = std::sync::mpsc::sync_channel(1);
        let (written, prepared) = std::thread::scope(|scope| {
            let out = &mut buffered;
            let writer = scope.spawn(move || write_tables(finished, rounding, guard, out));
            // `tables` moves in, so the writer stops once the last table is sent or a piece fails.
            let prepared = self.finish_pieces(pieces, tables);
            match writer.join() {
                Ok(written) => (written, prepared),
                Err(panic) => std::panic::resume_unwind(panic),
            }
        });
        // The writer's error first: it is about an earlier piece than any this thread read.
        let (counts, written) = written?;
        let rows = prepared?;
        if written != self.sizes.len() {
            return Err(changed_while_read(self.plan.input_label));
        }
        buffered
            .flush()
            .map_err(|e| Error::io(output.display(), "write the output", e))?;
        let temp = buffered
            .into_inner()
            .map_err(|e| Error::io(output.display(), "write the output", e.into_error()))?;
        staging.file(temp, output);
        Ok((counts, rows))
    }

    /// Reads the pieces again, several at once, finishes each with its ranks and sends its
    /// table to the writer, in order; the rows sent.
    fn finish_pieces(
        &mut self,
        mut pieces: Pieces<std::fs::File>,
        tables: std::sync::mpsc::SyncSender<OutputTable>,
    ) -> Result<usize> {
        let mut start = PieceStart {
            lines_before: 0,
            rows_before: 0,
            ord: 0,
        };
        let label = self.plan.input_label;
        let mut piece = 0;
        loop {
            let cuts = pieces.next_cuts(label, pieces::pieces_at_once(), start.lines_before)?;
            if cuts.is_empty() {
                return Ok(start.ord as usize);
            }
            // Each piece's place in the file and its ranks, from what the first pass read.
            let mut jobs = Vec::with_capacity(cuts.len());
            for cut in cuts {
                let at = piece + jobs.len();
                let expected = match self.sizes.get(at) {
                    Some(size) if size.bytes == cut.bytes.len() => *size,
                    _ => return Err(changed_while_read(label)),
                };
                let ranks = self.ranks.slice(start.ord, expected.rows)?;
                let piece_start = PieceStart {
                    lines_before: cut.lines_before,
                    ..start
                };
                start.lines_before += cut.breaks;
                start.rows_before += expected.data_lines;
                start.ord += expected.rows as u64;
                jobs.push((at, cut, piece_start, ranks, expected));
            }
            let (plan, settings, first, order) = (self.plan, self.settings, self.first, self.order);
            let finished = pieces::in_parallel(jobs, |(at, cut, start, ranks, expected)| {
                let first = (at > 0).then_some(first);
                let mut prepared = prepare_piece(plan, settings, first, cut.bytes, &start)?;
                if PieceSize::of(&prepared, expected.bytes) != expected {
                    return Err(changed_while_read(label));
                }
                let table = pipeline::finish(&mut prepared, settings, Some(ranks))?;
                match order {
                    Some(order) => table.select(order),
                    None => Ok(table),
                }
            });
            for table in finished {
                if tables.send(table?).is_err() {
                    // The writer failed: its error is the run's.
                    return Ok(start.ord as usize);
                }
                piece += 1;
            }
        }
    }
}

/// Writes the tables it is sent into `out`, in order, the header with the first; the flag
/// counts and how many tables were written.
fn write_tables(
    tables: std::sync::mpsc::Receiver<OutputTable>,
    rounding: crate::format::Rounding,
    guard: bool,
    out: &mut dyn Write,
) -> Result<(FlagCounts, usize)> {
    let mut counts = FlagCounts::default();
    let mut written = 0;
    for table in tables {
        counts.add(table.flag_counts()?);
        report::write_csv(&table, rounding, written == 0, guard, &mut *out)?;
        written += 1;
    }
    Ok((counts, written))
}

/// What the pieces added up to.
struct Tally {
    pieces: usize,
    data_lines: usize,
    rows_in: usize,
    rows_out: usize,
    counts: FlagCounts,
}

/// The run summary of a streamed run: the first piece's notes with the whole file's count of
/// data lines, the notes of later pieces, and how the file was cut.
fn streamed_summary(
    plan: &StreamRun<'_>,
    stream: &StreamingPlan,
    settings: &PipelineSettings,
    first: &FirstPiece,
    tally: Tally,
    columns: &Columns,
    more_notes: Vec<String>,
) -> crate::model::RunSummary {
    let mut notes = first.notes.clone();
    let total_lines = tally.data_lines;
    if let Some(read) = notes.first_mut() {
        *read = read.replace(
            &format!(", {} data line(s)", first.data_lines),
            &format!(", {total_lines} data line(s)"),
        );
    }
    notes.extend(more_notes);
    notes.push(format!(
        "streaming: read in {} piece(s) of about {:.2} MB; ranks computed once over the whole table",
        tally.pieces,
        stream.chunk_bytes as f64 / (1 << 20) as f64
    ));
    let mut summary = pipeline::summarize(
        tally.counts,
        plan.input_label,
        notes,
        tally.rows_in,
        tally.rows_out,
        settings,
        &columns.baseline_steps,
        columns.deflator_used,
        plan.references,
    );
    summary
        .warnings
        .extend(pipeline::missing_tables_warning(&columns.missing_tables));
    summary
        .warnings
        .splice(0..0, first.warnings.iter().cloned());
    summary
}

/// The input opened for cutting into pieces, with its delimiter (UTF-16 is refused: its
/// pieces cannot be cut at byte boundaries found by line breaks).
/// A piece's length in bytes, its table rows and its data lines, as a pass read it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct PieceSize {
    bytes: usize,
    rows: usize,
    data_lines: usize,
}

impl PieceSize {
    fn of(prepared: &pipeline::Prepared, bytes: usize) -> PieceSize {
        PieceSize {
            bytes,
            rows: prepared.rows_in,
            data_lines: prepared.ingested.data_lines,
        }
    }
}

/// The file's length and time of last change: the two passes must read the same file.
fn file_stamp(label: &str, path: &Path) -> Result<(u64, Option<std::time::SystemTime>)> {
    let meta = std::fs::metadata(path).map_err(|e| Error::io(label, "read", e))?;
    Ok((meta.len(), meta.modified().ok()))
}

/// The error of a file that changed between (or during) the two passes: the ranks of the
/// first would not be those of the rows the second writes.
fn changed_while_read(label: &str) -> Error {
    Error::bad_input(
        crate::error::Location::file(label),
        "the file changed while --streaming read it (it is read twice, and the two readings differ)",
        "a file that nothing writes to during the run",
        "run again once the file is complete, or copy it first and stream the copy",
    )
}

fn open_pieces(
    label: &str,
    stream: &StreamingPlan,
    settings: &PipelineSettings,
) -> Result<Pieces<std::fs::File>> {
    let file = std::fs::File::open(&stream.path).map_err(|e| Error::io(label, "open", e))?;
    let mut reader = BufReader::with_capacity(1 << 20, file);
    let delimiter = {
        let peek = reader.fill_buf().map_err(|e| Error::io(label, "read", e))?;
        let forced_utf16 = matches!(
            settings.ingest.encoding,
            Some(EncodingChoice::Utf16Le | EncodingChoice::Utf16Be)
        );
        if forced_utf16 || peek.starts_with(&[0xFF, 0xFE]) || peek.starts_with(&[0xFE, 0xFF]) {
            return Err(Error::usage(
                format!("{label} is UTF-16, which --streaming cannot cut into pieces"),
                "re-save the table as UTF-8, or run without --streaming",
            ));
        }
        match settings.ingest.delimiter {
            Some(d) => d,
            None if label.ends_with(".tsv") || label.ends_with(".tab") => b'\t',
            None => table::sniff_delimiter(&String::from_utf8_lossy(peek)),
        }
    };
    Ok(Pieces {
        reader,
        delimiter,
        target: stream.chunk_bytes.max(1),
        finished: false,
    })
}

/// Where a piece starts in the whole file.
struct PieceStart {
    lines_before: usize,
    rows_before: usize,
    ord: u64,
}

/// A piece after the first, read with the first piece's header, delimiter, encoding and roles,
/// its lines and row ids those of the whole file.
fn prepare_later_piece(
    plan: &StreamRun<'_>,
    first: &FirstPiece,
    bytes: Vec<u8>,
    start: &PieceStart,
) -> Result<pipeline::Prepared> {
    let text = match first.encoding {
        Some(EncodingChoice::Windows1252) => {
            encoding_rs::WINDOWS_1252.decode(&bytes).0.into_owned()
        }
        _ => String::from_utf8(bytes).map_err(|e| {
            Error::bad_input(
                crate::error::Location::line(
                    plan.input_label,
                    start.lines_before
                        + 1
                        + table::count_line_breaks(&e.as_bytes()[..e.utf8_error().valid_up_to()]),
                ),
                "bytes that are not valid UTF-8 (the first piece of the file was UTF-8)",
                "text in one encoding",
                "re-save the file as UTF-8, or pass --encoding windows-1252 if it is a legacy file",
            )
        })?,
    };
    let mut piece_settings = first.settings.clone();
    piece_settings.ingest.line_offset = start.lines_before.saturating_sub(1);
    piece_settings.ingest.row_offset = start.rows_before;
    let piece = format!("{}\n{text}", first.header_line);
    pipeline::prepare(
        piece.into_bytes().into(),
        plan.input_label,
        &piece_settings,
        plan.resolver,
        plan.references,
    )
}

/// What the first piece decided, for reading the others as it was read.
fn first_piece(
    ingested: &crate::ingest::Ingested,
    settings: &PipelineSettings,
    label: &str,
) -> Result<FirstPiece> {
    let mut piece_settings = settings.clone();
    piece_settings.ingest.delimiter = Some(ingested.delimiter);
    piece_settings.ingest.encoding = Some(EncodingChoice::Utf8);
    piece_settings.ingest.roles = crate::ingest::layout::RoleFlags {
        reserved: settings.ingest.roles.reserved.clone(),
        ..ingested.roles_used.clone()
    };
    if ingested.dimensioned {
        return Err(Error::usage(
            format!("{label} is a statistics-office TSV (dimension codes joined in its first column), which --streaming does not cut into pieces"),
            "run without --streaming",
        ));
    }
    if ingested
        .encoding
        .is_some_and(|e| matches!(e, EncodingChoice::Utf16Le | EncodingChoice::Utf16Be))
    {
        return Err(Error::usage(
            format!("{label} is UTF-16, which --streaming cannot cut into pieces"),
            "re-save the table as UTF-8, or run without --streaming",
        ));
    }
    Ok(FirstPiece {
        header_line: header_line(&ingested.headers, ingested.delimiter)?,
        settings: piece_settings,
        encoding: ingested.encoding,
        notes: ingested.notes.clone(),
        warnings: ingested.warnings.clone(),
        data_lines: ingested.data_lines,
    })
}

/// The header as a CSV line in `delimiter`, quoted where needed.
fn header_line(headers: &[String], delimiter: u8) -> Result<String> {
    let mut writer = csv::WriterBuilder::new()
        .delimiter(delimiter)
        .terminator(csv::Terminator::Any(b'\n'))
        .from_writer(Vec::new());
    writer.write_record(headers).map_err(|e| {
        Error::io(
            "a piece header",
            "write",
            std::io::Error::other(e.to_string()),
        )
    })?;
    let bytes = writer.into_inner().map_err(|e| {
        Error::io(
            "a piece header",
            "write",
            std::io::Error::other(e.to_string()),
        )
    })?;
    Ok(String::from_utf8_lossy(&bytes)
        .trim_end_matches('\n')
        .to_string())
}

/// The columns of a prepared piece that its ranks need (its plan collected: the factors and
/// both tracks).
fn rank_frame(prepared: &mut pipeline::Prepared) -> Result<DataFrame> {
    std::mem::take(&mut prepared.lf)
        .select([
            col("_rank_eligible"),
            col("year"),
            col("_unit"),
            col("value_baseline"),
            col("value_adjusted"),
        ])
        .collect()
        .map_err(Error::engine("collecting what ranks need"))
}

/// What ranks need of a piece's rows (numbered from `ord`): the entity, group and unit as
/// numbers shared by every piece, the year, the eligibility and the two values (none where the
/// row is not eligible), from its `rank_frame`, appended to `spill`.
fn rank_inputs(
    prepared: &pipeline::Prepared,
    frame: &DataFrame,
    ids: &mut TextIds,
    ord: u64,
    spill: &mut RankSpill,
) -> Result<()> {
    let engine = || Error::engine("collecting what ranks need");
    let column = |name: &str| frame.column(name).map_err(engine());
    let eligible = column("_rank_eligible")?.bool().map_err(engine())?;
    let years = column("year")?.i32().map_err(engine())?;
    let units = column("_unit")?.str().map_err(engine())?;
    let baseline = column("value_baseline")?.f64().map_err(engine())?;
    let adjusted = column("value_adjusted")?.f64().map_err(engine())?;
    let texts = &prepared.texts;
    let mut text = String::new();
    let mut number = |kind: TextKind, row: usize, ids: &mut HashMap<String, u32>| {
        text.clear();
        texts
            .push(kind, row, &mut text)
            .then(|| TextIds::id(ids, &text))
    };
    for row in 0..texts.len() {
        // Only eligibility here: the ranks themselves decide whether a baseline is required.
        let ok = eligible.get(row).unwrap_or(false);
        spill.add(&Input {
            row: ord + row as u64,
            group: number(TextKind::Group, row, &mut ids.groups),
            entity: number(TextKind::EntityCode, row, &mut ids.entities)
                .or_else(|| number(TextKind::EntityInput, row, &mut ids.entities)),
            unit: units.get(row).map(|u| TextIds::id(&mut ids.units, u)),
            year: years.get(row),
            eligible: ok,
            baseline: baseline.get(row).filter(|_| ok),
            adjusted: adjusted.get(row).filter(|_| ok),
        })?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_piece_header_is_quoted_where_needed() {
        let line = header_line(&["country".into(), "2019, est.".into()], b',').unwrap();
        assert_eq!(line, "country,\"2019, est.\"");
    }
}
