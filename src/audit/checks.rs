//! What the audit has of its own: the rounding tolerance of each claim, the comparison with the
//! engine's figure, the diagnoses that explain a mismatch (each tried only where it brings the
//! recomputation within tolerance of the claim), the share and change comparisons, the rank
//! checks, and the coverage, currency, mixed-year and provenance checks.

use super::claims::{half_unit, Claim, Role};
use super::routes::{Engine, Row, Variant};
use super::{AuditSettings, Finding, Severity};
use crate::cells::number::{self, Cell, NumberStyle};
use crate::entity::EntityKind;
use crate::error::{Error, Result};
use crate::flags;
use crate::reference::Kind;
use std::cell::Cell as Counter;
use std::collections::{BTreeMap, BTreeSet, HashSet};

/// A comparison: group and year (no year for a cross-section).
type Comparison = (Option<String>, Option<i32>);

/// Relative slack on every tolerance, for the last bits of floating point (common practice).
const SLACK: f64 = 1e-9;
/// Rows around a mismatched row whose figures a "rows shifted" diagnosis looks at.
const SHIFT_REACH: usize = 25;

pub struct Checks<'a> {
    pub rows: Vec<Row>,
    claims: &'a [Claim],
    settings: &'a AuditSettings,
    engine: &'a Engine<'a>,
    checked: Counter<usize>,
    /// Groups that are cross-sections spanning several years, found once from the rows.
    cross_sections: BTreeSet<Option<String>>,
}

impl<'a> Checks<'a> {
    pub fn new(
        rows: Vec<Row>,
        claims: &'a [Claim],
        settings: &'a AuditSettings,
        engine: &'a Engine<'a>,
    ) -> Self {
        let cross_sections = cross_section_groups(&rows);
        Checks {
            rows,
            claims,
            settings,
            engine,
            checked: Counter::new(0),
            cross_sections,
        }
    }

    pub fn claims_checked(&self) -> usize {
        self.checked.get()
    }

    fn claimed(&self, row: &Row, index: usize) -> Option<f64> {
        match number::parse_cell(&row.cells[index], NumberStyle::default()) {
            Ok(Cell::Number { float, .. }) => Some(float),
            _ => None,
        }
    }

    fn is_aggregate(row: &Row) -> bool {
        row.kind.as_deref() == Some(EntityKind::Aggregate.as_str())
    }

    /// The comparison a row belongs to: its group and year, or only its group when the table is
    /// a cross-section (each entity once) that spans several years.
    fn comparison(&self, row: &Row) -> Comparison {
        if self.cross_sections.contains(&row.group) {
            (row.group.clone(), None)
        } else {
            (row.group.clone(), row.year)
        }
    }

    fn comparison_key(&self, row: &Row) -> String {
        let (group, year) = self.comparison(row);
        format!(
            "{}\u{1f}{}",
            group.unwrap_or_default(),
            year.map(|y| y.to_string()).unwrap_or_default()
        )
    }

    fn multiplier(&self) -> f64 {
        self.settings
            .pipeline
            .ingest
            .value_multiplier
            .map(number::to_f64)
            .unwrap_or(1.0)
    }

    /// Half a unit of the raw figure's last digit, in the figure's unit (after the multiplier).
    fn raw_half(&self, row: &Row) -> f64 {
        half_unit(&row.value_text) * self.multiplier()
    }

    /// Half a unit of the raw figure's last digit carried through the factors that turned the
    /// raw figure into `recomputed` (their product is recomputed / raw).
    fn carried(&self, row: &Row, recomputed: f64) -> f64 {
        match row.value {
            Some(v) if v != 0.0 => self.raw_half(row) * (recomputed / v).abs(),
            _ => 0.0,
        }
    }

    /// The tolerance of a claim against `recomputed`: half a unit of the claim's last digit plus
    /// the raw figure's rounding carried through (common practice in statistical publishing: a
    /// printed figure is exact to half a unit of its last digit).
    fn tolerance(&self, row: &Row, index: usize, recomputed: f64) -> f64 {
        half_unit(&row.cells[index]) + self.carried(row, recomputed)
    }

    fn within(&self, row: &Row, index: usize, claimed: f64, recomputed: f64) -> bool {
        (claimed - recomputed).abs()
            <= self.tolerance(row, index, recomputed) * (1.0 + SLACK) + 1e-12
    }

    pub fn finding(
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

    pub fn check_claims(&self) -> Result<Vec<Finding>> {
        let mut out = Vec::new();
        for (index, claim) in self.claims.iter().enumerate() {
            match claim.role() {
                Role::Rank => out.extend(self.check_ranks(index)?),
                Role::Share | Role::Change => out.extend(self.check_comparison(index, claim)),
                _ => out.extend(self.check_route(index, claim)?),
            }
            if claim.role() == Role::Share {
                out.extend(self.check_share_totals(index));
            }
        }
        Ok(out)
    }

    /// The route a claim is read from: the longest claimed route that starts with the claim's
    /// own, so that `real` and `real+intl` are stages of one run, as in `adjust`.
    fn full_route(&self, route: &[Role]) -> Vec<Role> {
        self.claims
            .iter()
            .filter(|c| c.route.starts_with(route) && c.route.iter().all(|r| r.step().is_some()))
            .map(|c| c.route.clone())
            .max_by_key(|r| r.len())
            .unwrap_or_else(|| route.to_vec())
    }

    /// The figures of a claim's stage in a variant of its full route.
    fn stage(&self, route: &[Role], variant: Variant) -> Result<Option<Vec<Option<f64>>>> {
        let full = self.full_route(route);
        Ok(self
            .engine
            .route(&full, variant)?
            .and_then(|run| run.stage(route, variant).cloned()))
    }

    /// A claim made by steps: the engine's figure for its stage, then the diagnoses.
    fn check_route(&self, index: usize, claim: &Claim) -> Result<Vec<Finding>> {
        let Some(values) = self.stage(&claim.route, Variant::AsClaimed)? else {
            return Ok(Vec::new());
        };
        let mut out = Vec::new();
        for (i, row) in self.rows.iter().enumerate() {
            let (Some(claimed), Some(expected)) = (self.claimed(row, index), values[i]) else {
                continue;
            };
            self.checked.set(self.checked.get() + 1);
            if self.within(row, index, claimed, expected) {
                continue;
            }
            let cause = self.diagnose_route(claim, index, i, claimed, &values)?.unwrap_or_else(|| {
                format!("the claimed figure ({}) does not match the recomputation; ask the source how it was computed", claim.describe())
            });
            out.push(self.finding(
                Severity::Error,
                row,
                &claim.name(),
                Some(claimed),
                Some(expected),
                cause,
            ));
        }
        Ok(out)
    }

    fn diagnose_route(
        &self,
        claim: &Claim,
        index: usize,
        i: usize,
        claimed: f64,
        values: &[Option<f64>],
    ) -> Result<Option<String>> {
        let row = &self.rows[i];
        let explains = |variant: Variant| -> Result<bool> {
            Ok(self
                .stage(&claim.route, variant)?
                .and_then(|alt| alt[i])
                .is_some_and(|v| self.within(row, index, claimed, v)))
        };
        if explains(Variant::Swapped)? {
            let cause = if claim.route.contains(&Role::Intl) {
                "the market exchange rate was used where a PPP conversion is claimed"
            } else {
                "a PPP was used where a market-rate conversion is claimed"
            };
            return Ok(Some(cause.into()));
        }
        if explains(Variant::Nominal)? {
            return Ok(Some(format!(
                "nominal figures are labelled as real: no deflation to {} prices was applied",
                self.settings
                    .pipeline
                    .step_settings
                    .base_year
                    .unwrap_or_default()
            )));
        }
        if let (true, Some(expected)) = (claim.route.contains(&Role::PerCapita), values[i]) {
            if let Some(cause) = self.scale_slip(row, index, claimed, expected) {
                return Ok(Some(cause));
            }
        }
        if let Some(year) = row.year {
            for role in claim.route.iter().rev() {
                let Some((kind, words)) = factor_of(*role) else {
                    continue;
                };
                for distance in [-1, 1, -2, 2] {
                    if explains(Variant::YearOffset(kind, distance))? {
                        return Ok(Some(format!(
                            "the {words} of {} was used instead of {year}'s",
                            year + distance
                        )));
                    }
                }
            }
        }
        Ok(self.shifted_rows(index, i, claimed, values))
    }

    /// The claim is the recomputation times a power of ten: another per-capita scale.
    fn scale_slip(&self, row: &Row, index: usize, claimed: f64, expected: f64) -> Option<String> {
        let per = self.settings.pipeline.step_settings.per as f64;
        [-6, -5, -4, -3, -2, -1, 1, 2, 3, 4, 5, 6]
            .into_iter()
            .find_map(|power| {
                let factor = 10f64.powi(power);
                self.within(row, index, claimed, expected * factor)
                    .then(|| {
                        if per * factor >= 1.0 {
                            format!(
                                "scale slip: the figure is per {} people but the table says per {}",
                                group_digits(per * factor),
                                group_digits(per)
                            )
                        } else {
                            // Fewer than one person: the figure's unit slipped, not the per.
                            format!(
                                "scale slip: the figure is 1/{0} of the recomputation, as if written in a unit {0} times larger",
                                group_digits(1.0 / factor)
                            )
                        }
                    })
            })
    }

    /// The claim matches another row's recomputation: the rows have slipped.
    fn shifted_rows(
        &self,
        index: usize,
        i: usize,
        claimed: f64,
        values: &[Option<f64>],
    ) -> Option<String> {
        let row = &self.rows[i];
        let near = i.saturating_sub(SHIFT_REACH)..(i + SHIFT_REACH + 1).min(self.rows.len());
        near.filter(|&j| j != i).find_map(|j| {
            let other = &self.rows[j];
            let expected = values[j]?;
            let tolerance = half_unit(&row.cells[index]) + self.carried(other, expected);
            ((claimed - expected).abs() <= tolerance * (1.0 + SLACK)).then(|| {
                format!(
                    "the figure matches the recomputation for {} (line {}): the rows appear shifted",
                    other.entity, other.line
                )
            })
        })
    }

    /// Share of the comparison's total, and percent change from the entity's previous year.
    fn check_comparison(&self, index: usize, claim: &Claim) -> Vec<Finding> {
        let mut out = Vec::new();
        for row in &self.rows {
            let Some(claimed) = self.claimed(row, index) else {
                continue;
            };
            let Some((expected, tolerance, previous)) =
                self.comparison_figure(claim.role(), row, index)
            else {
                continue;
            };
            self.checked.set(self.checked.get() + 1);
            if (claimed - expected).abs() <= tolerance * (1.0 + SLACK) {
                continue;
            }
            let points = previous
                .zip(row.value)
                .is_some_and(|(p, v)| (claimed - (v - p)).abs() <= tolerance * (1.0 + SLACK));
            let cause = if points {
                "percentage points are given as a percent change".to_string()
            } else {
                format!(
                    "the claimed {} does not match the recomputation from the table's own figures",
                    claim.role().describe()
                )
            };
            out.push(self.finding(
                Severity::Error,
                row,
                claim.role().name(),
                Some(claimed),
                Some(expected),
                cause,
            ));
        }
        out
    }

    /// (figure, tolerance, previous raw value) of a share or change claim.
    fn comparison_figure(
        &self,
        role: Role,
        row: &Row,
        index: usize,
    ) -> Option<(f64, f64, Option<f64>)> {
        let raw = row.value?;
        let raw_half = self.raw_half(row);
        let claim_half = half_unit(&row.cells[index]);
        match role {
            Role::Share => {
                let key = self.comparison(row);
                let total: f64 = self
                    .rows
                    .iter()
                    .filter(|r| self.comparison(r) == key && !Self::is_aggregate(r))
                    .filter_map(|r| r.value)
                    .sum();
                (total > 0.0).then(|| {
                    (
                        raw * 100.0 / total,
                        claim_half + raw_half * 100.0 / total,
                        None,
                    )
                })
            }
            _ => {
                let (previous, previous_text) = self.previous(row)?;
                let value = (raw / previous - 1.0) * 100.0;
                let previous_half = half_unit(&previous_text) * self.multiplier();
                let tolerance = 100.0
                    * (raw_half / previous + raw.abs() * previous_half / (previous * previous));
                Some((value, claim_half + tolerance, Some(previous)))
            }
        }
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
                    && r.value.is_some()
            })
            .max_by_key(|r| r.year)
            .map(|r| (r.value.unwrap_or_default(), r.value_text.clone()))
    }

    fn check_share_totals(&self, index: usize) -> Vec<Finding> {
        let mut totals: BTreeMap<Comparison, (f64, f64, usize)> = BTreeMap::new();
        for (i, row) in self
            .rows
            .iter()
            .enumerate()
            .filter(|(_, r)| !Self::is_aggregate(r))
        {
            if let Some(share) = self.claimed(row, index) {
                let entry = totals.entry(self.comparison(row)).or_default();
                entry.0 += share;
                entry.1 += half_unit(&row.cells[index]);
                entry.2 = i;
            }
        }
        totals
            .into_values()
            .filter(|(sum, tolerance, _)| (sum - 100.0).abs() > tolerance * (1.0 + SLACK))
            .map(|(sum, _, i)| {
                self.finding(Severity::Warning, &self.rows[i], "share", Some(sum), Some(100.0),
                    format!("the shares of this comparison add up to {sum}, not 100 (beyond what rounding explains)"))
            })
            .collect()
    }

    /// The claim ranks follow: the longest route claimed (the most adjusted figure), the first
    /// given among equals; without one, the raw figures.
    fn rank_basis(&self) -> Option<usize> {
        let mut best: Option<usize> = None;
        for (i, claim) in self.claims.iter().enumerate() {
            if claim.route.iter().all(|r| r.step().is_some())
                && best.is_none_or(|b| claim.route.len() > self.claims[b].route.len())
            {
                best = Some(i);
            }
        }
        best
    }

    fn check_ranks(&self, index: usize) -> Result<Vec<Finding>> {
        let mut out = Vec::new();
        let basis = self.rank_basis();
        let recomputed_run = match basis {
            Some(b) => self.stage(&self.claims[b].route, Variant::AsClaimed)?,
            None => None,
        };
        let rankable = |row: &Row| !Self::is_aggregate(row) && self.claimed(row, index).is_some();
        let claimed_basis: Vec<Option<f64>> = self
            .rows
            .iter()
            .map(|r| {
                if !rankable(r) {
                    None
                } else {
                    match basis {
                        Some(b) => self.claimed(r, b),
                        None => r.value,
                    }
                }
            })
            .collect();
        let recomputed_basis: Vec<Option<f64>> = self
            .rows
            .iter()
            .enumerate()
            .map(|(i, r)| {
                if !rankable(r) {
                    None
                } else {
                    match &recomputed_run {
                        Some(values) => values[i],
                        None => r.value,
                    }
                }
            })
            .collect();
        let keys: Vec<String> = self.rows.iter().map(|r| self.comparison_key(r)).collect();
        let order = self.settings.pipeline.order;
        let engine_error = Error::engine("ranking the audited figures");
        let own =
            crate::rank::ranks_of(claimed_basis, keys.clone(), order).map_err(engine_error)?;
        let recomputed = crate::rank::ranks_of(recomputed_basis, keys, order)
            .map_err(Error::engine("ranking the audited figures"))?;
        for (k, row) in self.rows.iter().enumerate() {
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
            self.checked.set(self.checked.get() + 1);
            if let Some(expected) = own[k] {
                if claimed_rank != expected as f64 {
                    out.push(self.finding(Severity::Error, row, "rank", Some(claimed_rank), Some(expected as f64),
                        "the rank does not follow the table's own figures (ties share the lowest rank, and the next rank is skipped)".into()));
                    continue;
                }
            }
            if let (Some(expected), Some(_)) = (recomputed[k], basis) {
                if claimed_rank != expected as f64 {
                    out.push(self.finding(Severity::Error, row, "rank", Some(claimed_rank), Some(expected as f64),
                        "the rank changes once the figures are recomputed from the reference tables".into()));
                }
            }
        }
        Ok(out)
    }

    /// Missing factors and currencies no step can convert, from the engine's own flags.
    pub fn check_coverage(&self) -> Result<Vec<Finding>> {
        let mut out = Vec::new();
        let mut said: HashSet<(usize, String)> = HashSet::new();
        for claim in self.claims.iter().filter(|c| !c.steps().is_empty()) {
            let Some(run) = self
                .engine
                .route(&self.full_route(&claim.route), Variant::AsClaimed)?
            else {
                continue;
            };
            for (i, row) in self.rows.iter().enumerate() {
                if row.value.is_none() {
                    continue;
                }
                for flag in run.flags[i].split(';').filter(|f| !f.is_empty()) {
                    let finding = match flag {
                        flags::CURRENCY_MISMATCH => Some(("currency", format!(
                            "the figure is in {}, which is neither {}'s own currency nor the reference tables' base currency: no step converts it",
                            row.currency.as_deref().unwrap_or("another currency"), row.entity))),
                        f if f.starts_with("no_") && f != flags::NO_BASELINE && f != flags::NO_MARGIN => Some(("coverage", self.missing_factor(row, f))),
                        _ => None,
                    };
                    if let Some((check, cause)) = finding {
                        if said.insert((i, cause.clone())) {
                            out.push(self.finding(
                                Severity::Warning,
                                row,
                                check,
                                None,
                                None,
                                cause,
                            ));
                        }
                    }
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
                out.push(self.finding(Severity::Warning, row, "mixed_years", None, None,
                    format!("this comparison mixes figures from different years ({}); say so, or compare one year", list.join(", "))));
            }
        }
        Ok(out)
    }

    /// The cause of a `no_<kind>` flag, in words.
    fn missing_factor(&self, row: &Row, flag: &str) -> String {
        let base_year = flag.ends_with("_base_year");
        let name = flag
            .trim_start_matches("no_")
            .trim_end_matches("_base_year")
            .trim_end_matches("_year");
        let kind_name = name.trim_start_matches("base_").trim_end_matches("_base");
        let kind = Kind::ALL.into_iter().find(|k| k.as_str() == kind_name);
        let year = row.year.unwrap_or_default();
        if base_year {
            return format!("no {kind_name} factor for {} in the base year", row.entity);
        }
        match kind
            .and_then(|k| self.engine.references.get(k))
            .and_then(|t| t.years())
        {
            Some((first, last)) if year < first || year > last => {
                format!("{year} is outside the {kind_name} table's years ({first}-{last})")
            }
            _ => format!("no {kind_name} factor for {} in {year}", row.entity),
        }
    }

    pub fn check_provenance(&self) -> Vec<Finding> {
        let notes = &self.settings.notes;
        let mut position = self.claims.len();
        let mut next = |present: bool| {
            present.then(|| {
                position += 1;
                position - 1
            })
        };
        let (n_index, source_index, coverage_index) = (
            next(notes.n.is_some()),
            next(notes.source.is_some()),
            next(notes.coverage.is_some()),
        );
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
            if source_index.is_some_and(|i| row.cells[i].trim().is_empty()) {
                out.push(self.finding(
                    Severity::Caution,
                    row,
                    "source",
                    None,
                    None,
                    "no source is given for this figure".into(),
                ));
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
                        "coverage_note",
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

/// The row-year factor a step of `role` divides or multiplies by, and its name in a diagnosis.
fn factor_of(role: Role) -> Option<(Kind, &'static str)> {
    match role {
        Role::Usd => Some((Kind::Fx, "market exchange rate")),
        Role::Intl => Some((Kind::Ppp, "PPP")),
        Role::Real => Some((Kind::Cpi, "consumer price index")),
        Role::PerCapita => Some((Kind::Population, "population")),
        Role::PerIncome => Some((Kind::Income, "income per capita")),
        Role::Share | Role::Change | Role::Rank => None,
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

fn group_digits(value: f64) -> String {
    crate::report::format::format_number(value, crate::report::format::Rounding::Decimals(0), true)
}
