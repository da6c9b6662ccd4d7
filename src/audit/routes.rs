//! Running a claim's route through the adjust engine. The audit recomputes nothing itself: every
//! figure it compares with a claim comes out of `pipeline::run_adjust` with the steps of the
//! claim's route, the same currency handling, factor lookup and ranking as `adjust`. The
//! variants a diagnosis needs (PPP and market rate swapped, no deflation, the factors of a
//! neighbouring year) are runs of the same engine with other settings.

use super::claims::Role;
use crate::adjust;
use crate::entity::Resolver;
use crate::error::Result;
use crate::pipeline::{self, PipelineSettings};
use crate::reference::References;
use crate::report::format::{floats, ints};
use polars::prelude::*;
use std::cell::RefCell;
use std::collections::HashMap;

/// One input row as the audit sees it (from the engine's run without steps).
#[derive(Debug, Clone)]
pub struct Row {
    pub row_id: String,
    pub line: usize,
    pub entity: String,
    pub code: Option<String>,
    pub kind: Option<String>,
    pub currency: Option<String>,
    pub year: Option<i32>,
    pub group: Option<String>,
    pub value: Option<f64>,
    pub value_text: String,
    /// Claimed cells (text) in the order of the claims, then note cells.
    pub cells: Vec<String>,
}

/// What one run of a route gives per row: every stage column, and the flags.
#[derive(Debug, Clone)]
pub struct RouteRun {
    pub stages: HashMap<String, Vec<Option<f64>>>,
    pub flags: Vec<String>,
}

impl RouteRun {
    /// The figures of the stage a claim of `prefix` names (the stage of its last step in this
    /// variant), or the input figure in local currency when the variant leaves no step.
    pub fn stage(&self, prefix: &[Role], variant: Variant) -> Option<&Vec<Option<f64>>> {
        let steps = variant_steps(prefix, variant)?;
        let column = match steps.last() {
            Some(step) => adjust::find_step(step)?.column(),
            None if self.stages.contains_key("value_lcu") => "value_lcu",
            None => "value",
        };
        self.stages.get(column)
    }
}

/// A variant of a route, for the diagnoses.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Variant {
    AsClaimed,
    /// PPP in place of the market rate and the reverse.
    Swapped,
    /// Without `deflate`.
    Nominal,
    /// One kind's row-year factors from this many years away.
    YearOffset(crate::reference::Kind, i32),
}

/// A route and the variant it was run in.
type RunKey = (Vec<Role>, Variant);

pub struct Engine<'a> {
    pub bytes: &'a [u8],
    pub label: &'a str,
    pub settings: &'a PipelineSettings,
    pub resolver: &'a Resolver,
    pub references: &'a References,
    runs: RefCell<HashMap<RunKey, Option<RouteRun>>>,
}

impl<'a> Engine<'a> {
    pub fn new(
        bytes: &'a [u8],
        label: &'a str,
        settings: &'a PipelineSettings,
        resolver: &'a Resolver,
        references: &'a References,
    ) -> Self {
        Engine {
            bytes,
            label,
            settings,
            resolver,
            references,
            runs: RefCell::new(HashMap::new()),
        }
    }

    fn run(
        &self,
        steps: &[&str],
        year_offset: Option<(crate::reference::Kind, i32)>,
    ) -> Result<DataFrame> {
        let mut settings = self.settings.clone();
        settings.steps = steps
            .iter()
            .filter_map(|name| adjust::find_step(name))
            .collect();
        settings.factor_year_offset = year_offset;
        crate::adjust::check_step_options(&settings.steps, settings.step_settings.base_year)?;
        pipeline::run_adjust(
            self.bytes,
            self.label,
            &settings,
            self.resolver,
            Some(self.references),
        )?
        .table
        .text_frame()
    }

    /// The rows, read by a run without steps.
    pub fn rows(&self, cells: usize) -> Result<Vec<Row>> {
        let frame = self.run(&[], None)?;
        let text = |name: &str| -> Vec<Option<String>> {
            frame
                .column(name)
                .ok()
                .and_then(|c| c.cast(&DataType::String).ok())
                .map(|c| {
                    c.str()
                        .map(|ca| ca.iter().map(|v| v.map(str::to_string)).collect())
                        .unwrap_or_default()
                })
                .unwrap_or_else(|| vec![None; frame.height()])
        };
        let (ids, inputs, names, codes, kinds) = (
            text("row_id"),
            text("entity_input"),
            text("entity_name"),
            text("entity_code"),
            text("entity_kind"),
        );
        let (currencies, groups, value_texts) =
            (text("currency"), text("group"), text("value_input"));
        let extras: Vec<Vec<Option<String>>> =
            (0..cells).map(|i| text(&format!("_extra_{i}"))).collect();
        let (lines, years, values) = (
            ints(&frame, "_line"),
            ints(&frame, "year"),
            floats(&frame, "value"),
        );
        Ok((0..frame.height())
            .map(|i| Row {
                row_id: ids[i].clone().unwrap_or_default(),
                line: lines[i].unwrap_or(0) as usize,
                entity: names[i].clone().or(inputs[i].clone()).unwrap_or_default(),
                code: codes[i].clone(),
                kind: kinds[i].clone(),
                currency: currencies[i].clone(),
                year: years[i].map(|y| y as i32),
                group: groups[i].clone(),
                value: values[i],
                value_text: value_texts[i].clone().unwrap_or_default(),
                cells: extras
                    .iter()
                    .map(|e| e[i].clone().unwrap_or_default())
                    .collect(),
            })
            .collect())
    }

    /// The run of a route's variant (every stage and the flags), run once and kept. A variant
    /// that cannot run (a table it needs is missing) is None: it explains nothing.
    pub fn route(&self, route: &[Role], variant: Variant) -> Result<Option<RouteRun>> {
        let key = (route.to_vec(), variant);
        if let Some(run) = self.runs.borrow().get(&key) {
            return Ok(run.clone());
        }
        let steps = variant_steps(route, variant);
        let offset = match variant {
            Variant::YearOffset(kind, d) => Some((kind, d)),
            _ => None,
        };
        let run = match (steps, variant) {
            (None, _) => None,
            (Some(steps), Variant::AsClaimed) => Some(self.run_route(&steps, offset)?),
            (Some(steps), _) => self.run_route(&steps, offset).ok(),
        };
        self.runs.borrow_mut().insert(key, run.clone());
        Ok(run)
    }

    fn run_route(
        &self,
        steps: &[&'static str],
        offset: Option<(crate::reference::Kind, i32)>,
    ) -> Result<RouteRun> {
        let frame = self.run(steps, offset)?;
        let flags = frame
            .column("flags")
            .ok()
            .and_then(|c| {
                c.str()
                    .ok()
                    .map(|ca| ca.iter().map(|f| f.unwrap_or("").to_string()).collect())
            })
            .unwrap_or_default();
        let stages = frame
            .get_column_names()
            .iter()
            .map(|n| n.to_string())
            .filter(|n| n == "value" || (n.starts_with("value_") && n != "value_input"))
            .map(|n| {
                let values = floats(&frame, &n);
                (n, values)
            })
            .collect();
        Ok(RouteRun { stages, flags })
    }
}

/// The engine steps of a variant of `route`, or None when the variant does not apply.
fn variant_steps(route: &[Role], variant: Variant) -> Option<Vec<&'static str>> {
    let steps: Vec<&'static str> = route.iter().filter_map(|r| r.step()).collect();
    match variant {
        Variant::AsClaimed | Variant::YearOffset(..) => Some(steps),
        Variant::Swapped => {
            let swapped: Vec<&'static str> = steps
                .iter()
                .map(|s| match *s {
                    "ppp" => "market",
                    "market" => "ppp",
                    other => other,
                })
                .collect();
            (swapped != steps).then_some(swapped)
        }
        Variant::Nominal => {
            let nominal: Vec<&'static str> =
                steps.iter().copied().filter(|s| *s != "deflate").collect();
            (nominal.len() != steps.len()).then_some(nominal)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn variants_swap_currency_steps_and_drop_deflation() {
        let route = [Role::Real, Role::Intl, Role::PerCapita];
        assert_eq!(
            variant_steps(&route, Variant::Swapped),
            Some(vec!["deflate", "market", "per-capita"])
        );
        assert_eq!(
            variant_steps(&route, Variant::Nominal),
            Some(vec!["ppp", "per-capita"])
        );
        assert_eq!(variant_steps(&[Role::PerCapita], Variant::Swapped), None);
    }
}
