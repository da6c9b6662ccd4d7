//! `levelfield audit`: recompute what a received table claims from its raw figures and the
//! user's reference tables, explain every claim that does not hold, and gate publication with an
//! exit code.
//!
//! - `claims`: claim roles, header suggestions, the rounding tolerance
//! - `recompute`: the figure each claim should have, and the diagnoses for a mismatch
//! - `report`: the findings as a terminal report, a Markdown memo or JSON

pub mod claims;
pub mod recompute;
pub mod report;

use crate::entity::Resolver;
use crate::error::{Error, Result};
use crate::ingest::{self, IngestOptions};
use crate::rank::Order;
use crate::reference::References;
use crate::resolve::{self, ResolveOptions};
use claims::{Claim, Role};

/// How serious a finding is. Ordered from most to least serious.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, clap::ValueEnum, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Severity {
    /// A claim that does not hold.
    Error,
    /// Coverage problems: missing factors, mixed years, currency mismatches, shares off 100.
    Warning,
    /// Provenance notes: small samples, missing or narrow sources.
    Caution,
}

impl Severity {
    pub fn name(self) -> &'static str {
        match self {
            Severity::Error => "error",
            Severity::Warning => "warning",
            Severity::Caution => "caution",
        }
    }
}

/// One thing the audit found.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Finding {
    pub severity: Severity,
    pub row_id: String,
    pub line: usize,
    pub entity: String,
    pub check: String,
    pub claimed: Option<f64>,
    pub recomputed: Option<f64>,
    pub relative_difference: Option<f64>,
    pub cause: String,
}

/// Provenance columns (`--note-cols n=COL,source=COL,coverage=COL`).
#[derive(Debug, Clone, Default)]
pub struct NoteColumns {
    pub n: Option<String>,
    pub source: Option<String>,
    pub coverage: Option<String>,
}

impl NoteColumns {
    pub fn parse(text: &str) -> Result<NoteColumns> {
        let mut notes = NoteColumns::default();
        for part in text.split(',').filter(|p| !p.trim().is_empty()) {
            let (key, column) = part.split_once('=').ok_or_else(|| {
                Error::usage(
                    format!("--note-cols part \"{part}\" is not KEY=COL"),
                    "write for example --note-cols n=sample,source=src",
                )
            })?;
            let column = Some(column.trim().to_string());
            match key.trim() {
                "n" => notes.n = column,
                "source" => notes.source = column,
                "coverage" => notes.coverage = column,
                other => {
                    return Err(Error::usage(
                        format!("unknown --note-cols key \"{other}\""),
                        "use n, source and coverage",
                    ))
                }
            }
        }
        Ok(notes)
    }

    fn columns(&self) -> Vec<String> {
        [&self.n, &self.source, &self.coverage]
            .into_iter()
            .flatten()
            .cloned()
            .collect()
    }
}

#[derive(Debug, Clone)]
pub struct AuditSettings {
    pub ingest: IngestOptions,
    pub claims: Vec<Claim>,
    pub base_year: Option<i32>,
    pub per: u32,
    pub order: Order,
    pub notes: NoteColumns,
    pub min_n: f64,
    pub allow_unresolved: bool,
}

/// The audit's result.
#[derive(Debug, Clone, serde::Serialize)]
pub struct AuditReport {
    pub input: String,
    pub rows: usize,
    pub claims: Vec<Claim>,
    pub claims_checked: usize,
    pub findings: Vec<Finding>,
    pub references: Vec<String>,
}

impl AuditReport {
    /// True when a finding at or above `fail_on` exists.
    pub fn fails(&self, fail_on: Severity) -> bool {
        self.findings.iter().any(|f| f.severity <= fail_on)
    }
}

pub fn run_audit(
    bytes: &[u8],
    label: &str,
    settings: &AuditSettings,
    resolver: &Resolver,
    references: &References,
) -> Result<AuditReport> {
    let mut options = settings.ingest.clone();
    let mut claims = settings.claims.clone();
    if claims.is_empty() {
        claims = suggested_claims(bytes, label, &options)?;
        if claims.is_empty() {
            return Err(Error::usage(
                "no claimed column was given or recognised from the header",
                "declare what the table claims with --claim ROLE=COL (roles: usd, intl, real, per-capita, share, change, rank)",
            ));
        }
    }
    if claims.iter().any(|c| c.role == Role::Real) && settings.base_year.is_none() {
        return Err(Error::usage(
            "a real claim needs the base year of its prices",
            "pass --base-year YYYY",
        ));
    }
    options.extra_columns = claims.iter().map(|c| c.column.clone()).collect();
    options.extra_columns.extend(settings.notes.columns());
    let mut ingested = ingest::ingest(bytes, label, &options, Some(resolver))?;
    let (entities, _) = resolve::resolve_rows(
        &mut ingested,
        resolver,
        &ResolveOptions {
            allow_unresolved: settings.allow_unresolved,
            rank_aggregates: true,
            base_currency: "USD",
        },
    )?;
    let context = recompute::Context::new(&ingested, &entities, &claims, settings, references);
    let mut findings = context.check_claims();
    findings.extend(context.check_coverage());
    findings.extend(context.check_provenance());
    findings.sort_by(|a, b| a.severity.cmp(&b.severity).then(a.line.cmp(&b.line)));
    Ok(AuditReport {
        input: label.to_string(),
        rows: ingested.rows.len(),
        claims_checked: context.claims_checked(),
        claims,
        findings,
        references: references.describe(),
    })
}

/// Reads only the header to suggest claim roles from its words.
fn suggested_claims(bytes: &[u8], label: &str, options: &IngestOptions) -> Result<Vec<Claim>> {
    let decoded = ingest::encoding::decode(bytes, options.encoding, label)?;
    let delimiter = options
        .delimiter
        .unwrap_or_else(|| ingest::table::sniff_delimiter(&decoded.text));
    let table = ingest::table::read_table(&decoded.text, delimiter, label)?;
    let roles = ingest::layout::assign_roles(&table, &options.roles, label, None).ok();
    let mut taken: Vec<String> = Vec::new();
    if let Some(roles) = roles {
        taken.push(table.headers[roles.entity].clone());
        if let ingest::layout::Shape::Long { value, year, .. } = &roles.shape {
            taken.push(table.headers[*value].clone());
            if let ingest::layout::YearSource::Column { index, .. } = year {
                taken.push(table.headers[*index].clone());
            }
        }
        taken.extend(roles.group.map(|g| table.headers[g].clone()));
        taken.extend(roles.currency.map(|c| table.headers[c].clone()));
    }
    // The value column itself must not be taken for a claim: detection may have picked a claim
    // column as the value, so the user is told to name it when roles are only assumed.
    Ok(claims::suggest(&table.headers, &taken))
}
