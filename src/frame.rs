//! The canonical frame: the engine's columns of the rows ingest read (year, figure, the keys
//! ranks group by, what each row may be ranked with, its currency basis), with the reference
//! factors gathered onto them by each row's entity-year. The rows' texts do not enter the
//! frame: they are set aside in `output::RowTexts` and written only with the output.

use crate::adjust::FactorNeed;
use crate::attach::{self, AttachSettings};
use crate::error::{Error, Result};
use crate::flags;
use crate::ingest;
use crate::model::PipelineSettings;
use crate::output::{self, EntityYears, RowTexts};
use crate::reference::{Kind, References};
use crate::resolve::{self, EntityColumns, InputBasis};
use polars::prelude::*;
use std::collections::BTreeSet;

/// How the frame's currencies are read.
#[derive(Clone, Copy)]
pub(crate) struct FrameStart {
    pub check_currency: bool,
    pub whole_table_in_base: bool,
}

/// The canonical frame and what was set aside beside it.
pub(crate) struct CanonicalFrame {
    pub frame: DataFrame,
    /// The carried text columns (`_line`, `_extra_*`), in order.
    pub carried_names: Vec<String>,
    /// The entity-years the rows need factors for, each row's place among them, and each
    /// entity-year's entity code.
    pub keys: RowKeys,
    /// Whether any row is a figure in the base currency.
    pub any_base: bool,
    /// How many ranking partitions the `_partition` column numbers.
    pub partitions: usize,
}

/// Each row's entity-year as a place in `list` (none: no entity or no year).
pub(crate) struct RowKeys {
    pub of_row: Vec<Option<u32>>,
    pub list: Vec<(u32, i32)>,
}

/// What the frame takes from each row besides its figures: its currency basis, whether it may
/// be ranked, its unit for the mixed-currency rule, and its entity-year.
struct RowFacts {
    basis: Option<Vec<&'static str>>,
    eligible: Vec<bool>,
    units: Option<Vec<Option<String>>>,
    keys: RowKeys,
    any_base: bool,
}

fn row_facts(
    rows: &mut ingest::CanonicalRows,
    entities: &EntityColumns,
    bases: &[InputBasis],
    settings: &PipelineSettings,
    start: &FrameStart,
) -> RowFacts {
    let rows_in = rows.len();
    let (check_currency, whole_table_in_base) = (start.check_currency, start.whole_table_in_base);
    // Without a converting step every figure stays in its own basis, written "local".
    let mut basis: Option<Vec<&'static str>> = check_currency.then(|| Vec::with_capacity(rows_in));
    let mut eligible: Vec<bool> = Vec::with_capacity(rows_in);
    // The unit each figure ends in, for the mixed-currency rule: one common unit (none) when
    // a step converts currencies (or makes a ratio), else the figure's currency, or, for an
    // entity whose currency is unknown, a unit of its own.
    let converts = settings.one_unit();
    let mut units: Option<Vec<Option<String>>> = (!converts).then(|| Vec::with_capacity(rows_in));
    let mut places: PlHashMap<(u32, i32), u32> = PlHashMap::default();
    let mut keys = RowKeys {
        of_row: Vec::with_capacity(rows_in),
        list: Vec::new(),
    };
    let mut any_base = false;
    for (i, &row_basis) in bases.iter().enumerate().take(rows_in) {
        let entity = entities.of(i);
        if let Some(basis) = &mut basis {
            let row_basis = if whole_table_in_base {
                InputBasis::Local
            } else {
                row_basis
            };
            if row_basis == InputBasis::Mismatch {
                rows.flag(i, flags::CURRENCY_MISMATCH);
            }
            any_base |= row_basis == InputBasis::Base;
            basis.push(row_basis.as_str());
        }
        let kind = entity.map(|e| e.kind.as_str());
        eligible.push(kind.is_some() && (kind != Some("aggregate") || settings.rank_aggregates));
        if let Some(units) = &mut units {
            units.push(Some(
                resolve::row_currency(rows, i, entity)
                    .map(str::to_string)
                    .or_else(|| entity.map(|e| format!("units of {}", e.code)))
                    .unwrap_or_default(),
            ));
        }
        keys.of_row.push(match (entities.at[i], rows.year[i]) {
            (Some(at), Some(year)) => {
                let next = keys.list.len() as u32;
                Some(*places.entry((at, year)).or_insert_with(|| {
                    keys.list.push((at, year));
                    next
                }))
            }
            _ => None,
        });
    }
    RowFacts {
        basis,
        eligible,
        units,
        keys,
        any_base,
    }
}

/// The canonical frame of `rows`, which are taken out of `ingested`: their year and figure
/// columns go into the frame, the rest into the returned rows for `RowTexts`.
pub(crate) fn canonical_frame(
    ingested: &mut ingest::Ingested,
    entities: &EntityColumns,
    bases: &[InputBasis],
    settings: &PipelineSettings,
    start: &FrameStart,
) -> Result<(CanonicalFrame, ingest::CanonicalRows)> {
    let mut rows = std::mem::take(&mut ingested.rows);
    let rows_in = rows.len();
    let RowFacts {
        basis,
        eligible,
        units,
        keys,
        any_base,
    } = row_facts(&mut rows, entities, bases, settings, start);
    let keys_of_ranking = resolve::ranking_keys(&rows, entities);
    let mut columns = Vec::with_capacity(12);
    // Each column is built straight from the rows and the rows' copy dropped at once, so that
    // the next column reuses its memory rather than fresh pages.
    columns.push(
        Int32Chunked::from_iter_options("year".into(), rows.year.iter().copied()).into_column(),
    );
    rows.year = Vec::new();
    columns.push(
        Float64Chunked::from_iter_options("value".into(), rows.value.iter().copied()).into_column(),
    );
    rows.value = Vec::new();
    columns.push(Column::new("_several".into(), keys_of_ranking.several));
    let partitions = keys_of_ranking.partitions;
    columns.push(Column::new("_partition".into(), keys_of_ranking.partition));
    columns.push(match units {
        Some(units) => Column::new("_unit".into(), units),
        None => Column::full_null("_unit".into(), rows_in, &DataType::String),
    });
    // Held per row only where some figure is not in its entity's own currency: a column of
    // one text is one value for polars.
    let all_local = |b: &[&str]| b.iter().all(|&t| t == InputBasis::Local.as_str());
    columns.push(match basis {
        Some(basis) if !all_local(&basis) => Column::new("_basis".into(), basis),
        _ => Column::new_scalar(
            "_basis".into(),
            Scalar::from(PlSmallStr::from_static(InputBasis::Local.as_str())),
            rows_in,
        ),
    });
    columns.push(Column::new("_rank_eligible".into(), eligible));
    if settings.intervals.is_some() {
        columns.push(
            Float64Chunked::from_iter_options("_se".into(), (0..rows_in).map(|i| rows.se(i)))
                .into_column(),
        );
    }
    // Columns carried as text for the audit (claimed figures, notes), with each row's line.
    let carried = carried_columns(&rows, settings.ingest.extra_columns.len());
    let carried_names: Vec<String> = carried.iter().map(|c| c.name().to_string()).collect();
    columns.extend(carried);
    let frame =
        DataFrame::new(rows_in, columns).map_err(Error::engine("building the input frame"))?;
    Ok((
        CanonicalFrame {
            frame,
            carried_names,
            keys,
            any_base,
            partitions,
        },
        rows,
    ))
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
        columns.push(
            StringChunked::from_iter_values(
                format!("_extra_{i}").into(),
                (0..rows.line.len()).map(|at| rows.extra(at, i)),
            )
            .into_column(),
        );
    }
    columns
}

/// The factors a run asks for: the tracks' needs (some optional: the baseline's), and the
/// columns derived from them (a step's `extra_columns`, such as the price level index).
pub(crate) struct Factors<'a> {
    pub needs: &'a BTreeSet<FactorNeed>,
    pub optional: &'a BTreeSet<FactorNeed>,
    pub derived: Vec<Expr>,
}

/// The frame with the factors (and their margins) the needs ask for, gathered by each row's
/// entity-year; the rows' texts with each entity-year's factors, derived columns (computed
/// once an entity-year, not once a row) and flags; and the kinds of table that optional needs
/// lack (their columns stay empty: `pipeline::Prepared::missing_tables`).
pub(crate) fn attach_factors(
    canonical: CanonicalFrame,
    rows: ingest::CanonicalRows,
    entities: EntityColumns,
    factors: &Factors,
    references: Option<&References>,
    settings: &PipelineSettings,
) -> Result<(DataFrame, RowTexts, Vec<Kind>)> {
    let Factors {
        needs,
        optional,
        derived,
    } = factors;
    let missing_tables: BTreeSet<Kind> = optional
        .iter()
        .filter(|need| references.and_then(|r| r.get(need.kind)).is_none())
        .map(|need| need.kind)
        .collect();
    let keys: Vec<(&str, i32)> = canonical
        .keys
        .list
        .iter()
        .map(|&(at, year)| (entities.found[at as usize].code.as_str(), year))
        .collect();
    let lookup = attach::lookup_frame(
        &keys,
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
    let computed: Vec<String> = needs
        .iter()
        .flat_map(|need| [need.used_column(), need.se_column()])
        .collect();
    let factors = DataFrame::new(keys.len(), lookup.columns)
        .and_then(|f| f.lazy().with_columns(derived.clone()).collect())
        .map_err(Error::engine("attaching the reference factors"))?;
    let years = EntityYears {
        of_row: canonical.keys.of_row,
        factors,
        flags: lookup.flags,
    };
    let places = years.places();
    let mut frame = canonical.frame;
    // The plan computes with the factors and their margins; their years and the derived
    // columns are only written.
    for column in years
        .factors
        .columns()
        .iter()
        .filter(|c| computed.iter().any(|n| n == c.name().as_str()))
    {
        frame
            .with_column(output::gather_by_rows(column, &places)?)
            .map_err(Error::engine("attaching the reference factors"))?;
    }
    let texts = RowTexts::new(rows, entities, years);
    Ok((frame, texts, missing_tables.into_iter().collect()))
}
