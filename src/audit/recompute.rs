//! Recomputing each claimed figure, comparing it within the rounding tolerance, and diagnosing
//! mismatches: market rate used for PPP (or the reverse), a neighbouring year's factor, a
//! per-capita scale slip, nominal figures labelled real, percentage points given as percent
//! change, a figure that belongs to another row, and ranks that do not follow the figures.

use super::claims::{half_unit, Claim, Role};
use super::{AuditSettings, Finding, Severity};
use crate::entity::EntityKind;
use crate::ingest::number::{self, Cell, NumberStyle};
use crate::ingest::Ingested;
use crate::rank::Order;
use crate::reference::{Kind, References};
use crate::resolve::EntityColumns;
use std::cell::Cell as Counter;
use std::collections::{BTreeMap, BTreeSet};

/// A comparison: group and year (no year for a cross-section).
type ComparisonKey = (Option<String>, Option<i32>);

/// One input row as the audit sees it.
struct Row {
    row_id: String,
    line: usize,
    entity: String,
    code: Option<String>,
    kind: Option<&'static str>,
    currency_stated: Option<String>,
    currency_own: Option<String>,
    year: Option<i32>,
    group: Option<String>,
    raw: Option<f64>,
    raw_text: String,
    /// Claimed cells (text) in the order of `claims`, then note cells.
    cells: Vec<String>,
}

pub struct Context<'a> {
    rows: Vec<Row>,
    claims: &'a [Claim],
    settings: &'a AuditSettings,
    references: &'a References,
    checked: Counter<usize>,
    /// Groups that are cross-sections spanning several years, found once from the rows.
    cross_sections: BTreeSet<Option<String>>,
}

/// A recomputed figure with the tolerance its raw figure's rounding carries.
#[derive(Debug, Clone, Copy)]
struct Recomputed {
    value: f64,
    raw_tolerance: f64,
}

impl<'a> Context<'a> {
    pub fn new(
        ingested: &Ingested,
        entities: &EntityColumns,
        claims: &'a [Claim],
        settings: &'a AuditSettings,
        references: &'a References,
    ) -> Self {
        let rows: Vec<Row> = ingested
            .rows
            .iter()
            .enumerate()
            .map(|(i, r)| Row {
                row_id: r.row_id.clone(),
                line: r.line,
                entity: entities.name[i]
                    .clone()
                    .unwrap_or_else(|| r.entity_input.clone()),
                code: entities.code[i].clone(),
                kind: entities.kind[i],
                currency_stated: r.currency.clone(),
                currency_own: entities.currency[i].clone(),
                year: r.year,
                group: r.group.clone(),
                raw: r.value,
                raw_text: r.value_input.clone(),
                cells: r.extra.clone(),
            })
            .collect();
        let cross_sections = cross_section_groups(&rows);
        Context {
            cross_sections,
            rows,
            claims,
            settings,
            references,
            checked: Counter::new(0),
        }
    }

    pub fn claims_checked(&self) -> usize {
        self.checked.get()
    }

    fn factor(&self, kind: Kind, code: &str, year: i32) -> Option<f64> {
        self.references
            .get(kind)?
            .lookup(code, year, 0)
            .map(|f| f.value)
    }

    fn claimed(&self, row: &Row, index: usize) -> Option<f64> {
        match number::parse_cell(&row.cells[index], NumberStyle::default()) {
            Ok(Cell::Number { float, .. }) => Some(float),
            _ => None,
        }
    }

    fn is_aggregate(row: &Row) -> bool {
        row.kind == Some(EntityKind::Aggregate.as_str())
    }

    /// The comparison a row belongs to: its group and year, or only its group when the table is
    /// a cross-section (each entity once) that spans several years.
    fn comparison(&self, row: &Row) -> (Option<String>, Option<i32>) {
        if self.cross_sections.contains(&row.group) {
            (row.group.clone(), None)
        } else {
            (row.group.clone(), row.year)
        }
    }

    /// The figure a claim of `role` should hold for `row`, using the factor of `year`.
    fn recompute(&self, role: Role, row: &Row, year: i32) -> Option<Recomputed> {
        let raw = row.raw?;
        let code = row.code.as_deref()?;
        let multiplier = self
            .settings
            .ingest
            .value_multiplier
            .map(number::to_f64)
            .unwrap_or(1.0);
        let raw_half = half_unit(&row.raw_text) * multiplier;
        let scaled = |factor: f64| Recomputed {
            value: raw * factor,
            raw_tolerance: raw_half * factor.abs(),
        };
        match role {
            Role::Usd => self.factor(Kind::Fx, code, year).map(|fx| scaled(1.0 / fx)),
            Role::Intl => self
                .factor(Kind::Ppp, code, year)
                .map(|ppp| scaled(1.0 / ppp)),
            Role::Real => {
                let base = self.factor(Kind::Cpi, code, self.settings.base_year?)?;
                self.factor(Kind::Cpi, code, year)
                    .map(|cpi| scaled(base / cpi))
            }
            Role::PerCapita => self
                .factor(Kind::Population, code, year)
                .map(|p| scaled(self.settings.per as f64 / p)),
            Role::Share => {
                let total: f64 = self.peers(row).filter_map(|r| r.raw).sum();
                (total > 0.0).then(|| scaled(100.0 / total))
            }
            Role::Change => {
                let (previous, previous_text) = self.previous(row)?;
                let value = (raw / previous - 1.0) * 100.0;
                let previous_half = half_unit(&previous_text) * multiplier;
                let tolerance = 100.0
                    * (raw_half / previous + raw.abs() * previous_half / (previous * previous));
                Some(Recomputed {
                    value,
                    raw_tolerance: tolerance,
                })
            }
            Role::Rank => None,
        }
    }

    /// Rows in the same comparison, aggregates left out.
    fn peers<'b>(&'b self, row: &'b Row) -> impl Iterator<Item = &'b Row> + 'b {
        let key = self.comparison(row);
        self.rows
            .iter()
            .filter(move |r| self.comparison(r) == key && !Self::is_aggregate(r))
    }

    /// The same entity's raw figure in the latest earlier year of the table.
    fn previous(&self, row: &Row) -> Option<(f64, String)> {
        let year = row.year?;
        self.rows
            .iter()
            .filter(|r| {
                r.code == row.code
                    && r.group == row.group
                    && r.year.is_some_and(|y| y < year)
                    && r.raw.is_some()
            })
            .max_by_key(|r| r.year)
            .map(|r| (r.raw.unwrap_or_default(), r.raw_text.clone()))
    }

    fn finding(
        &self,
        severity: Severity,
        row: &Row,
        check: &str,
        claimed: Option<f64>,
        recomputed: Option<f64>,
        cause: String,
    ) -> Finding {
        let relative_difference = match (claimed, recomputed) {
            (Some(c), Some(r)) if r != 0.0 => Some((c - r) / r.abs()),
            _ => None,
        };
        Finding {
            severity,
            row_id: row.row_id.clone(),
            line: row.line,
            entity: row.entity.clone(),
            check: check.to_string(),
            claimed,
            recomputed,
            relative_difference,
            cause,
        }
    }

    pub fn check_claims(&self) -> Vec<Finding> {
        let mut out = Vec::new();
        for (index, claim) in self.claims.iter().enumerate() {
            if claim.role == Role::Rank {
                out.extend(self.check_ranks(index));
                continue;
            }
            for row in &self.rows {
                let Some(claimed) = self.claimed(row, index) else {
                    continue;
                };
                let Some(year) = row.year else { continue };
                let Some(expected) = self.recompute(claim.role, row, year) else {
                    continue;
                };
                self.checked.set(self.checked.get() + 1);
                let tolerance = half_unit(&row.cells[index]) + expected.raw_tolerance;
                if (claimed - expected.value).abs() <= tolerance * (1.0 + 1e-9) {
                    continue;
                }
                let cause = self.diagnose(claim.role, row, index, claimed, tolerance).unwrap_or_else(|| {
                    format!("the claimed {} figure does not match the recomputation; ask the source how it was computed", claim.role.describe())
                });
                out.push(self.finding(
                    Severity::Error,
                    row,
                    claim.role.name(),
                    Some(claimed),
                    Some(expected.value),
                    cause,
                ));
            }
            if claim.role == Role::Share {
                out.extend(self.check_share_totals(index));
            }
        }
        out
    }

    fn diagnose(
        &self,
        role: Role,
        row: &Row,
        index: usize,
        claimed: f64,
        tolerance: f64,
    ) -> Option<String> {
        let year = row.year?;
        let close = |value: f64| (claimed - value).abs() <= tolerance * (1.0 + 1e-9) + 1e-12;
        let code = row.code.as_deref()?;
        let raw = row.raw?;
        match role {
            Role::Intl => {
                if let Some(fx) = self.factor(Kind::Fx, code, year) {
                    if close(raw / fx) {
                        return Some(
                            "the market exchange rate was used where a PPP conversion is claimed"
                                .into(),
                        );
                    }
                }
            }
            Role::Usd => {
                if let Some(ppp) = self.factor(Kind::Ppp, code, year) {
                    if close(raw / ppp) {
                        return Some(
                            "a PPP was used where a market-rate conversion is claimed".into(),
                        );
                    }
                }
            }
            Role::Real => {
                if close(raw) {
                    return Some(format!("nominal figures are labelled as real: no deflation to {} prices was applied", self.settings.base_year?));
                }
            }
            Role::PerCapita => {
                if let Some(expected) = self.recompute(role, row, year) {
                    for power in [-6, -5, -4, -3, -2, -1, 1, 2, 3, 4, 5, 6] {
                        let factor = 10f64.powi(power);
                        if (claimed - expected.value * factor).abs()
                            <= tolerance * factor.max(1.0) * (1.0 + 1e-9)
                        {
                            let actual = self.settings.per as f64 * factor;
                            return Some(format!(
                                "scale slip: the figure is per {} people but the table says per {}",
                                group_digits(actual),
                                group_digits(self.settings.per as f64)
                            ));
                        }
                    }
                }
            }
            Role::Change => {
                if let Some((previous, _)) = self.previous(row) {
                    if close(raw - previous) {
                        return Some("percentage points are given as a percent change".into());
                    }
                }
            }
            Role::Share | Role::Rank => {}
        }
        if matches!(role, Role::Usd | Role::Intl | Role::Real | Role::PerCapita) {
            for distance in [-1, 1, -2, 2] {
                if let Some(other) = self.recompute(role, row, year + distance) {
                    if close(other.value) {
                        let kind = match role {
                            Role::Usd => "market exchange rate",
                            Role::Intl => "PPP",
                            Role::Real => "consumer price index",
                            _ => "population",
                        };
                        return Some(format!(
                            "the {kind} of {} was used instead of {year}'s",
                            year + distance
                        ));
                    }
                }
            }
        }
        // A figure that matches another row's recomputation: the rows have slipped.
        for other in self.rows.iter().filter(|o| o.line != row.line) {
            let Some(other_year) = other.year else {
                continue;
            };
            if let Some(expected) = self.recompute(role, other, other_year) {
                let tolerance_other = half_unit(&row.cells[index]) + expected.raw_tolerance;
                if (claimed - expected.value).abs() <= tolerance_other * (1.0 + 1e-9) {
                    return Some(format!("the figure matches the recomputation for {} (line {}): the rows appear shifted", other.entity, other.line));
                }
            }
        }
        None
    }

    fn check_share_totals(&self, index: usize) -> Vec<Finding> {
        let mut totals: BTreeMap<ComparisonKey, (f64, f64, usize)> = BTreeMap::new();
        for row in self.rows.iter().filter(|r| !Self::is_aggregate(r)) {
            if let Some(share) = self.claimed(row, index) {
                let entry = totals.entry(self.comparison(row)).or_default();
                entry.0 += share;
                entry.1 += half_unit(&row.cells[index]);
                entry.2 = row.line;
            }
        }
        let mut out = Vec::new();
        for ((_, _), (sum, tolerance, line)) in totals {
            if (sum - 100.0).abs() > tolerance * (1.0 + 1e-9) {
                if let Some(row) = self.rows.iter().find(|r| r.line == line) {
                    out.push(self.finding(
                        Severity::Warning,
                        row,
                        "share",
                        Some(sum),
                        Some(100.0),
                        format!("the shares of this comparison add up to {sum}, not 100 (beyond what rounding explains)"),
                    ));
                }
            }
        }
        out
    }

    /// The column ranks are meant to follow: the first claimed value column, else the raw figure.
    fn rank_basis(&self) -> Option<(usize, Role)> {
        [
            Role::Intl,
            Role::Usd,
            Role::Real,
            Role::PerCapita,
            Role::Share,
            Role::Change,
        ]
        .into_iter()
        .find_map(|role| {
            self.claims
                .iter()
                .position(|c| c.role == role)
                .map(|i| (i, role))
        })
    }

    fn check_ranks(&self, index: usize) -> Vec<Finding> {
        let mut out = Vec::new();
        let basis = self.rank_basis();
        let descending = self.settings.order == Order::Desc;
        let mut comparisons: BTreeMap<(Option<String>, Option<i32>), Vec<&Row>> = BTreeMap::new();
        for row in &self.rows {
            let Some(claimed_rank) = self.claimed(row, index) else {
                continue;
            };
            if Self::is_aggregate(row) {
                out.push(self.finding(
                    Severity::Error,
                    row,
                    "rank",
                    Some(claimed_rank),
                    None,
                    format!(
                        "{} is an aggregate but is ranked among countries",
                        row.entity
                    ),
                ));
                continue;
            }
            comparisons
                .entry(self.comparison(row))
                .or_default()
                .push(row);
        }
        for rows in comparisons.values() {
            let claimed_basis: Vec<Option<f64>> = rows
                .iter()
                .map(|r| match basis {
                    Some((i, _)) => self.claimed(r, i),
                    None => r.raw,
                })
                .collect();
            let recomputed_basis: Vec<Option<f64>> = rows
                .iter()
                .map(|r| match (basis, r.year) {
                    (Some((_, role)), Some(year)) => self.recompute(role, r, year).map(|x| x.value),
                    (None, _) => r.raw,
                    _ => None,
                })
                .collect();
            let own = competition_ranks(&claimed_basis, descending);
            let recomputed = competition_ranks(&recomputed_basis, descending);
            for (k, row) in rows.iter().enumerate() {
                let Some(claimed_rank) = self.claimed(row, index) else {
                    continue;
                };
                self.checked.set(self.checked.get() + 1);
                if let Some(expected) = own[k] {
                    if (claimed_rank - expected as f64).abs() > 0.0 {
                        out.push(self.finding(
                            Severity::Error,
                            row,
                            "rank",
                            Some(claimed_rank),
                            Some(expected as f64),
                            "the rank does not follow the table's own figures (ties share the lowest rank, and the next rank is skipped)".into(),
                        ));
                        continue;
                    }
                }
                if let Some(expected) = recomputed[k] {
                    if (claimed_rank - expected as f64).abs() > 0.0 && basis.is_some() {
                        out.push(self.finding(
                            Severity::Error,
                            row,
                            "rank",
                            Some(claimed_rank),
                            Some(expected as f64),
                            "the rank changes once the figures are recomputed from the reference tables".into(),
                        ));
                    }
                }
            }
        }
        out
    }

    pub fn check_coverage(&self) -> Vec<Finding> {
        let mut out = Vec::new();
        let needs: BTreeSet<Kind> = self
            .claims
            .iter()
            .filter_map(|c| match c.role {
                Role::Usd => Some(Kind::Fx),
                Role::Intl => Some(Kind::Ppp),
                Role::Real => Some(Kind::Cpi),
                Role::PerCapita => Some(Kind::Population),
                _ => None,
            })
            .collect();
        for row in &self.rows {
            let (Some(code), Some(year)) = (row.code.as_deref(), row.year) else {
                continue;
            };
            if row.raw.is_none() {
                continue;
            }
            for kind in &needs {
                let Some(table) = self.references.get(*kind) else {
                    out.push(self.finding(
                        Severity::Warning,
                        row,
                        "coverage",
                        None,
                        None,
                        format!("the reference catalog has no {} table", kind.as_str()),
                    ));
                    continue;
                };
                if self.factor(*kind, code, year).is_none() {
                    let cause = match table.years() {
                        Some((first, last)) if year < first || year > last => {
                            format!(
                                "{year} is outside the {} table's years ({first}-{last})",
                                kind.as_str()
                            )
                        }
                        _ => format!("no {} factor for {} in {year}", kind.as_str(), row.entity),
                    };
                    out.push(self.finding(Severity::Warning, row, "coverage", None, None, cause));
                }
            }
            if let (Some(stated), Some(own)) = (&row.currency_stated, &row.currency_own) {
                if stated != own {
                    out.push(self.finding(
                        Severity::Warning,
                        row,
                        "currency",
                        None,
                        None,
                        format!("the figure is stated in {stated}, but {}'s reference tables are in {own}", row.entity),
                    ));
                }
            }
        }
        for group in self.cross_sections.clone() {
            let years: BTreeSet<i32> = self
                .rows
                .iter()
                .filter(|r| r.group == group)
                .filter_map(|r| r.year)
                .collect();
            if let Some(row) = self.rows.iter().find(|r| r.group == group) {
                let list: Vec<String> = years.iter().map(|y| y.to_string()).collect();
                out.push(self.finding(
                    Severity::Warning,
                    row,
                    "mixed years",
                    None,
                    None,
                    format!("this comparison mixes figures from different years ({}); say so, or compare one year", list.join(", ")),
                ));
            }
        }
        out
    }

    pub fn check_provenance(&self) -> Vec<Finding> {
        let notes = &self.settings.notes;
        let base = self.claims.len();
        let mut position = base;
        let mut next = |present: bool| {
            present.then(|| {
                position += 1;
                position - 1
            })
        };
        let n_index = next(notes.n.is_some());
        let source_index = next(notes.source.is_some());
        let coverage_index = next(notes.coverage.is_some());
        let mut out = Vec::new();
        for row in &self.rows {
            if let Some(i) = n_index {
                if let Ok(Cell::Number { value, .. }) =
                    number::parse_cell(&row.cells[i], NumberStyle::default())
                {
                    let n = number::to_f64(value);
                    if n < self.settings.min_n {
                        out.push(self.finding(
                            Severity::Caution,
                            row,
                            "sample",
                            Some(n),
                            None,
                            format!(
                                "the figure rests on a sample of {n}, below {}",
                                self.settings.min_n
                            ),
                        ));
                    }
                }
            }
            if let Some(i) = source_index {
                if row.cells[i].trim().is_empty() {
                    out.push(self.finding(
                        Severity::Caution,
                        row,
                        "source",
                        None,
                        None,
                        "no source is given for this figure".into(),
                    ));
                }
            }
            if let Some(i) = coverage_index {
                let text = row.cells[i].to_lowercase();
                if ["city", "capital", "urban", "single", "one "]
                    .iter()
                    .any(|w| text.contains(w))
                {
                    out.push(self.finding(
                        Severity::Caution,
                        row,
                        "coverage note",
                        None,
                        None,
                        format!(
                            "\"{}\" stands for the whole of {}",
                            row.cells[i].trim(),
                            row.entity
                        ),
                    ));
                }
            }
        }
        out
    }
}

/// Groups in which each entity appears once but the years differ: a cross-section mixing years.
fn cross_section_groups(rows: &[Row]) -> BTreeSet<Option<String>> {
    let mut entities: BTreeMap<Option<String>, (BTreeSet<String>, BTreeSet<i32>, usize)> =
        BTreeMap::new();
    for row in rows {
        let entry = entities.entry(row.group.clone()).or_default();
        entry
            .0
            .insert(row.code.clone().unwrap_or_else(|| row.entity.clone()));
        entry.1.extend(row.year);
        entry.2 += 1;
    }
    entities
        .into_iter()
        .filter(|(_, (e, y, n))| e.len() == *n && y.len() > 1)
        .map(|(g, _)| g)
        .collect()
}

/// Standard competition ranks ("1224"), None for missing values.
fn competition_ranks(values: &[Option<f64>], descending: bool) -> Vec<Option<usize>> {
    values
        .iter()
        .map(|v| {
            let v = (*v)?;
            let better = values
                .iter()
                .flatten()
                .filter(|w| if descending { **w > v } else { **w < v })
                .count();
            Some(1 + better)
        })
        .collect()
}

fn group_digits(value: f64) -> String {
    crate::report::format::format_number(value, crate::report::format::Rounding::Decimals(0), true)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn competition_ranks_share_the_lowest_rank_on_ties() {
        // Standard competition ranking (common practice, no source).
        let ranks = competition_ranks(&[Some(3.0), Some(5.0), Some(5.0), None, Some(1.0)], true);
        assert_eq!(ranks, vec![Some(3), Some(1), Some(1), None, Some(4)]);
    }
}
