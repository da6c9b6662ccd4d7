//! The `adjust` pipeline: ingest → resolve → frame → attach factors → adjust (both tracks) →
//! rank → select the output columns. Every stage adds columns and none removes rows: the run
//! fails with an internal error if rows in and rows out ever differ.
//!
//! Everything after the canonical frame is one polars lazy plan, so large inputs are joined,
//! adjusted and ranked by the engine, not row by row.

use crate::adjust::{self, Step, Unit};
use crate::attach::{self, AttachSettings};
use crate::entity::{Entity, Resolver};
use crate::error::{Error, Result};
use crate::flags::{self, FlagCounts};
use crate::ingest;
pub use crate::model::{PipelineSettings, RunSummary};
use crate::rank;
use crate::reference::References;
use crate::resolve::{self, InputBasis, ResolveOptions};
use crate::tracks::{self, TrackPlan, TrackStart};
use crate::uncertainty::ranking::{self, IntervalSettings};
use crate::units::TrackUnit;
use polars::prelude::*;
use std::collections::HashSet;

/// The result of a run: the output frame and what the summary reports.
pub struct AdjustOutput {
    pub frame: DataFrame,
    pub summary: RunSummary,
}

/// Whether the steps bring every figure to one unit (a currency conversion, or a ratio of
/// income); without one, figures in different currencies must not be ranked together. The
/// same steps make each figure's currency matter: a figure in a foreign currency cannot be
/// converted with its country's factors.
pub(crate) fn converts_currency(steps: &[&'static dyn Step]) -> bool {
    steps
        .iter()
        .any(|s| matches!(s.name(), "market" | "ppp" | "per-income"))
}

/// Survey shares (margins from sample sizes), counts of people (`--proportion`) and figures
/// stated as `--currency-code XXX` are not money: they rank together whatever the country.
pub(crate) fn figures_are_not_money(settings: &PipelineSettings) -> bool {
    matches!(
        settings.ingest.margins,
        crate::ingest::margins::MarginSpec::SampleSize { .. }
    ) || settings.step_settings.proportion
        || settings.ingest.currency_code.as_deref() == Some("XXX")
}

pub fn run_adjust(
    bytes: &[u8],
    input_label: &str,
    settings: &PipelineSettings,
    resolver: &Resolver,
    references: Option<&References>,
) -> Result<AdjustOutput> {
    let prepared = prepare(bytes, input_label, settings, resolver, references, 0)?;
    let rows_in = prepared.rows_in;
    let baseline_missing = prepared.baseline_missing();
    let missing_tables = prepared.missing_tables.clone();
    let lf = with_ranks_and_flags(prepared.lf, settings, baseline_missing)?;
    let order = output_columns(&prepared.head_columns, settings);
    let selection: Vec<Expr> = order.iter().map(|c| col(c.as_str())).collect();
    let frame = lf
        .select(selection)
        .collect()
        .map_err(Error::engine("adjusting and ranking"))?;

    let frame = match &settings.intervals {
        Some(intervals) => finish_intervals(frame, intervals)?,
        None => frame,
    };
    if frame.height() != rows_in {
        return Err(Error::engine("checking that no row was lost")(polars_err!(
            ComputeError: "{} rows in, {} rows out", rows_in, frame.height()
        )));
    }
    let counts = FlagCounts::of(&frame)?;
    let mut summary = summarize(
        counts,
        &prepared.ingested.file,
        prepared.ingested.notes.clone(),
        rows_in,
        frame.height(),
        settings,
        &prepared.baseline_steps,
        prepared.deflator_used,
        references,
    );
    summary
        .warnings
        .extend(missing_tables_warning(&missing_tables));
    summary
        .warnings
        .splice(0..0, prepared.ingested.warnings.iter().cloned());
    Ok(AdjustOutput { frame, summary })
}

/// The per-row part of a run, before ranks: ingest, entities, the canonical frame, factors
/// joined once per entity-year, and both tracks, as one lazy frame. `_ord` numbers the rows
/// from `ord_offset` (a piece of a larger file starts where the previous piece ended).
pub(crate) struct Prepared {
    pub lf: LazyFrame,
    /// What ingest decided (its rows were taken out and dropped as the frame was built).
    pub ingested: ingest::Ingested,
    pub rows_in: usize,
    /// The output columns up to `value_adjusted` (and the margin columns), in order.
    pub head_columns: Vec<String>,
    pub baseline_steps: Vec<&'static dyn Step>,
    pub deflator_used: Option<adjust::Deflator>,
    /// Whether any row is a figure in the base currency (it changes the columns).
    pub any_base: bool,
    /// Kinds the baseline (or a derived column) needs and the catalog lacks: the baseline stays
    /// empty, flagged `no_baseline`, and the adjusted values are ranked on their own.
    pub missing_tables: Vec<crate::reference::Kind>,
}

impl Prepared {
    pub fn baseline_missing(&self) -> bool {
        !self.missing_tables.is_empty()
    }
}

pub(crate) fn prepare(
    bytes: &[u8],
    input_label: &str,
    settings: &PipelineSettings,
    resolver: &Resolver,
    references: Option<&References>,
    ord_offset: u64,
) -> Result<Prepared> {
    let mut ingested = ingest::ingest(bytes, input_label, &settings.ingest, Some(resolver))?;
    let base_currency = settings.step_settings.base_currency.clone();
    let (entities, bases) = resolve::resolve_rows(
        &mut ingested,
        resolver,
        &ResolveOptions {
            allow_unresolved: settings.allow_unresolved,
            rank_aggregates: settings.rank_aggregates,
            base_currency: &base_currency,
        },
    )?;
    let check_currency = converts_currency(&settings.steps);
    let whole_table_in_base =
        settings.ingest.currency_code.as_deref() == Some(base_currency.as_str());
    let rows_in = ingested.rows.len();
    let CanonicalFrame {
        frame,
        carried_names,
        keys,
        any_base,
    } = canonical_frame(
        &mut ingested,
        &entities,
        &bases,
        settings,
        &FrameStart {
            ord_offset,
            check_currency,
            whole_table_in_base,
        },
    )?;

    // Both tracks, built as expressions; the factors they name are collected in `needs`.
    let start_unit = if whole_table_in_base {
        Unit::Base
    } else {
        Unit::Local
    };
    let TrackPlan {
        batches,
        stage_columns,
        extra_columns,
        needs,
        optional,
        deflator_used,
        baseline_steps,
    } = tracks::plan_tracks(
        settings,
        &TrackStart {
            unit: start_unit,
            to_local: check_currency,
            any_base,
            with_se: settings.intervals.is_some(),
        },
    )?;

    let (mut lf, missing_tables) =
        join_factors(frame, &keys, &needs, &optional, references, settings)?;
    for batch in batches {
        lf = lf.with_columns(batch);
    }
    let head = head_columns(
        &stage_columns,
        &needs,
        &extra_columns,
        settings,
        carried_names,
    );
    Ok(Prepared {
        lf,
        ingested,
        rows_in,
        head_columns: head,
        baseline_steps,
        deflator_used,
        any_base,
        missing_tables,
    })
}

/// The canonical frame with its factors, joined once per distinct entity and year, in input
/// order; and the kinds of table that optional needs lack (see `Prepared::missing_tables`).
fn join_factors(
    frame: DataFrame,
    keys: &HashSet<(String, i32)>,
    needs: &std::collections::BTreeSet<adjust::FactorNeed>,
    optional: &std::collections::BTreeSet<adjust::FactorNeed>,
    references: Option<&References>,
    settings: &PipelineSettings,
) -> Result<(LazyFrame, Vec<crate::reference::Kind>)> {
    let missing_tables: std::collections::BTreeSet<crate::reference::Kind> = optional
        .iter()
        .filter(|need| references.and_then(|r| r.get(need.kind)).is_none())
        .map(|need| need.kind)
        .collect();
    let lookup = attach::lookup_frame(
        keys,
        needs,
        optional,
        references,
        &AttachSettings {
            base_year: settings.step_settings.base_year,
            nearest_year: settings.nearest_year,
            base_currency: settings.step_settings.base_currency.clone(),
            year_offset: settings.factor_year_offset,
        },
    )?;
    let lf = frame.lazy().join(
        lookup.lazy(),
        [col("entity_code"), col("year")],
        [col("entity_code"), col("year")],
        // Rows stay in input order (no sort of every column afterwards).
        JoinArgs {
            maintain_order: MaintainOrderJoin::Left,
            ..JoinArgs::new(JoinType::Left)
        },
    );
    Ok((lf, missing_tables.into_iter().collect()))
}

/// The canonical frame, one row per figure: what ingest read, the entity, the currency basis,
/// the unit for the mixed-currency rule, the flags so far, and the carried text columns.
struct CanonicalFrame {
    frame: DataFrame,
    carried_names: Vec<String>,
    /// The entity-years the rows need factors for.
    keys: HashSet<(String, i32)>,
    /// Whether any row is a figure in the base currency.
    any_base: bool,
}

/// Where the frame's rows start (`_ord`) and how their currencies are read.
#[derive(Clone, Copy)]
struct FrameStart {
    ord_offset: u64,
    check_currency: bool,
    whole_table_in_base: bool,
}

/// What the frame takes from each row besides its text: the flags so far, the currency basis,
/// whether it may be ranked, its unit for the mixed-currency rule; and the entity-years needed.
struct RowFacts {
    flags_pre: Vec<Option<String>>,
    basis_text: Vec<&'static str>,
    eligible: Vec<bool>,
    units: Vec<Option<String>>,
    keys: HashSet<(String, i32)>,
    any_base: bool,
}

fn row_facts(
    ingested: &mut ingest::Ingested,
    entities: &resolve::EntityColumns,
    bases: &[InputBasis],
    settings: &PipelineSettings,
    start: &FrameStart,
) -> RowFacts {
    let rows_in = ingested.rows.len();
    let (check_currency, whole_table_in_base) = (start.check_currency, start.whole_table_in_base);
    let mut flags_pre: Vec<Option<String>> = Vec::with_capacity(rows_in);
    let mut basis_text: Vec<&'static str> = Vec::with_capacity(rows_in);
    let mut eligible: Vec<bool> = Vec::with_capacity(rows_in);
    let mut units: Vec<Option<String>> = Vec::with_capacity(rows_in);
    let converts = converts_currency(&settings.steps) || figures_are_not_money(settings);
    // The entity-years the rows need factors for, by the entity's place in `entities.found`.
    let mut entity_years: PlHashSet<(u32, i32)> = PlHashSet::default();
    let mut any_base = false;
    let rows = &mut ingested.rows;
    for (i, &row_basis) in bases.iter().enumerate().take(rows_in) {
        let basis = if whole_table_in_base || !check_currency {
            InputBasis::Local
        } else {
            row_basis
        };
        if basis == InputBasis::Mismatch {
            rows.flag(i, flags::CURRENCY_MISMATCH);
        }
        any_base |= basis == InputBasis::Base;
        basis_text.push(basis.as_str());
        let row_flags = rows.flags(i);
        flags_pre.push(if row_flags.is_empty() {
            None
        } else {
            Some(row_flags.join(";"))
        });
        let entity = entities.of(i);
        let kind = entity.map(|e| e.kind.as_str());
        eligible.push(kind.is_some() && (kind != Some("aggregate") || settings.rank_aggregates));
        // The unit the adjusted value ends in, for the mixed-currency rule: one common unit
        // when a step converts currencies (or makes a ratio); else the figure's currency, or,
        // for an entity whose currency is unknown, a unit of its own.
        units.push(if converts {
            None
        } else {
            Some(
                row_currency(rows, i, entity)
                    .map(str::to_string)
                    .or_else(|| entity.map(|e| format!("units of {}", e.code)))
                    .unwrap_or_default(),
            )
        });
        if let (Some(at), Some(year)) = (entities.at[i], rows.year[i]) {
            entity_years.insert((at, year));
        }
    }
    let keys: HashSet<(String, i32)> = entity_years
        .into_iter()
        .map(|(at, year)| (entities.found[at as usize].code.clone(), year))
        .collect();
    RowFacts {
        flags_pre,
        basis_text,
        eligible,
        units,
        keys,
        any_base,
    }
}

/// The currency a row's figure is in: the one it states, else its entity's.
fn row_currency<'a>(
    rows: &'a ingest::CanonicalRows,
    at: usize,
    entity: Option<&'a Entity>,
) -> Option<&'a str> {
    rows.currency_text(at)
        .or_else(|| entity.and_then(|e| e.currency.as_deref()))
}

fn canonical_frame(
    ingested: &mut ingest::Ingested,
    entities: &resolve::EntityColumns,
    bases: &[InputBasis],
    settings: &PipelineSettings,
    start: &FrameStart,
) -> Result<CanonicalFrame> {
    let ord_offset = start.ord_offset;
    let rows_in = ingested.rows.len();
    let RowFacts {
        flags_pre,
        basis_text,
        eligible,
        units,
        keys,
        any_base,
    } = row_facts(ingested, entities, bases, settings, start);
    let keys_of_ranking = resolve::ranking_keys(&ingested.rows, entities);
    // The rows are taken out of `ingested` and each of their columns is dropped as soon as its
    // frame column exists, so that the next column reuses its memory rather than fresh pages.
    let mut rows = std::mem::take(&mut ingested.rows);
    // Each column is built straight from the rows, without a vector of cells in between: at
    // 10M rows each such vector was 160 MB of fresh memory, faulted in and freed again.
    let mut columns = vec![
        Column::new(
            "_ord".into(),
            (ord_offset..ord_offset + rows_in as u64).collect::<Vec<u64>>(),
        ),
        row_id_column(&rows),
    ];
    rows.row_id = Vec::new();
    columns.push(text(
        "entity_input",
        rows.entity_input.iter().map(|&t| rows.texts.get(t)),
    ));
    rows.entity_input = Vec::new();
    // A text column of each row's entity (null where the name did not resolve).
    let entity_column = |name: &str, field: fn(&Entity) -> &str| {
        optional_text(name, (0..rows_in).map(|i| entities.of(i).map(field)))
    };
    columns.push(entity_column("entity_code", |e| &e.code));
    columns.push(entity_column("entity_name", |e| &e.name));
    columns.push(entity_column("entity_kind", |e| e.kind.as_str()));
    columns.push(
        Int32Chunked::from_iter_options("year".into(), rows.year.iter().copied()).into_column(),
    );
    rows.year = Vec::new();
    columns.push(optional_text(
        "group",
        (0..rows_in).map(|i| rows.group_text(i)),
    ));
    rows.group = Vec::new();
    columns.push(text("value_input", rows.value_input.iter()));
    rows.value_input = ingest::TextColumn::default();
    columns.push(
        Float64Chunked::from_iter_options("value".into(), rows.value.iter().copied()).into_column(),
    );
    rows.value = Vec::new();
    columns.push(optional_text(
        "currency",
        (0..rows_in).map(|i| row_currency(&rows, i, entities.of(i))),
    ));
    rows.currency = Vec::new();
    columns.push(Column::new("_series".into(), keys_of_ranking.series));
    columns.push(Column::new("_partition".into(), keys_of_ranking.partition));
    columns.push(Column::new("_unit".into(), units));
    columns.push(Column::new("_basis".into(), basis_text));
    columns.push(Column::new("_flags_pre".into(), flags_pre));
    columns.push(Column::new("_rank_eligible".into(), eligible));
    columns.push(
        Float64Chunked::from_iter_options("_se".into(), (0..rows_in).map(|i| rows.se(i)))
            .into_column(),
    );
    let frame =
        DataFrame::new(rows_in, columns).map_err(Error::engine("building the input frame"))?;
    // Columns carried as text for the audit (claimed figures, notes), with each row's line.
    let carried = carried_columns(&rows, settings.ingest.extra_columns.len());
    let carried_names: Vec<String> = carried.iter().map(|c| c.name().to_string()).collect();
    let mut frame = frame;
    for column in carried {
        frame
            .with_column(column)
            .map_err(Error::engine("building the input frame"))?;
    }
    Ok(CanonicalFrame {
        frame,
        carried_names,
        keys,
        any_base,
    })
}

/// The `row_id` column, each id written into one reused buffer (no string kept per row).
fn row_id_column(rows: &ingest::CanonicalRows) -> Column {
    use std::fmt::Write;
    let mut builder = StringChunkedBuilder::new("row_id".into(), rows.len());
    let mut id = String::new();
    for row_id in &rows.row_id {
        id.clear();
        let _ = write!(id, "{row_id}");
        builder.append_value(&id);
    }
    builder.finish().into_column()
}

/// A text column from its cells, built in place.
fn text<'a>(name: &str, cells: impl Iterator<Item = &'a str>) -> Column {
    StringChunked::from_iter_values(name.into(), cells).into_column()
}

/// A text column with missing cells, built in place.
fn optional_text<'a>(name: &str, cells: impl Iterator<Item = Option<&'a str>>) -> Column {
    StringChunked::from_iter_options(name.into(), cells).into_column()
}

/// The output columns up to `value_adjusted` (and the margin columns), then the carried ones,
/// in order.
fn head_columns(
    stage_columns: &[String],
    needs: &std::collections::BTreeSet<adjust::FactorNeed>,
    extra_columns: &[String],
    settings: &PipelineSettings,
    carried_names: Vec<String>,
) -> Vec<String> {
    let mut head: Vec<String> = [
        "row_id",
        "entity_input",
        "entity_code",
        "entity_name",
        "entity_kind",
        "year",
        "group",
        "value_input",
        "value",
        "currency",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    head.extend(stage_columns.iter().cloned());
    let uncertain = &settings.step_settings.uncertain_factors;
    for need in needs {
        head.push(need.used_column());
        if uncertain.contains(&need.kind) && need.whose == adjust::Whose::Entity {
            head.push(need.se_column());
        }
        head.push(need.year_column());
    }
    head.extend(extra_columns.iter().cloned());
    head.extend(["value_baseline", "value_adjusted"].map(String::from));
    if settings.intervals.is_some() {
        head.extend(["moe_baseline", "moe_adjusted", "ci_low", "ci_high"].map(String::from));
    }
    head.extend(carried_names);
    head
}

/// `_line` and `_extra_0`, `_extra_1`, ...: the rows' lines and the text of
/// `IngestOptions::extra_columns` (none when no extra column is asked for).
fn carried_columns(rows: &ingest::CanonicalRows, extras: usize) -> Vec<Column> {
    if extras == 0 {
        return Vec::new();
    }
    let mut columns = vec![Column::new(
        "_line".into(),
        rows.line.iter().map(|&l| l as u64).collect::<Vec<u64>>(),
    )];
    for i in 0..extras {
        columns.push(text(
            &format!("_extra_{i}"),
            (0..rows.line.len()).map(|at| rows.extra(at, i)),
        ));
    }
    columns
}

/// Ranks per group and year, the shift, and the flags column.
pub(crate) fn with_ranks_and_flags(
    lf: LazyFrame,
    settings: &PipelineSettings,
    baseline_missing: bool,
) -> Result<LazyFrame> {
    // One integer column each for (entity, group, year) and (group, year): `resolve::ranking_keys`.
    let partition = [col("_partition")];
    let several = rank::several_series(&[col("_series")]).map_err(Error::engine("ranking"))?;
    let mixed = rank::mixed_units(col("_unit"), col("_rank_eligible"), &partition)
        .map_err(Error::engine("ranking"))?;
    let ranks = rank::rank_columns(
        settings.order,
        col("_rank_eligible")
            .and(col("_several").not())
            .and(col("_mixed").not()),
        &partition,
        baseline_missing,
    )
    .map_err(Error::engine("ranking"))?;
    Ok(with_flags(
        lf.with_columns([several, mixed]).with_columns(ranks),
        baseline_missing,
    ))
}

/// The shift and the flags column, once `rank_baseline` and `rank_adjusted` are there.
pub(crate) fn with_flags(lf: LazyFrame, baseline_missing: bool) -> LazyFrame {
    let not_ranked = when(col("rank_adjusted").is_null())
        .then(lit(flags::NOT_RANKED))
        .otherwise(rank::null_of(DataType::String));
    let no_baseline = if baseline_missing {
        lit(flags::NO_BASELINE)
    } else {
        rank::null_of(DataType::String)
    };
    let several = when(col("_several"))
        .then(lit(flags::SEVERAL_SERIES))
        .otherwise(rank::null_of(DataType::String));
    let mixed = when(col("_mixed"))
        .then(lit(flags::MIXED_CURRENCY))
        .otherwise(rank::null_of(DataType::String));
    lf.with_column(rank::shift_column()).with_column(
        concat_str(
            [
                col("_flags_pre"),
                col("_factor_flags"),
                no_baseline,
                several,
                mixed,
                not_ranked,
            ],
            ";",
            true,
        )
        .fill_null(lit(""))
        .alias("flags"),
    )
}

/// The standard cautions, and those the run's settings call for.
/// The standard cautions printed with every note.
pub const CAUTIONS: &[&str] = &[
    "Market rates and PPPs answer different questions: market rates for what money buys abroad, PPPs for what it buys at home. Say which one a chart uses.",
    "Reference data (exchange rates, PPPs, price indices, populations) are revised between releases; cite the vintage used.",
    "A rank change inside the uncertainty of the figures is not a finding: a small gap can reverse with the next revision.",
    "Where the figures concern health, poverty lines or safety, defer to the published figures of the responsible authorities.",
];

fn cautions(settings: &PipelineSettings) -> Vec<String> {
    let mut out: Vec<String> = CAUTIONS.iter().map(|c| c.to_string()).collect();
    let names: Vec<&str> = settings.steps.iter().map(|s| s.name()).collect();
    if names.contains(&"ppp") {
        out.insert(1, "PPPs are estimates for a whole economy's basket of goods and services; they may not fit one good or service, such as a single fee or price.".into());
    }
    if names.contains(&"per-income") && settings.step_settings.income_as == adjust::IncomeAs::Days {
        out.push("Days of income divide by a mean income per person over 365 days: a mean lies above what a typical or poor household earns, so the burden for them is larger than these figures show.".into());
    }
    if matches!(
        settings.ingest.margins,
        crate::ingest::margins::MarginSpec::SampleSize { .. }
    ) {
        out.push("Margins from sample sizes assume a simple random sample with no design effect; a clustered or weighted survey has wider margins, so some differences called real here may be ties.".into());
    }
    if settings.intervals.is_some() {
        out.push("A rank shift flagged within_uncertainty lies inside the margins of error: do not report it as a change.".into());
    }
    out
}

/// The warning of a run whose catalog lacks a table only the baseline needs.
pub(crate) fn missing_tables_warning(kinds: &[crate::reference::Kind]) -> Option<String> {
    if kinds.is_empty() {
        return None;
    }
    let names: Vec<&str> = kinds.iter().map(|k| k.as_str()).collect();
    Some(format!(
        "the reference catalog has no {} table: the adjusted values and ranks are complete, but the baseline (the comparison without the price-level adjustment), its ranks, the rank shift and the price level index are left empty (flag no_baseline); add a resource with \"kind\": \"{}\" to the catalog to get them",
        names.join(" or "),
        names[0]
    ))
}

/// Every output column in order, given the head columns of `prepare`.
pub(crate) fn output_columns(head: &[String], settings: &PipelineSettings) -> Vec<String> {
    let mut order = head.to_vec();
    order.extend(["rank_baseline", "rank_adjusted", "rank_shift", "flags"].map(String::from));
    if settings.intervals.is_some() {
        order.extend(["_se_baseline", "_se_adjusted"].map(String::from));
    }
    order
}

/// Adds rank intervals and ties, then puts the columns in their documented order.
fn finish_intervals(frame: DataFrame, intervals: &IntervalSettings) -> Result<DataFrame> {
    let frame = ranking::add_intervals(frame, intervals)?;
    let mut names: Vec<String> = frame
        .get_column_names()
        .iter()
        .map(|n| n.to_string())
        .filter(|n| {
            !n.starts_with('_')
                && n != "flags"
                && !n.starts_with("rank_baseline_")
                && !n.starts_with("rank_adjusted_")
                && n != "tied_with"
        })
        .collect();
    names.extend(
        [
            "rank_baseline_low",
            "rank_baseline_high",
            "rank_adjusted_low",
            "rank_adjusted_high",
            "tied_with",
            "flags",
        ]
        .map(String::from),
    );
    frame
        .select(names)
        .map_err(Error::engine("ordering the output columns"))
}

/// The methods part of the summary: how prices were deflated and converted, how margins were
/// carried, what per capita means here.
fn method_notes(
    settings: &PipelineSettings,
    names: &[&str],
    deflator_used: Option<adjust::Deflator>,
) -> Vec<String> {
    let mut method_notes = Vec::new();
    let base_year = settings.step_settings.base_year;
    if let Some(deflator) = deflator_used {
        let year = base_year.unwrap_or_default();
        method_notes.push(match deflator {
            adjust::Deflator::Own => format!("deflated with each entity's own CPI to {year} prices, before any currency conversion"),
            adjust::Deflator::BaseCurrency => {
                format!("converted at each year's rate, then deflated with the {} CPI to {year} prices", settings.step_settings.base_currency)
            }
        });
    }
    let ppp_pos = names.iter().position(|n| *n == "ppp");
    let deflate_pos = names.iter().position(|n| *n == "deflate");
    if let Some(p) = ppp_pos {
        method_notes.push(match deflate_pos {
            Some(d) if d < p => format!(
                "PPP conversion at constant PPPs: the {} PPP for every year (deflate, then convert)",
                base_year.unwrap_or_default()
            ),
            _ => "PPP conversion at current PPPs: each figure at its own year's PPP".to_string(),
        });
    }
    if let Some(intervals) = &settings.intervals {
        method_notes.push(format!(
            "margins at {}% carried through every step (scaled by exact factors; ratio formulas for uncertain population or income: ACS General Handbook, ch. 8)",
            intervals.level.percent()
        ));
        method_notes.push(intervals.describe());
    }
    if names.contains(&"per-capita") {
        method_notes.push(format!(
            "per capita: {}",
            crate::units::per_people_words(settings.step_settings.per)
        ));
    }
    method_notes
}

#[allow(clippy::too_many_arguments)]
/// The run summary; `file` and `reading_notes` are what reading the input decided.
pub(crate) fn summarize(
    counts: FlagCounts,
    file: &str,
    reading_notes: Vec<String>,
    rows_in: usize,
    rows_out: usize,
    settings: &PipelineSettings,
    baseline_steps: &[&'static dyn Step],
    deflator_used: Option<adjust::Deflator>,
    references: Option<&References>,
) -> RunSummary {
    let names: Vec<&str> = settings.steps.iter().map(|s| s.name()).collect();
    let baseline_names: Vec<&str> = baseline_steps.iter().map(|s| s.name()).collect();
    let input_currency = crate::units::InputCurrency {
        code: if figures_are_not_money(settings) {
            Some("XXX".into())
        } else {
            settings.ingest.currency_code.clone()
        },
        column: settings.ingest.roles.currency.is_some(),
    };
    let method_notes = method_notes(settings, &names, deflator_used);
    let mut warnings: Vec<String> = references.map(|r| r.warnings()).unwrap_or_default();
    if let Some(n) = counts.by_flag.get(flags::MIXED_CURRENCY) {
        warnings.push(format!(
            "{n} row(s) are not ranked: their group and year hold figures in different currencies and no step converts them (flag mixed_currency); add market or ppp to --steps, or state the one currency of every figure with --currency-code (XXX for figures that are not money, such as counts)"
        ));
    }
    if let Some(n) = counts.by_flag.get(flags::SEVERAL_SERIES) {
        warnings.push(format!(
            "{n} row(s) share their entity, group and year with another row: the table holds several series, so those rows are not ranked (flag several_series); pass --group COL with the column that tells the series apart (see the columns not used above)"
        ));
    }
    let mut notes = reading_notes;
    if settings.ingest.currency_code.is_none()
        && settings.ingest.roles.currency.is_none()
        && converts_currency(&settings.steps)
    {
        notes.push("currency: no --currency or --currency-code given, so each figure is taken to be in its entity's own currency (the unit of its reference tables)".into());
    }
    if settings.nearest_year > 0 {
        notes.push(format!(
            "factors may come from up to {} year(s) away (--nearest-year); such rows are flagged",
            settings.nearest_year
        ));
    }
    RunSummary {
        input: file.to_string(),
        rows_in,
        rows_out,
        rows_flagged: counts.rows_flagged,
        flag_counts: counts.by_flag,
        steps: names.iter().map(|s| s.to_string()).collect(),
        baseline_steps: baseline_steps
            .iter()
            .map(|s| s.name().to_string())
            .collect(),
        notes,
        method_notes,
        references: references.map(|r| r.describe()).unwrap_or_default(),
        warnings,
        cautions: cautions(settings),
        units: crate::units::Units {
            baseline: TrackUnit::of(&baseline_names, &settings.step_settings, &input_currency),
            adjusted: TrackUnit::of(&names, &settings.step_settings, &input_currency),
        },
        notice: None,
    }
}
