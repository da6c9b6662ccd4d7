//! The adjustment steps and their registry.
//!
//! Each step lives in a file of its own and implements `Step`: a name, a one-line summary, its
//! formula, the stage column it writes, and `apply`, which turns the current value expression
//! into the next one while recording the reference factors it needs (`FactorNeed`). `STEPS` is
//! the one list of all steps: `--help`, the README's methods section and the run summary are
//! generated from it, and a unit test checks its rules.
//!
//! Steps run twice: once for the adjusted track (the steps as given) and once for the baseline
//! track (`ppp` replaced by `market`), so that the rank shift isolates the price-level effect.

pub mod deflate;
pub mod market;
pub mod per_capita;
pub mod per_income;
pub mod ppp;

use crate::error::{Error, Result};
use crate::reference::{Basis, Kind};
use polars::prelude::*;
use std::collections::BTreeSet;

/// The unit the current value is in.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Unit {
    /// The entity's own currency (or the unit its reference tables use).
    Local,
    /// The reference tables' base currency at market rates (USD unless the catalog says other).
    Base,
    /// International dollars (PPP).
    Intl,
    /// A ratio without currency (share of income, days of income).
    Ratio,
}

/// Whose prices the current value is in.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Prices {
    RowYear,
    BaseYear,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct TrackState {
    pub unit: Unit,
    pub prices: Prices,
    /// The per-capita scale applied so far (1 when none).
    pub per: Option<u32>,
}

/// Which track is being built.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Track {
    Adjusted,
    Baseline,
}

/// The year a factor is taken from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum At {
    RowYear,
    BaseYear,
}

/// Whose factor: the row's entity, or the base currency's home (for the base-currency CPI).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Whose {
    Entity,
    BaseCurrency,
}

/// A reference factor a step needs; `attach` provides a `<prefix>_used` and a `<prefix>_year`
/// column for each.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct FactorNeed {
    pub kind: Kind,
    pub at: At,
    pub whose: Whose,
}

impl FactorNeed {
    pub fn entity(kind: Kind, at: At) -> Self {
        FactorNeed {
            kind,
            at,
            whose: Whose::Entity,
        }
    }

    /// Column prefix: `fx`, `fx_base`, `base_cpi`, `base_cpi_base`.
    pub fn prefix(&self) -> String {
        let owner = match self.whose {
            Whose::Entity => "",
            Whose::BaseCurrency => "base_",
        };
        let at = match self.at {
            At::RowYear => "",
            At::BaseYear => "_base",
        };
        format!("{owner}{}{at}", self.kind.as_str())
    }

    pub fn used_column(&self) -> String {
        format!("{}_used", self.prefix())
    }

    pub fn se_column(&self) -> String {
        format!("{}_se", self.prefix())
    }

    pub fn year_column(&self) -> String {
        format!("{}_year", self.prefix())
    }

    /// The flag raised when the factor is missing.
    pub fn missing_flag(&self) -> String {
        match self.at {
            At::RowYear => format!("no_{}", self.prefix()),
            At::BaseYear => format!("no_{}_year", self.prefix()),
        }
    }

    /// The flag raised when a neighbouring year's factor was used.
    pub fn year_differs_flag(&self, year: i32) -> String {
        format!("{}_year_differs:{year}", self.prefix())
    }

    /// The factor as a column expression.
    pub fn col(&self) -> Expr {
        col(self.used_column())
    }
}

/// How `deflate` picks its price index.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum, serde::Serialize)]
pub enum Deflator {
    /// The entity's own CPI, applied before currency conversion (then constant PPPs).
    Own,
    /// The base currency's CPI, applied after conversion at each year's rate.
    BaseCurrency,
}

/// How `per-income` expresses the ratio.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum, serde::Serialize)]
pub enum IncomeAs {
    /// value / income per capita, as a fraction (0.05 = 5% of a year's income).
    Share,
    /// value / (income per capita / 365): days of average income.
    Days,
}

/// Settings the steps read.
#[derive(Debug, Clone)]
pub struct StepSettings {
    pub base_year: Option<i32>,
    pub deflator: Option<Deflator>,
    pub per: u32,
    pub income_as: IncomeAs,
    pub income_basis: Basis,
    pub base_currency: String,
    /// Per-capita figures are proportions (people within the population).
    pub proportion: bool,
    /// Kinds whose reference tables carry standard errors (`<prefix>_se` columns).
    pub uncertain_factors: BTreeSet<Kind>,
}

/// What a step sees while it is applied.
pub struct StepContext<'a> {
    pub settings: &'a StepSettings,
    pub track: Track,
    pub needs: &'a mut BTreeSet<FactorNeed>,
    /// The deflator actually chosen (recorded by `deflate` for the summary).
    pub deflator_used: Option<Deflator>,
}

impl StepContext<'_> {
    /// Records the need and returns the factor's column.
    pub fn factor(&mut self, kind: Kind, at: At) -> Expr {
        let need = FactorNeed::entity(kind, at);
        self.needs.insert(need);
        need.col()
    }

    /// The standard error column of a factor, when its reference table carries one.
    pub fn factor_se(&mut self, kind: Kind, at: At) -> Option<Expr> {
        if !self.settings.uncertain_factors.contains(&kind) {
            return None;
        }
        let need = FactorNeed::entity(kind, at);
        self.needs.insert(need);
        Some(col(need.se_column()))
    }

    pub fn base_currency_factor(&mut self, kind: Kind, at: At) -> Expr {
        let need = FactorNeed {
            kind,
            at,
            whose: Whose::BaseCurrency,
        };
        self.needs.insert(need);
        need.col()
    }

    /// The year whose factor converts a value in `prices`.
    pub fn at_for(prices: Prices) -> At {
        match prices {
            Prices::RowYear => At::RowYear,
            Prices::BaseYear => At::BaseYear,
        }
    }
}

/// An adjustment step.
pub trait Step: Sync {
    /// The name used in `--steps`.
    fn name(&self) -> &'static str;
    /// One line for `--help`.
    fn summary(&self) -> &'static str;
    /// The formula, in the notation of the README's methods section.
    fn formula(&self) -> &'static str;
    /// The stage column written on the adjusted track.
    fn column(&self) -> &'static str;
    /// What the step did, in one plain sentence an editor can paste under a chart.
    fn explain(&self, settings: &StepSettings) -> String;
    /// The next value expression and state.
    fn apply(&self, value: Expr, state: &mut TrackState, ctx: &mut StepContext) -> Result<Expr>;
    /// Extra columns the step writes on the adjusted track: factors derived from others, built
    /// from `ctx.factor` columns only, for they are computed once an entity-year, not once a
    /// row (`frame::attach_factors`).
    fn extra_columns(&self, _state_before: &TrackState, _ctx: &mut StepContext) -> Vec<Expr> {
        Vec::new()
    }
    /// The standard error after the step, given the value and its standard error before it.
    /// By default the step multiplies by exact factors, so the error scales by the same factors
    /// (ACS General Handbook, ch. 8: an estimate times a constant has its margin times it).
    fn propagate(
        &self,
        _value_before: Expr,
        se_before: Expr,
        state_before: &TrackState,
        ctx: &mut StepContext,
    ) -> Result<Expr> {
        let mut state = *state_before;
        self.apply(se_before, &mut state, ctx)
    }
}

/// Standard error of X / Y with an uncertain Y: (1/Y)·sqrt(SE_X² + (X/Y)²·SE_Y²); for a proportion
/// (X a subset of Y) the minus form, falling back to the ratio form when the value under the root
/// is negative (U.S. Census Bureau, ACS General Handbook 2018/2020, ch. 8).
pub fn ratio_se(x: Expr, se_x: Expr, y: Expr, se_y: Expr, proportion: bool) -> Expr {
    let r = x / y.clone();
    let ratio = (se_x.clone() * se_x.clone() + r.clone() * r.clone() * se_y.clone() * se_y.clone())
        .sqrt()
        / y.clone();
    if !proportion {
        return ratio;
    }
    let under = se_x.clone() * se_x - r.clone() * r * se_y.clone() * se_y;
    when(under.clone().lt(lit(0.0)))
        .then(ratio)
        .otherwise(under.sqrt() / y)
}

/// Every step, in the order the methods note lists them.
pub static STEPS: &[&dyn Step] = &[
    &market::Market,
    &ppp::Ppp,
    &deflate::Deflate,
    &per_capita::PerCapita,
    &per_income::PerIncome,
];

pub fn find_step(name: &str) -> Option<&'static dyn Step> {
    STEPS.iter().copied().find(|s| s.name() == name)
}

/// The names of all steps, for messages.
pub fn step_names() -> String {
    STEPS
        .iter()
        .map(|s| s.name())
        .collect::<Vec<_>>()
        .join(", ")
}

/// The `--steps` help text, generated from the registry.
pub fn steps_help() -> String {
    let mut text =
        String::from("Adjustment steps, applied in the order given (comma-separated):\n");
    for step in STEPS {
        text.push_str(&format!(
            "  {:<11} {}\n  {:<11} = {}\n",
            step.name(),
            step.summary(),
            "",
            step.formula()
        ));
    }
    text
}

/// The steps of the baseline track: `ppp` replaced by `market` (dropped if `market` is there
/// already), everything else unchanged.
pub fn baseline_steps(steps: &[&'static dyn Step]) -> Vec<&'static dyn Step> {
    let has_market = steps.iter().any(|s| s.name() == "market");
    steps
        .iter()
        .filter_map(|s| match s.name() {
            "ppp" if has_market => None,
            "ppp" => Some(&market::Market as &'static dyn Step),
            _ => Some(*s),
        })
        .collect()
}

/// An error for a step placed where it cannot work.
pub fn misplaced(step: &str, problem: impl Into<String>, fix: impl Into<String>) -> Error {
    Error::usage(format!("step {step}: {}", problem.into()), fix.into())
}

/// The options a list of steps needs: a base year for deflate, per-income last.
pub fn check_step_options(steps: &[&'static dyn Step], base_year: Option<i32>) -> Result<()> {
    check_year_option("--base-year", base_year)?;
    if steps.iter().any(|s| s.name() == "deflate") && base_year.is_none() {
        return Err(Error::usage(
            "step deflate needs a base year",
            "pass --base-year YYYY (for example --base-year 2023)",
        ));
    }
    if let Some(i) = steps.iter().position(|s| s.name() == "per-income") {
        if i + 1 != steps.len() {
            return Err(Error::usage(
                "per-income must be the last step: its result is a ratio without currency or price base",
                "move per-income to the end of --steps",
            ));
        }
    }
    Ok(())
}

/// A year given as an option must be a calendar year the tables can hold.
pub fn check_year_option(flag: &str, year: Option<i32>) -> Result<()> {
    match year {
        Some(y) if !crate::cells::words::YEARS.contains(&y) => Err(Error::usage(
            format!("{flag} {y} is not a calendar year the tables can hold"),
            format!(
                "pass {flag} with a four-digit year from {} to {}",
                crate::cells::words::YEARS.start(),
                crate::cells::words::YEARS.end()
            ),
        )),
        _ => Ok(()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// `ratio_se` evaluated on one row of literals.
    fn ratio_se_of(x: f64, se_x: f64, y: f64, se_y: f64, proportion: bool) -> f64 {
        let frame = polars::df!("x" => [x], "sx" => [se_x], "y" => [y], "sy" => [se_y]).unwrap();
        let out = frame
            .lazy()
            .select([ratio_se(col("x"), col("sx"), col("y"), col("sy"), proportion).alias("se")])
            .collect()
            .unwrap();
        out.column("se").unwrap().f64().unwrap().get(0).unwrap()
    }

    #[test]
    fn ratio_and_proportion_standard_errors_follow_the_handbook_formulas() {
        // ACS General Handbook (U.S. Census Bureau, 2018/2020), ch. 8, worked by hand:
        // X = 500 ± 20 (SE), Y = 2000 ± 50: r = 0.25.
        // ratio:      sqrt(20² + 0.25²·50²) / 2000 = sqrt(556.25) / 2000 = 0.011792476415070755
        // proportion: sqrt(20² − 0.25²·50²) / 2000 = sqrt(243.75) / 2000 = 0.0078062474979979975
        let ratio = ratio_se_of(500.0, 20.0, 2000.0, 50.0, false);
        assert!((ratio - 556.25f64.sqrt() / 2000.0).abs() < 1e-15, "{ratio}");
        assert!((ratio - 0.011_792_476_415_070_755).abs() < 1e-15);
        let proportion = ratio_se_of(500.0, 20.0, 2000.0, 50.0, true);
        assert!(
            (proportion - 243.75f64.sqrt() / 2000.0).abs() < 1e-15,
            "{proportion}"
        );
        assert!((proportion - 0.007_806_247_497_997_998).abs() < 1e-15);
        // Under the root negative (X = 100 ± 5, Y = 200 ± 20, r = 0.5: 25 − 100 < 0): the
        // handbook says to use the ratio form, sqrt(25 + 100) / 200 = 0.05590169943749475.
        let fallback = ratio_se_of(100.0, 5.0, 200.0, 20.0, true);
        assert!(
            (fallback - 125f64.sqrt() / 200.0).abs() < 1e-15,
            "{fallback}"
        );
        assert_eq!(fallback, ratio_se_of(100.0, 5.0, 200.0, 20.0, false));
    }

    #[test]
    fn step_names_list_the_registry_for_messages() {
        assert_eq!(step_names(), "market, ppp, deflate, per-capita, per-income");
    }

    #[test]
    fn registry_rules_unique_names_and_complete_docs() {
        let mut names: Vec<&str> = STEPS.iter().map(|s| s.name()).collect();
        names.sort();
        names.dedup();
        assert_eq!(names.len(), STEPS.len(), "step names must be unique");
        let mut columns: Vec<&str> = STEPS.iter().map(|s| s.column()).collect();
        columns.sort();
        columns.dedup();
        assert_eq!(columns.len(), STEPS.len(), "stage columns must be unique");
        for step in STEPS {
            assert!(
                !step.summary().is_empty() && !step.formula().is_empty(),
                "{}",
                step.name()
            );
            assert!(step.column().starts_with("value_"), "{}", step.name());
        }
    }

    #[test]
    fn baseline_replaces_ppp_by_market() {
        let steps: Vec<&'static dyn Step> = ["deflate", "ppp", "per-capita"]
            .iter()
            .map(|n| find_step(n).unwrap())
            .collect();
        let names: Vec<&str> = baseline_steps(&steps).iter().map(|s| s.name()).collect();
        assert_eq!(names, vec!["deflate", "market", "per-capita"]);
        let steps: Vec<&'static dyn Step> = ["market", "ppp"]
            .iter()
            .map(|n| find_step(n).unwrap())
            .collect();
        let names: Vec<&str> = baseline_steps(&steps).iter().map(|s| s.name()).collect();
        assert_eq!(names, vec!["market"]);
    }

    #[test]
    fn factor_columns_and_flags_are_named_from_the_need() {
        let need = FactorNeed::entity(Kind::Ppp, At::BaseYear);
        assert_eq!(need.used_column(), "ppp_base_used");
        assert_eq!(need.missing_flag(), "no_ppp_base_year");
        let need = FactorNeed::entity(Kind::Fx, At::RowYear);
        assert_eq!(need.missing_flag(), "no_fx");
        assert_eq!(need.year_differs_flag(2019), "fx_year_differs:2019");
        let need = FactorNeed {
            kind: Kind::Cpi,
            at: At::RowYear,
            whose: Whose::BaseCurrency,
        };
        assert_eq!(need.used_column(), "base_cpi_used");
    }
}
