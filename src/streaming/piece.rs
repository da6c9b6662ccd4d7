//! One piece of a streamed file: where it starts, what the first piece decided for the others,
//! how it is read (`prepare_piece`, the in-memory run's `pipeline::prepare` on the piece's text
//! with the first piece's header, encoding and roles), and the checks that both passes read
//! the same file. Shared by the two passes (`super`, `write`).

use super::pieces::{AtLeast, Pieces};
use crate::entity::Resolver;
use crate::error::{Error, Result};
use crate::ingest::encoding::EncodingChoice;
use crate::ingest::table;
use crate::pipeline::{self, PipelineSettings};
use crate::reference::References;
use std::io::{BufRead, BufReader};
use std::path::{Path, PathBuf};

/// What a streaming run reads and how big its pieces are.
#[derive(Debug, Clone)]
pub struct StreamingPlan {
    pub path: PathBuf,
    pub chunk_bytes: usize,
}

/// What the first piece decided for the others.
pub(super) struct FirstPiece {
    pub(super) header_line: String,
    pub(super) settings: PipelineSettings,
    pub(super) encoding: Option<EncodingChoice>,
    /// The first piece's notes, and where the asides' notes go among them.
    pub(super) notes: Vec<String>,
    pub(super) asides_at: usize,
    pub(super) data_lines: usize,
}

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

/// A piece as it was read: prepared like an in-memory table (`P`, a `Prepared` or what a pass
/// made of one), or not.
pub(super) enum PieceRead<P = Box<pipeline::Prepared>> {
    /// Prepared like an in-memory table.
    Prepared(P),
    /// Read, with names that match nothing (and no `--allow-unresolved`), and prepared no
    /// further: a whole-file reading tells every such name after every fault in the table
    /// and before any later error, so the run's error waits until every piece is read.
    Unresolved(Box<crate::ingest::Ingested>),
    /// Failed after its entities were resolved: the run's error unless a piece before it has
    /// names that match nothing.
    FailedLate(Error),
}

impl<P> PieceRead<P> {
    /// The prepared piece turned into what `made` makes of it.
    pub(super) fn map_prepared<Q>(self, made: impl FnOnce(P) -> Q) -> PieceRead<Q> {
        match self {
            PieceRead::Prepared(prepared) => PieceRead::Prepared(made(prepared)),
            PieceRead::Unresolved(ingested) => PieceRead::Unresolved(ingested),
            PieceRead::FailedLate(error) => PieceRead::FailedLate(error),
        }
    }
}

impl PieceRead {
    /// The piece prepared; a piece read once the first pass has found no unresolved name
    /// (the second pass) has none.
    pub(super) fn prepared(self) -> Result<pipeline::Prepared> {
        match self {
            PieceRead::Prepared(prepared) => Ok(*prepared),
            PieceRead::FailedLate(error) => Err(error),
            PieceRead::Unresolved(_) => Err(Error::engine("reading a piece again")(
                polars::prelude::polars_err!(
                    ComputeError: "names unresolved in the second pass that the first did not find"
                ),
            )),
        }
    }
}

/// A piece read with what the first piece decided (`first`, none for the first piece itself).
pub(super) fn prepare_piece(
    plan: &StreamRun<'_>,
    settings: &PipelineSettings,
    first: Option<&FirstPiece>,
    bytes: Vec<u8>,
    start: &PieceStart,
) -> Result<PieceRead> {
    let (bytes, piece_settings) = match first {
        None => (bytes, settings.clone()),
        Some(f) => later_piece(plan, f, bytes, start)?,
    };
    let label = plan.input_label;
    let resolved =
        pipeline::read_and_resolve(bytes.into(), label, &piece_settings, plan.resolver, true)?;
    if resolved
        .ingested
        .asides
        .unresolved_refused(piece_settings.allow_unresolved)
    {
        return Ok(PieceRead::Unresolved(Box::new(resolved.ingested)));
    }
    Ok(
        match pipeline::prepare_resolved(resolved, &piece_settings, plan.references) {
            Ok(prepared) => PieceRead::Prepared(Box::new(prepared)),
            Err(error) => PieceRead::FailedLate(error),
        },
    )
}

/// A piece's length in bytes, a digest of them, its table rows and its data lines, as a pass
/// read it: the second pass must read what the first did.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(super) struct PieceSize {
    pub(super) bytes: usize,
    pub(super) digest: u64,
    pub(super) rows: usize,
    pub(super) data_lines: usize,
}

impl PieceSize {
    /// `seen`: the piece's length and `digest`, taken before it was prepared.
    pub(super) fn of(prepared: &pipeline::Prepared, seen: (usize, u64)) -> PieceSize {
        PieceSize {
            bytes: seen.0,
            digest: seen.1,
            rows: prepared.rows_in,
            data_lines: prepared.ingested.data_lines,
        }
    }
}

/// A digest of a piece's bytes (SipHash with fixed keys, the same in both passes): a file
/// rewritten to the same length between the passes, its time of change put back, still
/// differs here.
pub(super) fn digest(bytes: &[u8]) -> (usize, u64) {
    use std::hash::Hasher;
    let mut hasher = std::hash::DefaultHasher::new();
    hasher.write(bytes);
    (bytes.len(), hasher.finish())
}

/// The file's length and time of last change: the two passes must read the same file.
pub(super) fn file_stamp(label: &str, path: &Path) -> Result<(u64, Option<std::time::SystemTime>)> {
    let meta = std::fs::metadata(path).map_err(|e| Error::io(label, "read", e))?;
    Ok((meta.len(), meta.modified().ok()))
}

/// The error of a file that changed between (or during) the two passes: the ranks of the
/// first would not be those of the rows the second writes.
pub(super) fn changed_while_read(label: &str) -> Error {
    Error::bad_input(
        crate::error::Location::file(label),
        "the file changed while --streaming read it (it is read twice, and the two readings differ)",
        "a file that nothing writes to during the run",
        "run again once the file is complete, or copy it first and stream the copy",
    )
}

pub(super) fn open_pieces(
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
        at_least: AtLeast::first_piece(settings.ingest.header_row),
    })
}

/// Where a piece starts in the whole file: its lines' numbers and row ids follow from it.
#[derive(Clone, Copy)]
pub(super) struct PieceStart {
    pub(super) lines_before: usize,
    pub(super) rows_before: usize,
}

/// A piece after the first, as text to read with the first piece's header, delimiter,
/// encoding and roles, its lines and row ids those of the whole file, and the settings to
/// read it with.
fn later_piece(
    plan: &StreamRun<'_>,
    first: &FirstPiece,
    bytes: Vec<u8>,
    start: &PieceStart,
) -> Result<(Vec<u8>, PipelineSettings)> {
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
    Ok((piece.into_bytes(), piece_settings))
}

/// What the first piece decided, for reading the others as it was read.
pub(super) fn first_piece(
    ingested: &crate::ingest::Ingested,
    settings: &PipelineSettings,
    label: &str,
) -> Result<FirstPiece> {
    let mut piece_settings = settings.clone();
    piece_settings.ingest.delimiter = Some(ingested.delimiter);
    piece_settings.ingest.encoding = Some(EncodingChoice::Utf8);
    // A later piece starts with the header line itself (`header_line`), not at its row.
    piece_settings.ingest.header_row = None;
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
        asides_at: ingested.asides_at,
        data_lines: ingested.data_lines,
    })
}

/// The header as a CSV line in `delimiter`, quoted where needed.
pub(super) fn header_line(headers: &[String], delimiter: u8) -> Result<String> {
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

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_piece_rewritten_to_the_same_length_has_another_digest() {
        let piece = b"country,year,value\nFrance,2020,1.5\n";
        let rewritten = b"country,year,value\nFrance,2020,9.5\n";
        // Two hashers, one digest: the keys are fixed, not drawn per hasher (each pass makes
        // its own).
        assert_eq!(digest(piece), digest(&piece.clone()));
        assert_eq!(digest(piece).0, digest(rewritten).0);
        assert_ne!(digest(piece), digest(rewritten));
    }

    #[test]
    fn a_piece_header_is_quoted_where_needed() {
        let line = header_line(&["country".into(), "2019, est.".into()], b',').unwrap();
        assert_eq!(line, "country,\"2019, est.\"");
    }
}
