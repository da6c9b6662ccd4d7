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
//! complete. Pieces are read several at once, and written while the next are read. Memory is
//! a few pieces and a bucket, never the file.
//!
//! Inputs: CSV or TSV files in UTF-8 or Windows-1252 (UTF-16, spreadsheets, Parquet and
//! standard input are read whole: run them without `--streaming`). Output: csv to `-o FILE`.
//! Margins of error are refused: their rank intervals and ties need every row at once.

use crate::error::{Error, Result};
use crate::flags::FlagCounts;
use crate::ingest::Asides;
use crate::output::{OutputTable, TextKind};
use crate::pipeline::{self, PipelineSettings};
use crate::report::{self, Format};
use polars::prelude::*;
use std::collections::HashMap;
use std::path::Path;

mod piece;
mod pieces;
mod ranks;
mod write;
use piece::{
    changed_while_read, file_stamp, first_piece, open_pieces, prepare_piece, FirstPiece, PieceRead,
    PieceSize, PieceStart,
};
pub use piece::{StreamRun, StreamingPlan};
use pieces::Pieces;
use ranks::{Input, RankRules, RankSpill};
use write::WritePass;

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

/// The output columns and the steps, as the first piece planned them.
struct Columns {
    head: Vec<String>,
    baseline_steps: Vec<&'static dyn crate::adjust::Step>,
    deflator_used: Option<crate::adjust::Deflator>,
    missing_tables: Vec<crate::reference::Kind>,
}

/// The run needs restarting with `assume_base_rows` (a later piece holds base-currency rows).
struct Restart;

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
        asides,
        rows_before,
        ord,
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

    crate::trace::phase("streaming: first pass read");
    // Ranks, once, bucket by bucket of the ranking partitions.
    let mut ranks = spill.rank(RankRules {
        one_unit: settings.one_unit(),
        order: settings.order,
        baseline_missing: !columns.missing_tables.is_empty(),
    })?;
    crate::trace::phase("streaming: ranked");
    let rows_in = ord as usize;

    // The pieces again, in order, each finished with its slice of the ranks, into the output.
    let all = pipeline::output_columns(&columns.head, settings);
    let order = plan.columns.pick(&all)?;
    let mut write = WritePass {
        plan,
        settings,
        first: &first,
        ranks: &mut ranks,
        order: (order.len() < all.len()).then_some(order.as_slice()),
        sizes: &sizes,
    };
    // The file as the first pass found it, before the second reads it and once it has.
    let unchanged = || match file_stamp(plan.input_label, &stream.path)? == stamp {
        true => Ok(()),
        false => Err(changed_while_read(plan.input_label)),
    };
    unchanged()?;
    let (counts, rows_out) = write.run(
        open_pieces(plan.input_label, stream, settings)?,
        output,
        staging,
    )?;
    unchanged()?;
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
            pieces: sizes.len(),
            data_lines: rows_before,
            rows_in,
            rows_out,
            counts,
            asides,
        },
        &columns,
    );
    Ok(Ok(pipeline::AdjustOutput {
        table: OutputTable::plain(DataFrame::empty()),
        summary,
        streamed_columns: Some((order.len(), all.len())),
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
    /// Each piece's bytes and rows, for the second pass to check that it reads the same (and
    /// how many pieces there are).
    sizes: Vec<PieceSize>,
    /// What the pieces set aside, read leniently or left unresolved, added up in file order.
    asides: Asides,
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
        sizes: Vec::new(),
        asides: Asides::default(),
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
        let breaks: Vec<usize> = cuts.iter().map(|c| c.breaks).collect();
        let first = state.first.as_ref();
        // Row ids are not kept in this pass, so every piece of the batch is read with the
        // batch's row offset (a piece's own is known only once the piece before it is read).
        let rows_before = state.rows_before;
        let read = pieces::in_parallel(cuts, |cut| {
            let start = PieceStart {
                lines_before: cut.lines_before,
                rows_before,
            };
            let seen = piece::digest(&cut.bytes);
            // The columns the ranks need are collected here, on the piece's thread.
            prepare_piece(plan, settings, first, cut.bytes, &start).map(|read| {
                let read = read.map_prepared(|mut prepared| {
                    let frame = rank_frame(&mut prepared);
                    (prepared, frame)
                });
                (read, seen)
            })
        });
        for (read, breaks) in read.into_iter().zip(breaks) {
            // A fault in the table is the run's error: no piece before it had one.
            let (read, seen) = read?;
            let names_pending = state.asides.unresolved_refused(settings.allow_unresolved);
            match read {
                PieceRead::Unresolved(ingested) => {
                    if state.first.is_none() {
                        state.first = Some(first_piece(&ingested, settings, label)?);
                    }
                    state.asides.add(&ingested.asides);
                }
                // After a name that matches nothing, pieces are read for faults and names only.
                _ if names_pending => {}
                PieceRead::FailedLate(error) => return Err(error),
                PieceRead::Prepared((prepared, frame)) => {
                    if let Err(restart) = state.take(*prepared, frame, seen, plan, settings)? {
                        return Ok(Err(restart));
                    }
                }
            }
            state.lines_before += breaks;
        }
    }
    if state.asides.unresolved_refused(settings.allow_unresolved) {
        let names = std::mem::take(&mut state.asides.unresolved);
        return Err(crate::resolve::unresolved_error(
            label,
            names,
            plan.resolver,
        ));
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
        seen: (usize, u64),
        plan: &StreamRun<'_>,
        settings: &PipelineSettings,
    ) -> Result<std::result::Result<(), Restart>> {
        let (state, label) = (self, plan.input_label);
        if prepared.any_base && !settings.assume_base_rows {
            return Ok(Err(Restart));
        }
        let ingested = &prepared.ingested;
        if state.first.is_none() {
            state.first = Some(first_piece(ingested, settings, label)?);
        }
        state.asides.add(&ingested.asides);
        state.shape.get_or_insert_with(|| Columns {
            head: prepared.head_columns.clone(),
            baseline_steps: prepared.baseline_steps.clone(),
            deflator_used: prepared.deflator_used,
            missing_tables: prepared.missing_tables.clone(),
        });
        let (rows, data_lines) = (prepared.rows_in, prepared.ingested.data_lines);
        state.sizes.push(PieceSize::of(&prepared, seen));
        rank_inputs(
            &prepared,
            &frame?,
            &mut state.ids,
            state.ord,
            &mut state.spill,
        )?;
        state.rows_before += data_lines;
        state.ord += rows as u64;
        Ok(Ok(()))
    }
}

/// What the pieces added up to.
struct Tally {
    pieces: usize,
    data_lines: usize,
    rows_in: usize,
    rows_out: usize,
    counts: FlagCounts,
    /// What the pieces set aside, read leniently or left unresolved, added up.
    asides: Asides,
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
) -> crate::model::RunSummary {
    let asides = &tally.asides;
    let mut notes = crate::ingest::summary_notes(&first.notes, first.asides_at, asides);
    let total_lines = tally.data_lines;
    if let Some(read) = notes.first_mut() {
        *read = read.replace(
            &format!(", {} data line(s)", first.data_lines),
            &format!(", {total_lines} data line(s)"),
        );
    }
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
    pipeline::add_warnings(&mut summary, asides.warnings(), &columns.missing_tables);
    summary
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
