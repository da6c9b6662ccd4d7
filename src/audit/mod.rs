//! `levelfield audit`: recompute what a received table claims with the adjust engine itself,
//! explain every claim that does not hold, and gate publication with an exit code.
//!
//! - `claims`: claim roles and routes (`intl`, `real+intl+per-capita`), header suggestions, the
//!   rounding rule
//! - `routes`: a claim's route run through `pipeline::run_adjust` (and the variants diagnoses need)
//! - `checks`: tolerance, comparison, diagnoses, ranks, coverage and provenance
//! - `report`: the findings as a terminal report, a Markdown memo or JSON

pub mod checks;
pub mod claims;
pub mod report;
pub mod routes;

use crate::entity::Resolver;
use crate::error::{Error, Result};
use crate::ingest::{self, IngestOptions};
use crate::pipeline::PipelineSettings;
use crate::reference::References;
use claims::{Claim, Role};

/// How serious a finding is. Ordered from most to least serious.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, clap::ValueEnum, serde::Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Severity {
    /// A claim that does not hold.
    Error,
    /// Coverage problems: missing factors, mixed years, currencies no step converts, shares off 100.
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

/// The audit's settings: the engine's (the same as `adjust` would use, without steps: each
/// claim brings its route), the claims and the provenance checks.
#[derive(Debug, Clone)]
pub struct AuditSettings {
    pub pipeline: PipelineSettings,
    pub claims: Vec<Claim>,
    pub notes: NoteColumns,
    pub min_n: f64,
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
    let mut settings = settings.clone();
    if settings.claims.is_empty() {
        settings.claims = suggested_claims(bytes, label, &settings.pipeline.ingest)?;
        if settings.claims.is_empty() {
            return Err(Error::usage(
                "no claimed column was given or recognised from the header",
                "declare what the table claims with --claim ROLE=COL (roles: usd, intl, real, per-capita, per-income, share, change, rank; steps chain with +, as in real+intl)",
            ));
        }
    }
    if settings
        .claims
        .iter()
        .any(|c| c.route.contains(&Role::Real))
        && settings.pipeline.step_settings.base_year.is_none()
    {
        return Err(Error::usage(
            "a real claim needs the base year of its prices",
            "pass --base-year YYYY",
        ));
    }
    let ingest = &mut settings.pipeline.ingest;
    ingest.extra_columns = settings.claims.iter().map(|c| c.column.clone()).collect();
    ingest.extra_columns.extend(settings.notes.columns());
    let cells = ingest.extra_columns.len();
    let engine = routes::Engine::new(bytes, label, &settings.pipeline, resolver, references);
    let rows = engine.rows(cells)?;
    let checks = checks::Checks::new(rows, &settings.claims, &settings, &engine);
    let mut findings = checks.check_claims()?;
    findings.extend(checks.check_coverage()?);
    findings.extend(checks.check_provenance());
    findings.sort_by(|a, b| a.severity.cmp(&b.severity).then(a.line.cmp(&b.line)));
    Ok(AuditReport {
        input: label.to_string(),
        rows: checks.rows.len(),
        claims_checked: checks.claims_checked(),
        claims: settings.claims.clone(),
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
