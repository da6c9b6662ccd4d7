//! Ranks and rank shifts, computed by polars within each group and year.
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

/// Rank expressions: `rank_baseline`, `rank_adjusted` (Int64, null when not ranked). With
/// `baseline_missing` (the catalog lacks a table only the baseline needs) the adjusted values
/// are ranked on their own and the baseline ranks stay empty.
pub fn rank_columns(
    order: Order,
    eligible: Expr,
    partition: &[Expr],
    baseline_missing: bool,
) -> PolarsResult<Vec<Expr>> {
    let rankable = eligible.and(col("value_adjusted").is_not_null());
    let rankable = if baseline_missing {
        rankable
    } else {
        rankable.and(col("value_baseline").is_not_null())
    };
    let rank_of = |column: &str| -> PolarsResult<Expr> {
        let masked = when(rankable.clone())
            .then(col(column))
            .otherwise(null_of(DataType::Float64));
        rank_within(masked, order, partition)
    };
    Ok(vec![
        rank_of("value_baseline")?.alias("rank_baseline"),
        rank_of("value_adjusted")?.alias("rank_adjusted"),
    ])
}

/// Standard competition ranks of `values` (null: not ranked) within `partition`, as Int64.
/// The one ranking rule of the tool: `adjust` ranks with it and `audit` checks with it.
pub fn rank_within(values: Expr, order: Order, partition: &[Expr]) -> PolarsResult<Expr> {
    let options = RankOptions {
        method: RankMethod::Min,
        descending: order == Order::Desc,
    };
    Ok(values
        .rank(options, None)
        .over(partition)?
        .cast(DataType::Int64))
}

/// Standard competition ranks of plain values within their keys (the audit's comparisons).
pub fn ranks_of(
    values: Vec<Option<f64>>,
    keys: Vec<String>,
    order: Order,
) -> PolarsResult<Vec<Option<i64>>> {
    let n = values.len();
    let frame = DataFrame::new(
        n,
        vec![
            Column::new("v".into(), values),
            Column::new("k".into(), keys),
        ],
    )?;
    let ranked = frame
        .lazy()
        .select([rank_within(col("v"), order, &[col("k")])?.alias("r")])
        .collect()?;
    Ok(ranked.column("r")?.i64()?.iter().collect())
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

/// `_mixed`: the row's ranking group (partition) holds eligible figures in more than one unit
/// (`unit`: a currency; none when the steps bring every figure to one unit). Figures in
/// different currencies are never ranked against each other.
pub fn mixed_units(unit: Option<Expr>, eligible: Expr, partition: &[Expr]) -> PolarsResult<Expr> {
    // One common unit: nothing to compare (the window over every row would find no unit).
    let Some(unit) = unit else {
        return Ok(lit(false).alias("_mixed"));
    };
    let counted = when(eligible)
        .then(unit)
        .otherwise(null_of(DataType::String));
    Ok(counted
        .drop_nulls()
        .n_unique()
        .over(partition)?
        .gt(lit(1))
        .fill_null(lit(false))
        .alias("_mixed"))
}

/// `rank_shift` = rank_baseline − rank_adjusted: positive means the row moved up.
pub fn shift_column() -> Expr {
    (col("rank_baseline") - col("rank_adjusted")).alias("rank_shift")
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ranks(
        values: &[Option<f64>],
        eligible: &[bool],
        groups: &[&str],
        order: Order,
    ) -> (Vec<Option<i64>>, Vec<Option<i64>>) {
        let df = DataFrame::new_infer_height(vec![
            Column::new("value_baseline".into(), values.to_vec()),
            Column::new(
                "value_adjusted".into(),
                values.iter().map(|v| v.map(|x| -x)).collect::<Vec<_>>(),
            ),
            Column::new("ok".into(), eligible.to_vec()),
            Column::new("group".into(), groups.to_vec()),
        ])
        .unwrap();
        let mut exprs = rank_columns(order, col("ok"), &[col("group")], false).unwrap();
        exprs.push(lit(0));
        let out = df
            .lazy()
            .with_columns(&exprs[..2])
            .with_column(shift_column())
            .collect()
            .unwrap();
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
