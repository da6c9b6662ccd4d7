//! `deflate`: brings a value to the prices of `--base-year` with a consumer price index.
//! value_real = value * cpi[base_year] / cpi[year].
//! Before any currency step it uses the entity's own CPI, and later conversions then use the
//! base year's rates ("constant PPPs": deflate, then convert). After a currency step it uses the
//! base currency's CPI (convert at each year's rate, then deflate in US dollars).
//! `--deflator` forces one of the two and refuses the order that contradicts it.

use super::{misplaced, At, Deflator, Prices, Step, StepContext, StepSettings, TrackState, Unit};
use crate::error::{Error, Result};
use crate::reference::Kind;
use polars::prelude::*;

pub struct Deflate;

impl Step for Deflate {
    fn name(&self) -> &'static str {
        "deflate"
    }

    fn summary(&self) -> &'static str {
        "bring every year to the prices of --base-year with a consumer price index"
    }

    fn formula(&self) -> &'static str {
        "value_real = value * cpi[base_year] / cpi[year]   (own CPI before conversion, base currency's CPI after)"
    }

    fn explain(&self, settings: &StepSettings) -> String {
        let year = settings.base_year.unwrap_or_default();
        match settings.deflator {
            Some(Deflator::BaseCurrency) => format!("Every year was brought to {year} prices with the {} consumer price index, after conversion at each year's rate.", settings.base_currency),
            _ => format!("Every year was brought to {year} prices with a consumer price index, so that changes over time are not inflation: the index of the currency the figure is in when the step runs (a country's own before any conversion, the base currency's after one)."),
        }
    }

    fn column(&self) -> &'static str {
        "value_real"
    }

    fn apply(&self, value: Expr, state: &mut TrackState, ctx: &mut StepContext) -> Result<Expr> {
        if ctx.settings.base_year.is_none() {
            return Err(Error::usage(
                "step deflate needs a base year",
                "pass --base-year YYYY",
            ));
        }
        if state.prices == Prices::BaseYear {
            return Err(misplaced(
                "deflate",
                "the value is already in base-year prices",
                "list deflate once",
            ));
        }
        let natural = match state.unit {
            Unit::Local => Deflator::Own,
            Unit::Base | Unit::Intl => Deflator::BaseCurrency,
            Unit::Ratio => {
                return Err(misplaced(
                    "deflate",
                    "the value is a ratio of income, which has no price base",
                    "leave deflate out",
                ))
            }
        };
        let chosen = ctx.settings.deflator.unwrap_or(natural);
        if chosen != natural {
            return Err(match chosen {
                Deflator::Own => misplaced(
                    "deflate",
                    "--deflator own deflates in local currency, but a currency step comes before it",
                    "put deflate before market/ppp (for example --steps deflate,ppp)",
                ),
                Deflator::BaseCurrency => misplaced(
                    "deflate",
                    "--deflator base-currency deflates in the base currency, but no currency step comes before it",
                    "put deflate after market/ppp (for example --steps ppp,deflate)",
                ),
            });
        }
        ctx.deflator_used = Some(chosen);
        let ratio = match chosen {
            Deflator::Own => {
                ctx.factor(Kind::Cpi, At::BaseYear) / ctx.factor(Kind::Cpi, At::RowYear)
            }
            Deflator::BaseCurrency => {
                ctx.base_currency_factor(Kind::Cpi, At::BaseYear)
                    / ctx.base_currency_factor(Kind::Cpi, At::RowYear)
            }
        };
        state.prices = Prices::BaseYear;
        Ok(value * ratio)
    }

    fn extra_columns(&self, state_before: &TrackState, ctx: &mut StepContext) -> Vec<Expr> {
        let ratio = match state_before.unit {
            Unit::Local => ctx.factor(Kind::Cpi, At::BaseYear) / ctx.factor(Kind::Cpi, At::RowYear),
            _ => {
                ctx.base_currency_factor(Kind::Cpi, At::BaseYear)
                    / ctx.base_currency_factor(Kind::Cpi, At::RowYear)
            }
        };
        vec![ratio.alias("cpi_ratio")]
    }
}
