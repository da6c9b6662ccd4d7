//! Ranks and rank shifts within each group and year, by a counting sort of the rows into
//! their partitions and a sort within each (the ranks polars gives, without its window).
//!
//! Standard competition ranking ("1224": tied values share the lowest rank and the next rank
//! is skipped), descending by default so rank 1 is the largest value. Only rows with both a
//! baseline and an adjusted value, and not excluded (aggregates, unresolved entities), are
//! ranked, so both rankings cover the same set and the shift isolates the adjustment.

use polars::prelude::*;

/// A missing value of type `dtype`. Written as a typed scalar rather than `lit(NULL).cast(..)`:
/// polars turns an untyped null into a null array before casting it, and its first null array
/// zeroes an 8 MiB buffer, a tenth of a 200-row run (measured with a profiler).
pub fn null_of(dtype: DataType) -> Expr {
    lit(Scalar::null(dtype))
}

/// Which end of the scale is rank 1.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, clap::ValueEnum, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Order {
    /// The largest value is rank 1.
    #[default]
    Desc,
    /// The smallest value is rank 1.
    Asc,
}

/// Dense numbers for keys: equal keys, equal numbers, counted from 0 in the order the keys
/// first appear (partitions, series, texts).
#[derive(Debug)]
pub struct Numbering<K> {
    numbers: PlHashMap<K, u32>,
}

impl<K: std::hash::Hash + Eq> Default for Numbering<K> {
    fn default() -> Self {
        Numbering {
            numbers: PlHashMap::default(),
        }
    }
}

impl<K: std::hash::Hash + Eq> Numbering<K> {
    /// The number of `key`, the next one if it is new. Keys are at most one a row: 4 billion
    /// distinct ones (where `u32` would wrap) are far past any table held in memory.
    pub fn number(&mut self, key: K) -> u32 {
        let next = self.numbers.len() as u32;
        *self.numbers.entry(key).or_insert(next)
    }

    /// How many distinct keys were numbered.
    pub fn len(&self) -> usize {
        self.numbers.len()
    }

    pub fn is_empty(&self) -> bool {
        self.numbers.is_empty()
    }
}

/// The key of the rows ranked together: their group (a place among the table's texts) and
/// their year, each possibly missing, in one number (every pair its own: a missing one is 0,
/// any other is one more than its bits), hashed as one word pair rather than field by field.
pub fn partition_key(group: Option<u32>, year: Option<i32>) -> u128 {
    let group = group.map_or(0, |g| u128::from(g) + 1);
    let year = year.map_or(0, |y| u128::from(y as u32) + 1);
    group << 64 | year
}

/// Dense numbers for partition keys (`Numbering`), and how many there are.
pub fn partition_numbers<K: std::hash::Hash + Eq>(
    keys: impl Iterator<Item = K>,
) -> (Vec<u32>, usize) {
    let mut numbering = Numbering::default();
    let out = keys.map(|key| numbering.number(key)).collect();
    (out, numbering.len())
}

/// The rows of each partition that have a value, partition by partition (each partition's
/// rows in their order): a counting sort by partition number.
struct ByPartition {
    rows: Vec<u32>,
    /// Partition `p`'s rows are `rows[starts[p]..starts[p + 1]]`.
    starts: Vec<usize>,
}

impl ByPartition {
    fn new(present: impl Fn(usize) -> bool, partitions: &[u32], count: usize) -> ByPartition {
        let mut starts = vec![0usize; count + 1];
        for (row, &p) in partitions.iter().enumerate() {
            if present(row) {
                starts[p as usize + 1] += 1;
            }
        }
        for p in 0..count {
            starts[p + 1] += starts[p];
        }
        let mut next = starts.clone();
        let mut rows = vec![0u32; starts[count]];
        for (row, &p) in partitions.iter().enumerate() {
            if present(row) {
                rows[next[p as usize]] = row as u32;
                next[p as usize] += 1;
            }
        }
        ByPartition { rows, starts }
    }
}

/// Polars' total order of floats: NaN above every number and equal to itself, numbers in
/// their order (so -0 equals 0).
fn total_cmp(a: f64, b: f64) -> std::cmp::Ordering {
    use std::cmp::Ordering::{Equal, Greater, Less};
    match (a.is_nan(), b.is_nan()) {
        (true, true) => Equal,
        (true, false) => Greater,
        (false, true) => Less,
        (false, false) => a.partial_cmp(&b).unwrap_or(Equal),
    }
}

/// Standard competition ranks ("1224": tied values share the lowest rank, and the next rank
/// is skipped) of `values` within their partitions (`partitions[i]`, a number below `count`),
/// largest first for `Order::Desc`; none for a missing value, which takes no rank. Values
/// are ordered and tied as polars orders and ties them (a total order: NaN above every
/// number and equal to itself, -0 equal to 0), so the ranks are those of polars'
/// `rank(method = "min")` over the partitions, which this replaced: its window over 50,000
/// partitions of 10M rows spent two thirds of its time in the thread pool's scheduling (two
/// million yields, measured with `perf stat`, 2026-12-05).
pub fn competition_ranks(
    values: &Float64Chunked,
    partitions: &[u32],
    count: usize,
    order: Order,
) -> Int64Chunked {
    let values = values.rechunk();
    let groups = ByPartition::new(|row| values.get(row).is_some(), partitions, count);
    ranks_in(&groups, &values, order)
}

/// The ranks of `values` among the rows of `groups` (a row without a value takes none).
fn ranks_in(groups: &ByPartition, values: &Float64Chunked, order: Order) -> Int64Chunked {
    use rayon::prelude::*;
    // Read in place (one chunk), not copied.
    let values = values.rechunk();
    let array = values.downcast_iter().next();
    let value_at = |row: usize| array.and_then(|a| StaticArray::get(a, row));
    // Each partition's ranks in the order of `groups.rows` (0: none), the partitions on the
    // pool's threads, each into its own part of `in_order`.
    let mut in_order = vec![0u32; groups.rows.len()];
    let mut parts: Vec<(&[u32], &mut [u32])> = Vec::with_capacity(groups.starts.len());
    let mut rest = in_order.as_mut_slice();
    for bounds in groups.starts.windows(2) {
        let rows = &groups.rows[bounds[0]..bounds[1]];
        let (part, tail) = rest.split_at_mut(rows.len());
        parts.push((rows, part));
        rest = tail;
    }
    polars_core::runtime::THREAD_POOL.install(|| {
        parts
            .into_par_iter()
            .for_each_init(Vec::new, |run, (rows, out)| {
                rank_partition(&value_at, rows, order, run, out);
            })
    });
    // Each row's rank (0: none), four bytes a row, then the column.
    let mut of_row = vec![0u32; values.len()];
    for (&row, &rank) in groups.rows.iter().zip(&in_order) {
        of_row[row as usize] = rank;
    }
    Int64Chunked::from_iter_options(
        "rank".into(),
        of_row.iter().map(|&r| (r > 0).then(|| i64::from(r))),
    )
}

/// The ranks of one partition's `rows` into `out` in the same order (0 for a row without a
/// value, which takes no rank); `run` is a reused buffer.
fn rank_partition(
    value_at: &(impl Fn(usize) -> Option<f64> + Sync),
    rows: &[u32],
    order: Order,
    run: &mut Vec<(f64, u32)>,
    out: &mut [u32],
) {
    run.clear();
    run.extend(
        rows.iter()
            .enumerate()
            .filter_map(|(k, &row)| value_at(row as usize).map(|v| (v, k as u32))),
    );
    run.sort_unstable_by(|a, b| match order {
        Order::Desc => total_cmp(b.0, a.0),
        Order::Asc => total_cmp(a.0, b.0),
    });
    let mut rank = 1;
    for (k, &(value, at)) in run.iter().enumerate() {
        if k > 0 && total_cmp(value, run[k - 1].0) != std::cmp::Ordering::Equal {
            rank = k as u32 + 1;
        }
        out[at as usize] = rank;
    }
}

/// `rank_baseline` and `rank_adjusted` of a frame holding `value_baseline`, `value_adjusted`
/// and `_rank_eligible`, `_several` and `_mixed`: only rows eligible, of one series and one
/// unit, with both values (or, with `baseline_missing` when the catalog lacks a table only
/// the baseline needs, the adjusted value alone), are ranked, so both rankings cover the same
/// rows and the shift isolates the adjustment.
pub fn rank_columns(
    frame: &DataFrame,
    partitions: &[u32],
    count: usize,
    order: Order,
    baseline_missing: bool,
) -> PolarsResult<[Column; 2]> {
    let one_series = !frame.column("_several")?.bool()?;
    let one_unit = !frame.column("_mixed")?.bool()?;
    let rankable = &(frame.column("_rank_eligible")?.bool()? & &one_series) & &one_unit;
    let adjusted = frame.column("value_adjusted")?.f64()?;
    let baseline = frame.column("value_baseline")?.f64()?;
    let rankable = &rankable & &adjusted.is_not_null();
    let rankable = match baseline_missing {
        true => rankable,
        false => &rankable & &baseline.is_not_null(),
    };
    // Both rankings cover the same rows: grouped once.
    let rankable = rankable.rechunk();
    let groups = ByPartition::new(|row| rankable.get(row) == Some(true), partitions, count);
    let rank_of = |values: &Float64Chunked, name: &str| -> PolarsResult<Column> {
        Ok(ranks_in(&groups, values, order)
            .with_name(name.into())
            .into_column())
    };
    Ok([
        rank_of(baseline, "rank_baseline")?,
        rank_of(adjusted, "rank_adjusted")?,
    ])
}

/// Standard competition ranks of plain values within their keys (the audit's comparisons).
pub fn ranks_of(
    values: Vec<Option<f64>>,
    keys: Vec<String>,
    order: Order,
) -> PolarsResult<Vec<Option<i64>>> {
    let (partitions, count) = partition_numbers(keys.into_iter());
    let values = Float64Chunked::from_iter_options("v".into(), values.into_iter());
    Ok(competition_ranks(&values, &partitions, count, order)
        .iter()
        .collect())
}

/// Whether each row shares its series (`pairs`: the entity and group, as a number below
/// `pair_count`) and its year with another row. Such a table holds several series in one
/// ranking (a bulk export with two indicators, say), so those rows are not ranked against each
/// other. Rows without a year share the "no year" of their series.
///
/// Counted in a table of one byte per series and year where that table is small (a panel of
/// 200,000 series over 50 years takes 10 MB), else by sorting the keys: polars' `len().over`
/// of the same key hashed every row into a table as large as the rows, at 10M rows the largest
/// single cost of the ranking (a profile, 2026-12-05).
pub fn several_series(pairs: &[u32], years: &[Option<i32>], pair_count: usize) -> Vec<bool> {
    let (low, high) = years
        .iter()
        .flatten()
        .fold((i32::MAX, i32::MIN), |(lo, hi), &y| (lo.min(y), hi.max(y)));
    // Slot 0 is "no year"; years take 1 ..= span.
    let span = if low <= high {
        (i64::from(high) - i64::from(low) + 2) as usize
    } else {
        1
    };
    let slot = |year: Option<i32>| year.map_or(0, |y| (i64::from(y) - i64::from(low) + 1) as usize);
    match pair_count
        .checked_mul(span)
        .filter(|&n| n <= DENSE_SERIES_LIMIT)
    {
        Some(cells) => {
            let mut seen = vec![0u8; cells];
            let at = |i: usize| pairs[i] as usize * span + slot(years[i]);
            for i in 0..pairs.len() {
                let count = &mut seen[at(i)];
                *count = count.saturating_add(1);
            }
            (0..pairs.len()).map(|i| seen[at(i)] > 1).collect()
        }
        None => {
            let key = |i: usize| (u64::from(pairs[i]) << 32) | slot(years[i]) as u64;
            let mut order: Vec<u32> = (0..pairs.len() as u32).collect();
            order.sort_unstable_by_key(|&i| key(i as usize));
            let mut several = vec![false; pairs.len()];
            for run in order.chunk_by(|&a, &b| key(a as usize) == key(b as usize)) {
                if run.len() > 1 {
                    for &i in run {
                        several[i as usize] = true;
                    }
                }
            }
            several
        }
    }
}

/// Series-and-year cells counted in a dense table (one byte each) up to this many.
const DENSE_SERIES_LIMIT: usize = 1 << 26;

/// Whether each row's ranking group (`partitions[i]`, a number below `count`) holds eligible
/// figures in more than one unit (`units[i]`, a currency as a number; none counts as no unit).
/// Figures in different currencies are never ranked against each other.
pub fn mixed_units(
    units: &[Option<u32>],
    eligible: &[bool],
    partitions: &[u32],
    count: usize,
) -> Vec<bool> {
    // Each partition's first unit, and whether another one came.
    let mut first: Vec<Option<u32>> = vec![None; count];
    let mut mixed = vec![false; count];
    for ((&unit, &ok), &p) in units.iter().zip(eligible).zip(partitions) {
        let (Some(unit), true) = (unit, ok) else {
            continue;
        };
        match first[p as usize] {
            None => first[p as usize] = Some(unit),
            Some(seen) if seen != unit => mixed[p as usize] = true,
            Some(_) => {}
        }
    }
    partitions.iter().map(|&p| mixed[p as usize]).collect()
}

/// `rank_shift` = rank_baseline − rank_adjusted: positive means the row moved up.
pub fn shift_of(baseline: &Column, adjusted: &Column) -> PolarsResult<Column> {
    Ok((baseline - adjusted)?.with_name("rank_shift".into()))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn partition_keys_differ_for_every_different_group_and_year() {
        // The edges: none against 0, -1 and the largest values (an earlier key lost a group's
        // top bit, so a group past 2^31 met the rows without one).
        let groups = [
            None,
            Some(0),
            Some(1),
            Some(1 << 31),
            Some(u32::MAX - 1),
            Some(u32::MAX),
        ];
        let years = [
            None,
            Some(0),
            Some(-1),
            Some(i32::MIN),
            Some(i32::MAX),
            Some(2020),
        ];
        let mut keys = std::collections::HashSet::new();
        for g in groups {
            for y in years {
                assert!(keys.insert(partition_key(g, y)), "{g:?} {y:?}");
            }
        }
    }

    fn ranks(
        values: &[Option<f64>],
        eligible: &[bool],
        groups: &[&str],
        order: Order,
    ) -> (Vec<Option<i64>>, Vec<Option<i64>>) {
        let n = values.len();
        let mut out = DataFrame::new_infer_height(vec![
            Column::new("value_baseline".into(), values.to_vec()),
            Column::new(
                "value_adjusted".into(),
                values.iter().map(|v| v.map(|x| -x)).collect::<Vec<_>>(),
            ),
            Column::new("_rank_eligible".into(), eligible.to_vec()),
            Column::new("_several".into(), vec![false; n]),
            Column::new("_mixed".into(), vec![false; n]),
        ])
        .unwrap();
        let keys = groups.iter().map(|g| g.as_bytes()[0] as u64);
        let (partitions, count) = partition_numbers(keys);
        let [baseline, adjusted] = rank_columns(&out, &partitions, count, order, false).unwrap();
        let shift = shift_of(&baseline, &adjusted).unwrap();
        for column in [baseline, adjusted, shift] {
            out.with_column(column).unwrap();
        }
        let get = |name: &str| {
            out.column(name)
                .unwrap()
                .i64()
                .unwrap()
                .iter()
                .collect::<Vec<_>>()
        };
        let shift = get("rank_shift");
        let baseline = get("rank_baseline");
        let adjusted = get("rank_adjusted");
        for i in 0..values.len() {
            if let (Some(b), Some(a)) = (baseline[i], adjusted[i]) {
                assert_eq!(shift[i], Some(b - a));
            }
        }
        (baseline, adjusted)
    }

    #[test]
    fn standard_competition_ranking_on_ties() {
        // Standard competition ranking, "1224" (common practice, no source).
        let values = [Some(10.0), Some(20.0), Some(20.0), Some(5.0)];
        let (desc, asc_of_negated) = ranks(&values, &[true; 4], &["g"; 4], Order::Desc);
        assert_eq!(desc, vec![Some(3), Some(1), Some(1), Some(4)]);
        // The adjusted column holds the negated values, so descending on it is ascending here.
        assert_eq!(asc_of_negated, vec![Some(2), Some(3), Some(3), Some(1)]);
        let (asc, _) = ranks(&values, &[true; 4], &["g"; 4], Order::Asc);
        assert_eq!(asc, vec![Some(2), Some(3), Some(3), Some(1)]);
    }

    #[test]
    fn ineligible_and_missing_rows_are_not_ranked_and_do_not_take_a_rank() {
        let values = [Some(10.0), None, Some(30.0), Some(20.0)];
        let (desc, _) = ranks(&values, &[true, true, false, true], &["g"; 4], Order::Desc);
        assert_eq!(desc, vec![Some(2), None, None, Some(1)]);
    }

    #[test]
    fn the_ranks_are_polars_own_min_ranks_over_the_partitions() {
        // The rule this replaced, as the reference: polars' rank(method = "min") over the
        // partitions, on values with ties, nulls, NaN and both zeros, in both orders.
        let mut state = 0x2545_f491_4f6c_dd1du64;
        let mut next = || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            state
        };
        let n = 5_000;
        let values: Vec<Option<f64>> = (0..n)
            .map(|_| match next() % 20 {
                0 => None,
                1 => Some(f64::NAN),
                2 => Some(0.0),
                3 => Some(-0.0),
                k => Some((next() % 40) as f64 / (k as f64)),
            })
            .collect();
        let groups: Vec<u64> = (0..n).map(|_| next() % 37).collect();
        let (partitions, count) = partition_numbers(groups.iter().copied());
        let chunked = Float64Chunked::from_iter_options("v".into(), values.iter().copied());
        for order in [Order::Desc, Order::Asc] {
            let ours: Vec<Option<i64>> = competition_ranks(&chunked, &partitions, count, order)
                .iter()
                .collect();
            let options = RankOptions {
                method: RankMethod::Min,
                descending: order == Order::Desc,
            };
            let theirs = df!("v" => values.clone(), "g" => groups.clone())
                .unwrap()
                .lazy()
                .select([col("v")
                    .rank(options, None)
                    .over([col("g")])
                    .unwrap()
                    .cast(DataType::Int64)])
                .collect()
                .unwrap();
            let theirs: Vec<Option<i64>> =
                theirs.column("v").unwrap().i64().unwrap().iter().collect();
            assert_eq!(ours, theirs, "{order:?}");
            assert!(ours.iter().flatten().count() > n * 9 / 10);
        }
    }

    #[test]
    fn a_partition_is_mixed_when_its_eligible_figures_have_two_units() {
        let units = [Some(1), Some(1), Some(2), Some(1), None, Some(3), Some(4)];
        let eligible = [true, true, true, true, true, false, true];
        let partitions = [0, 0, 1, 1, 2, 2, 2];
        assert_eq!(
            mixed_units(&units, &eligible, &partitions, 3),
            vec![false, false, true, true, false, false, false]
        );
    }

    #[test]
    fn plain_values_rank_within_their_keys() {
        // Standard competition ranking, "1224" (common practice, no source).
        let ranks = ranks_of(
            vec![Some(3.0), Some(5.0), Some(5.0), None, Some(1.0), Some(9.0)],
            ["a", "a", "a", "a", "a", "b"].map(String::from).to_vec(),
            Order::Desc,
        )
        .unwrap();
        assert_eq!(
            ranks,
            vec![Some(3), Some(1), Some(1), None, Some(4), Some(1)]
        );
    }

    #[test]
    fn several_series_are_rows_sharing_series_and_year_counted_densely_or_by_sorting() {
        let pairs = [0, 0, 1, 1, 0, 2, 2];
        let years = [
            Some(2020),
            Some(2021),
            Some(2020),
            Some(2020),
            None,
            None,
            None,
        ];
        let expected = vec![false, false, true, true, false, true, true];
        assert_eq!(several_series(&pairs, &years, 3), expected);
        // Far apart years, and more series than the dense table holds: the sorted path.
        let years = [Some(1), Some(2_000_000), Some(1), Some(1), None, None, None];
        let expected = vec![false, false, true, true, false, true, true];
        assert_eq!(several_series(&pairs, &years, 3), expected);
        assert_eq!(several_series(&pairs, &years, DENSE_SERIES_LIMIT), expected);
        assert!(several_series(&[], &[], 0).is_empty());
    }

    #[test]
    fn ranks_restart_in_each_group() {
        let values = [Some(1.0), Some(2.0), Some(3.0), Some(4.0)];
        let (desc, _) = ranks(&values, &[true; 4], &["a", "a", "b", "b"], Order::Desc);
        assert_eq!(desc, vec![Some(2), Some(1), Some(2), Some(1)]);
    }
}
