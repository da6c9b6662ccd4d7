//! Rank intervals and statistical ties for the output frame, per group and year.
//!
//! Reads the ranked rows' values and standard errors (the `_se_baseline` / `_se_adjusted`
//! columns the pipeline propagated), and adds `rank_baseline_low/high`, `rank_adjusted_low/high`
//! and `tied_with` (codes of the rank neighbours that are not significantly different, by the
//! Census pairwise test), and the flag `within_uncertainty` when a row's rank moved but its
//! baseline and adjusted rank intervals overlap. Rows without a margin count as exact.

use crate::error::{Error, Result};
use crate::flags;
use crate::rank::Order;
use crate::uncertainty::intervals::{self, Adjustment};
use crate::uncertainty::moe::{self, Level};
use polars::prelude::*;
use std::collections::BTreeMap;

/// How to compute intervals.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum IntervalMethod {
    Joint(Adjustment),
    Simulate { draws: usize, seed: u64 },
}

#[derive(Debug, Clone, Copy)]
pub struct IntervalSettings {
    pub level: Level,
    pub method: IntervalMethod,
    pub order: Order,
}

impl IntervalSettings {
    pub fn describe(&self) -> String {
        match self.method {
            IntervalMethod::Joint(adjustment) => format!(
                "rank intervals: joint {}% confidence region for each ranking (Klein, Wright and Wieczorek 2020, {} critical value); ties: pairwise z-test at {}%",
                self.level.percent(),
                match adjustment {
                    Adjustment::Independence => "independence",
                    Adjustment::Bonferroni => "Bonferroni",
                },
                self.level.percent()
            ),
            IntervalMethod::Simulate { draws, seed } => format!(
                "rank intervals: {}% per-entity percentiles of {draws} simulated rankings (seed {seed}; not a joint region); ties: pairwise z-test at {}%",
                self.level.percent(),
                self.level.percent()
            ),
        }
    }
}

fn f64_column(frame: &DataFrame, name: &str) -> Result<Vec<Option<f64>>> {
    let column = frame
        .column(name)
        .map_err(Error::engine("reading values for rank intervals"))?;
    let ca = column
        .f64()
        .map_err(Error::engine("reading values for rank intervals"))?;
    Ok(ca.iter().collect())
}

fn i64_column(frame: &DataFrame, name: &str) -> Result<Vec<Option<i64>>> {
    let column = frame.column(name).map_err(Error::engine("reading ranks"))?;
    let cast = column
        .cast(&DataType::Int64)
        .map_err(Error::engine("reading ranks"))?;
    Ok(cast
        .i64()
        .map_err(Error::engine("reading ranks"))?
        .iter()
        .collect())
}

fn str_column(frame: &DataFrame, name: &str) -> Result<Vec<Option<String>>> {
    let column = frame.column(name).map_err(Error::engine("reading keys"))?;
    let cast = column
        .cast(&DataType::String)
        .map_err(Error::engine("reading keys"))?;
    Ok(cast
        .str()
        .map_err(Error::engine("reading keys"))?
        .iter()
        .map(|v| v.map(str::to_string))
        .collect())
}

/// Adds the interval and tie columns and updates `flags`.
pub fn add_intervals(frame: DataFrame, settings: &IntervalSettings) -> Result<DataFrame> {
    let n = frame.height();
    let groups = str_column(&frame, "group")?;
    let years = str_column(&frame, "year")?;
    let codes = str_column(&frame, "entity_code")?;
    let ranked = i64_column(&frame, "rank_adjusted")?;
    let mut flags_text = str_column(&frame, "flags")?;
    let mut partitions: BTreeMap<(Option<String>, Option<String>), Vec<usize>> = BTreeMap::new();
    for i in 0..n {
        if ranked[i].is_some() {
            partitions
                .entry((groups[i].clone(), years[i].clone()))
                .or_default()
                .push(i);
        }
    }
    let mut out: BTreeMap<&str, Vec<Option<i64>>> = BTreeMap::new();
    let mut tied_with: Vec<Option<String>> = vec![None; n];
    for track in ["baseline", "adjusted"] {
        let values = f64_column(&frame, &format!("value_{track}"))?;
        let ses = f64_column(&frame, &format!("_se_{track}"))?;
        let mut low = vec![None; n];
        let mut high = vec![None; n];
        for (index, rows) in partitions.values().enumerate() {
            let v: Vec<f64> = rows
                .iter()
                .map(|&i| values[i].unwrap_or(f64::NAN))
                .collect();
            let s: Vec<f64> = rows.iter().map(|&i| ses[i].unwrap_or(0.0)).collect();
            let ivs = partition_intervals(&v, &s, index, settings);
            for (k, &i) in rows.iter().enumerate() {
                low[i] = Some(ivs[k].0 as i64);
                high[i] = Some(ivs[k].1 as i64);
            }
            if track == "adjusted" {
                mark_ties(rows, &v, &s, settings, &codes, &ranked, &mut tied_with);
            }
        }
        out.insert(
            if track == "baseline" {
                "rank_baseline_low"
            } else {
                "rank_adjusted_low"
            },
            low,
        );
        out.insert(
            if track == "baseline" {
                "rank_baseline_high"
            } else {
                "rank_adjusted_high"
            },
            high,
        );
    }
    let shifts = i64_column(&frame, "rank_shift")?;
    flag_shifts_within_intervals(&shifts, &out, &mut flags_text);
    let mut frame = frame;
    for name in [
        "rank_baseline_low",
        "rank_baseline_high",
        "rank_adjusted_low",
        "rank_adjusted_high",
    ] {
        frame
            .with_column(Column::new(name.into(), out[name].clone()))
            .map_err(Error::engine("adding rank intervals"))?;
    }
    frame
        .with_column(Column::new("tied_with".into(), tied_with))
        .map_err(Error::engine("adding ties"))?;
    let flags_column: Vec<String> = flags_text
        .into_iter()
        .map(Option::unwrap_or_default)
        .collect();
    frame
        .with_column(Column::new("flags".into(), flags_column))
        .map_err(Error::engine("updating flags"))?;
    Ok(frame)
}

/// The rank intervals of one partition's values `v` with standard errors `s` (its `index`
/// seeds the simulation, so that results do not depend on the other partitions).
fn partition_intervals(
    v: &[f64],
    s: &[f64],
    index: usize,
    settings: &IntervalSettings,
) -> Vec<(usize, usize)> {
    match settings.method {
        IntervalMethod::Joint(adjustment) => {
            let alpha = 1.0 - settings.level.confidence();
            let critical = intervals::joint_critical(v.len(), alpha, adjustment);
            intervals::joint_intervals(v, s, critical, settings.order)
        }
        IntervalMethod::Simulate { draws, seed } => {
            // Each partition gets its own stream so results do not depend on the others.
            let seed = seed
                .wrapping_add(index as u64)
                .wrapping_mul(0x9E37_79B9_7F4A_7C15);
            intervals::simulated_intervals(
                v,
                s,
                draws,
                seed,
                settings.level.confidence(),
                settings.order,
            )
        }
    }
}

/// Flags `within_uncertainty` on each row whose rank moved while its baseline and adjusted
/// rank intervals overlap.
fn flag_shifts_within_intervals(
    shifts: &[Option<i64>],
    out: &BTreeMap<&str, Vec<Option<i64>>>,
    flags_text: &mut [Option<String>],
) {
    for i in 0..shifts.len() {
        let (Some(shift), Some(bl), Some(bh), Some(al), Some(ah)) = (
            shifts[i],
            out["rank_baseline_low"][i],
            out["rank_baseline_high"][i],
            out["rank_adjusted_low"][i],
            out["rank_adjusted_high"][i],
        ) else {
            continue;
        };
        if shift != 0 && bl <= ah && al <= bh {
            let text = flags_text[i].get_or_insert_with(String::new);
            if !text.is_empty() {
                text.push(';');
            }
            text.push_str(flags::WITHIN_UNCERTAINTY);
        }
    }
}

/// For each ranked row, the neighbours one rank position above and below (in adjusted order)
/// whose difference from it is not significant.
fn mark_ties(
    rows: &[usize],
    values: &[f64],
    ses: &[f64],
    settings: &IntervalSettings,
    codes: &[Option<String>],
    ranks: &[Option<i64>],
    tied_with: &mut [Option<String>],
) {
    let mut order: Vec<usize> = (0..rows.len()).collect();
    order.sort_by_key(|&k| (ranks[rows[k]].unwrap_or(i64::MAX), rows[k]));
    for (position, &k) in order.iter().enumerate() {
        let mut ties: Vec<String> = Vec::new();
        let neighbours = [position.checked_sub(1), Some(position + 1)];
        for m in neighbours
            .into_iter()
            .flatten()
            .filter(|&m| m < order.len())
        {
            let j = order[m];
            if !moe::differ(values[k], ses[k], values[j], ses[j], settings.level) {
                ties.push(codes[rows[j]].clone().unwrap_or_default());
            }
        }
        if !ties.is_empty() {
            tied_with[rows[k]] = Some(ties.join(";"));
        }
    }
}
