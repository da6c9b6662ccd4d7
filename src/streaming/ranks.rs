//! The whole file's ranks for `--streaming`, in memory bounded by a bucket of the file rather
//! than the whole of it. The first pass appends each row's rank inputs (group, entity and unit
//! as numbers shared by every piece, year, eligibility, the two values) to one of `BUCKETS`
//! files in a temporary folder beside the output, chosen by the row's ranking partition (its
//! group and year), so that every partition lies whole in one bucket, and so does every
//! series' year (all that `several_series` compares). Each
//! bucket is then read alone and ranked by the in-memory rules (`rank::several_series`,
//! `rank::mixed_units`, `rank::rank_columns`), and its rows' ranks written back in row order;
//! the second pass takes each piece's ranks from every bucket in turn.
//!
//! A bucket holds about 1/`BUCKETS` of the rows when the partitions are many; a table with
//! one large partition (no group and one year) puts it in one bucket, whose rows are then held
//! whole while they are ranked, as they must be.

use crate::error::{Error, Result};
use crate::rank;
use polars::prelude::*;
use std::fs::File;
use std::io::{BufReader, BufWriter, Read, Write};
use std::path::{Path, PathBuf};

/// Buckets of partitions.
const BUCKETS: usize = 64;

/// One row's rank inputs, as written to its bucket.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(super) struct Input {
    pub row: u64,
    pub group: Option<u32>,
    pub entity: Option<u32>,
    pub unit: Option<u32>,
    pub year: Option<i32>,
    pub eligible: bool,
    pub baseline: Option<f64>,
    pub adjusted: Option<f64>,
}

const INPUT_BYTES: usize = 8 + 4 + 4 + 4 + 4 + 8 + 8 + 1;

/// A number written as `u32::MAX` when there is none (the numbers count distinct texts, far
/// below it).
fn number(n: Option<u32>) -> [u8; 4] {
    n.unwrap_or(u32::MAX).to_le_bytes()
}

fn read_number(bytes: &[u8]) -> Option<u32> {
    let n = u32::from_le_bytes(bytes.try_into().unwrap_or([0xff; 4]));
    (n != u32::MAX).then_some(n)
}

fn read_u64(bytes: &[u8]) -> u64 {
    u64::from_le_bytes(bytes.try_into().unwrap_or_default())
}

impl Input {
    fn encode(&self) -> [u8; INPUT_BYTES] {
        let mut out = [0u8; INPUT_BYTES];
        out[0..8].copy_from_slice(&self.row.to_le_bytes());
        out[8..12].copy_from_slice(&number(self.group));
        out[12..16].copy_from_slice(&number(self.entity));
        out[16..20].copy_from_slice(&number(self.unit));
        out[20..24].copy_from_slice(&self.year.unwrap_or(0).to_le_bytes());
        out[24..32].copy_from_slice(&self.baseline.unwrap_or(0.0).to_le_bytes());
        out[32..40].copy_from_slice(&self.adjusted.unwrap_or(0.0).to_le_bytes());
        out[40] = u8::from(self.year.is_some())
            | u8::from(self.eligible) << 1
            | u8::from(self.baseline.is_some()) << 2
            | u8::from(self.adjusted.is_some()) << 3;
        out
    }

    fn decode(bytes: &[u8; INPUT_BYTES]) -> Input {
        let bit = |k: u8| bytes[40] & (1 << k) != 0;
        let float =
            |at: usize| f64::from_le_bytes(bytes[at..at + 8].try_into().unwrap_or_default());
        Input {
            row: read_u64(&bytes[0..8]),
            group: read_number(&bytes[8..12]),
            entity: read_number(&bytes[12..16]),
            unit: read_number(&bytes[16..20]),
            year: bit(0).then(|| i32::from_le_bytes(bytes[20..24].try_into().unwrap_or_default())),
            eligible: bit(1),
            baseline: bit(2).then(|| float(24)),
            adjusted: bit(3).then(|| float(32)),
        }
    }

    /// The key rows are ranked together by.
    fn partition_key(&self) -> u128 {
        rank::partition_key(self.group, self.year)
    }

    /// The bucket of the row's partition: rows of one partition share a bucket.
    fn bucket(&self) -> usize {
        // Fibonacci hashing of the group and year: the product's top bits pick the bucket.
        let key = u64::from(self.group.unwrap_or(u32::MAX)) << 32
            ^ self.year.map_or(1 << 32, |y| u64::from(y as u32));
        let mixed = key.wrapping_mul(0x9E37_79B9_7F4A_7C15);
        (mixed >> 58) as usize % BUCKETS
    }
}

/// One row's ranks and late flags, as written back by its bucket.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct Ranked {
    row: u64,
    baseline: Option<u32>,
    adjusted: Option<u32>,
    several: bool,
    mixed: bool,
}

const RANKED_BYTES: usize = 8 + 4 + 4 + 1;

impl Ranked {
    fn encode(&self) -> [u8; RANKED_BYTES] {
        let mut out = [0u8; RANKED_BYTES];
        out[0..8].copy_from_slice(&self.row.to_le_bytes());
        out[8..12].copy_from_slice(&number(self.baseline));
        out[12..16].copy_from_slice(&number(self.adjusted));
        out[16] = u8::from(self.several) | u8::from(self.mixed) << 1;
        out
    }

    fn decode(bytes: &[u8; RANKED_BYTES]) -> Ranked {
        Ranked {
            row: read_u64(&bytes[0..8]),
            baseline: read_number(&bytes[8..12]),
            adjusted: read_number(&bytes[12..16]),
            several: bytes[16] & 1 != 0,
            mixed: bytes[16] & 2 != 0,
        }
    }
}

/// The rank inputs of the rows read so far, spread over the buckets' files.
pub(super) struct RankSpill {
    folder: tempfile::TempDir,
    inputs: Vec<BufWriter<File>>,
}

fn io_error<'a>(path: &'a Path, what: &'static str) -> impl Fn(std::io::Error) -> Error + 'a {
    move |e| Error::io(path.display(), what, e)
}

impl RankSpill {
    /// Buckets in a temporary folder beside `output`, removed on exit or signal.
    pub(super) fn new(output: &Path) -> Result<RankSpill> {
        let folder = match output.parent() {
            Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
            _ => PathBuf::from("."),
        };
        let folder = crate::cleanup::create_registered(
            || {
                tempfile::Builder::new()
                    .prefix(".levelfield-ranks-")
                    .tempdir_in(&folder)
            },
            tempfile::TempDir::path,
        )
        .map_err(|e| Error::io(folder.display(), "create a temporary folder in", e))?;
        let inputs = (0..BUCKETS)
            .map(|b| {
                let path = folder.path().join(format!("inputs-{b:02}"));
                File::create(&path)
                    .map(|f| BufWriter::with_capacity(1 << 16, f))
                    .map_err(io_error(&path, "write"))
            })
            .collect::<Result<_>>()?;
        Ok(RankSpill { folder, inputs })
    }

    /// Appends a row's rank inputs to its bucket (rows come in row order).
    pub(super) fn add(&mut self, input: &Input) -> Result<()> {
        let bucket = input.bucket();
        let folder = self.folder.path();
        self.inputs[bucket]
            .write_all(&input.encode())
            .map_err(io_error(folder, "write a temporary file in"))
    }

    /// Ranks every bucket, on the pool's threads; their ranks, to be read back piece by
    /// piece.
    pub(super) fn rank(self, rules: RankRules) -> Result<Ranks> {
        let folder = self.folder;
        for input in self.inputs {
            input
                .into_inner()
                .map_err(|e| Error::io(folder.path().display(), "write", e.into_error()))?;
        }
        let ranked = super::pieces::in_parallel((0..BUCKETS).collect(), |b| {
            rank_bucket_file(folder.path(), b, rules)
        });
        // The first error in bucket order, as reading them in turn would give it.
        ranked.into_iter().collect::<Result<Vec<()>>>()?;
        let mut readers = Vec::with_capacity(BUCKETS);
        for b in 0..BUCKETS {
            let path = folder.path().join(format!("ranks-{b:02}"));
            let file = File::open(&path).map_err(io_error(&path, "read"))?;
            readers.push(BufReader::with_capacity(1 << 16, file));
        }
        let mut ranks = Ranks {
            _folder: folder,
            readers,
            heads: vec![None; BUCKETS],
        };
        for b in 0..BUCKETS {
            ranks.heads[b] = ranks.next_of(b)?;
        }
        Ok(ranks)
    }
}

/// Ranks bucket `b`: its inputs file read, its ranks file written, the inputs file removed.
fn rank_bucket_file(folder: &Path, b: usize, rules: RankRules) -> Result<()> {
    let inputs = read_records(&folder.join(format!("inputs-{b:02}")), Input::decode)?;
    let ranked = rank_bucket(&inputs, rules)?;
    drop(inputs);
    let path = folder.join(format!("ranks-{b:02}"));
    let mut out = BufWriter::with_capacity(
        1 << 16,
        File::create(&path).map_err(io_error(&path, "write"))?,
    );
    for r in &ranked {
        out.write_all(&r.encode())
            .map_err(io_error(&path, "write"))?;
    }
    out.flush().map_err(io_error(&path, "write"))?;
    let _ = std::fs::remove_file(folder.join(format!("inputs-{b:02}")));
    Ok(())
}

/// Every record of a bucket's file.
fn read_records<const N: usize, T>(path: &Path, decode: fn(&[u8; N]) -> T) -> Result<Vec<T>> {
    let mut bytes = Vec::new();
    File::open(path)
        .and_then(|mut f| f.read_to_end(&mut bytes))
        .map_err(io_error(path, "read"))?;
    Ok(bytes
        .chunks_exact(N)
        .map(|chunk| decode(chunk.try_into().unwrap_or(&[0u8; N])))
        .collect())
}

/// The ranks and late flags of one bucket's rows, by the in-memory rules.
fn rank_bucket(inputs: &[Input], rules: RankRules) -> Result<Vec<Ranked>> {
    let engine = || Error::engine("ranking");
    let mut pairs: rank::Numbering<(Option<u32>, Option<u32>)> = rank::Numbering::default();
    let series: Vec<u32> = inputs
        .iter()
        .map(|i| pairs.number((i.entity, i.group)))
        .collect();
    let years: Vec<Option<i32>> = inputs.iter().map(|i| i.year).collect();
    let several = rank::several_series(&series, &years, pairs.len());
    let (partitions, count) = rank::partition_numbers(inputs.iter().map(Input::partition_key));
    let eligible: Vec<bool> = inputs.iter().map(|i| i.eligible).collect();
    let mixed = match rules.one_unit {
        true => vec![false; inputs.len()],
        false => {
            let units: Vec<Option<u32>> = inputs.iter().map(|i| i.unit).collect();
            rank::mixed_units(&units, &eligible, &partitions, count)
        }
    };
    let frame = DataFrame::new(
        inputs.len(),
        vec![
            Column::new("_rank_eligible".into(), &eligible),
            Column::new("_several".into(), &several),
            Column::new("_mixed".into(), &mixed),
            Column::new(
                "value_baseline".into(),
                inputs.iter().map(|i| i.baseline).collect::<Vec<_>>(),
            ),
            Column::new(
                "value_adjusted".into(),
                inputs.iter().map(|i| i.adjusted).collect::<Vec<_>>(),
            ),
        ],
    )
    .map_err(engine())?;
    let [baseline, adjusted] = rank::rank_columns(
        &frame,
        &partitions,
        count,
        rules.order,
        rules.baseline_missing,
    )
    .map_err(engine())?;
    let rank_of = |c: &Column| -> Result<Vec<Option<u32>>> {
        Ok(c.i64()
            .map_err(engine())?
            .iter()
            .map(|r| r.map(|r| r as u32))
            .collect())
    };
    let (baseline, adjusted) = (rank_of(&baseline)?, rank_of(&adjusted)?);
    Ok((0..inputs.len())
        .map(|k| Ranked {
            row: inputs[k].row,
            baseline: baseline[k],
            adjusted: adjusted[k],
            several: several[k],
            mixed: mixed[k],
        })
        .collect())
}

/// What the ranks of a run depend on besides its rows.
#[derive(Debug, Clone, Copy)]
pub(super) struct RankRules {
    /// Every figure ends in one unit (`PipelineSettings::one_unit`): no mixed-currency rule.
    pub one_unit: bool,
    pub order: rank::Order,
    /// The baseline is missing: rows are ranked on their adjusted value alone.
    pub baseline_missing: bool,
}

/// The ranked buckets, read back in row order.
pub(super) struct Ranks {
    _folder: tempfile::TempDir,
    readers: Vec<BufReader<File>>,
    /// Each bucket's next record not yet taken.
    heads: Vec<Option<Ranked>>,
}

impl Ranks {
    fn next_of(&mut self, bucket: usize) -> Result<Option<Ranked>> {
        let mut bytes = [0u8; RANKED_BYTES];
        match self.readers[bucket].read_exact(&mut bytes) {
            Ok(()) => Ok(Some(Ranked::decode(&bytes))),
            Err(e) if e.kind() == std::io::ErrorKind::UnexpectedEof => Ok(None),
            Err(e) => Err(Error::io(self._folder.path().display(), "read", e)),
        }
    }

    /// The ranks, shift and late flags' columns of the rows `from..from + rows` (a piece),
    /// as `pipeline::finish` takes them.
    pub(super) fn slice(&mut self, from: u64, rows: usize) -> Result<DataFrame> {
        let end = from + rows as u64;
        let (mut baseline, mut adjusted) = (vec![None; rows], vec![None; rows]);
        let (mut several, mut mixed) = (vec![false; rows], vec![false; rows]);
        for b in 0..BUCKETS {
            while let Some(r) = self.heads[b].filter(|r| r.row < end) {
                // A row before the piece: the pieces are not those the ranks were read from
                // (the caller checks each piece's rows, so this is a guard, not a path).
                let Some(at) = r.row.checked_sub(from) else {
                    return Err(Error::engine("streaming ranks")(polars_err!(
                        ComputeError: "row {} is before the piece that starts at row {}", r.row, from
                    )));
                };
                let at = at as usize;
                baseline[at] = r.baseline.map(i64::from);
                adjusted[at] = r.adjusted.map(i64::from);
                several[at] = r.several;
                mixed[at] = r.mixed;
                self.heads[b] = self.next_of(b)?;
            }
        }
        let engine = || Error::engine("ranking");
        let baseline = Column::new("rank_baseline".into(), baseline);
        let adjusted = Column::new("rank_adjusted".into(), adjusted);
        let shift = rank::shift_of(&baseline, &adjusted).map_err(engine())?;
        DataFrame::new(
            rows,
            vec![
                baseline,
                adjusted,
                shift,
                Column::new("_several".into(), several),
                Column::new("_mixed".into(), mixed),
            ],
        )
        .map_err(engine())
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn records_read_back_as_written() {
        let input = Input {
            row: 12_345_678_901,
            group: Some(7),
            entity: None,
            unit: Some(0),
            year: Some(-3),
            eligible: true,
            baseline: Some(-0.0),
            adjusted: None,
        };
        assert_eq!(Input::decode(&input.encode()), input);
        let empty = Input {
            group: None,
            year: None,
            eligible: false,
            baseline: Some(f64::MAX),
            ..input
        };
        assert_eq!(Input::decode(&empty.encode()), empty);
        let ranked = Ranked {
            row: 3,
            baseline: Some(1),
            adjusted: None,
            several: false,
            mixed: true,
        };
        assert_eq!(Ranked::decode(&ranked.encode()), ranked);
        // One partition, one bucket.
        let other_row = Input {
            row: 99,
            entity: Some(4),
            ..input
        };
        assert_eq!(input.bucket(), other_row.bucket());
    }

    /// Four rows of one group and year, spilled and ranked as the first pass does.
    fn ranked_four(dir: &Path) -> Ranks {
        let mut spill = RankSpill::new(&dir.join("out.csv")).unwrap();
        for (row, value) in [3.0, 1.0, 4.0, 1.0].into_iter().enumerate() {
            spill
                .add(&Input {
                    row: row as u64,
                    group: Some(0),
                    entity: Some(row as u32),
                    unit: Some(0),
                    year: Some(2020),
                    eligible: true,
                    baseline: Some(value),
                    adjusted: Some(value),
                })
                .unwrap();
        }
        let rules = RankRules {
            one_unit: false,
            order: rank::Order::Desc,
            baseline_missing: false,
        };
        spill.rank(rules).unwrap()
    }

    #[test]
    fn slices_give_each_piece_its_rows_ranks_and_refuse_rows_before_the_piece() {
        let dir = tempfile::tempdir().unwrap();
        let mut ranks = ranked_four(dir.path());
        let ranks_of = |frame: &DataFrame| -> Vec<Option<i64>> {
            frame["rank_adjusted"].i64().unwrap().iter().collect()
        };
        // Largest first, ties sharing the lower rank (standard competition ranking, "1224").
        assert_eq!(
            ranks_of(&ranks.slice(0, 2).unwrap()),
            vec![Some(2), Some(3)]
        );
        assert_eq!(
            ranks_of(&ranks.slice(2, 2).unwrap()),
            vec![Some(1), Some(3)]
        );
        // A second pass whose pieces do not start where the first pass's rows did (the file
        // changed between the passes) is an error, not a panic.
        let mut ranks = ranked_four(dir.path());
        assert!(ranks.slice(2, 2).is_err());
    }
}
