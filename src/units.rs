//! What a track's figures are measured in: the one description of a unit (money basis, price
//! year, per-capita scale) from which every label is written — the table and md footers, the
//! json metadata, the HTML report's axes and legends, and the methods note.
//!
//! A unit is derived from the steps a track actually ran, never assumed: a run without a PPP
//! step has no "market rates" anywhere, and a run without `deflate` says "current prices".

use crate::adjust::{IncomeAs, StepSettings};

/// What the figures of a track are in, before any price-year or per-capita part.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
#[serde(tag = "basis", rename_all = "snake_case")]
pub enum Money {
    /// The figures as the input gives them: each entity's own currency, one stated currency,
    /// each row's currency column, or no currency at all (counts, `--currency-code XXX`).
    AsGiven { currency: GivenCurrency },
    /// Converted to the base currency at market exchange rates.
    Market { currency: String },
    /// Converted to international dollars at purchasing-power parities.
    Ppp,
    /// A ratio of income per capita: a share of a year's income, or days of a mean income.
    Income { r#as: IncomeKind },
}

impl Default for Money {
    fn default() -> Money {
        Money::AsGiven {
            currency: GivenCurrency::Local,
        }
    }
}

/// The currency the input's figures are in when no step converts them.
#[derive(Debug, Clone, Default, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum GivenCurrency {
    /// Each entity's own currency (the unit of its reference tables).
    #[default]
    Local,
    /// One ISO 4217 code for every figure (`--currency-code`).
    Code(String),
    /// ISO 4217 `XXX`: the figures are not money.
    NotMoney,
    /// A currency column gives each row's currency.
    PerRow,
}

/// The two readings of a ratio of income.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum IncomeKind {
    Share,
    Days,
}

/// The unit of one track (baseline or adjusted).
#[derive(Debug, Clone, Default, PartialEq, Eq, serde::Serialize)]
pub struct TrackUnit {
    #[serde(flatten)]
    pub money: Money,
    /// The price year of constant prices (`deflate`); `None` means each year's current prices.
    pub price_year: Option<i32>,
    /// People per figure after `per-capita` (1 = per person); `None` without that step.
    pub per_people: Option<u32>,
    /// The whole unit in words, as every label prints it.
    pub words: String,
}

/// How the input's figures are denominated, as reading them decided.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct InputCurrency {
    /// `--currency-code`, if given.
    pub code: Option<String>,
    /// Whether a currency column gives each row's currency.
    pub column: bool,
}

impl InputCurrency {
    fn given(&self) -> GivenCurrency {
        match self.code.as_deref() {
            Some("XXX") => GivenCurrency::NotMoney,
            Some(code) => GivenCurrency::Code(code.to_string()),
            None if self.column => GivenCurrency::PerRow,
            None => GivenCurrency::Local,
        }
    }
}

impl TrackUnit {
    /// The unit of a track that ran `steps` (step names, in order) with `settings`.
    pub fn of(steps: &[&str], settings: &StepSettings, input: &InputCurrency) -> TrackUnit {
        let mut money = Money::AsGiven {
            currency: input.given(),
        };
        let mut price_year = None;
        let mut per_people = None;
        for step in steps {
            match *step {
                "market" => {
                    money = Money::Market {
                        currency: settings.base_currency.clone(),
                    }
                }
                "ppp" => money = Money::Ppp,
                "deflate" => price_year = settings.base_year,
                "per-capita" => per_people = Some(settings.per),
                "per-income" => {
                    money = Money::Income {
                        r#as: match settings.income_as {
                            IncomeAs::Share => IncomeKind::Share,
                            IncomeAs::Days => IncomeKind::Days,
                        },
                    };
                    // A ratio of income carries neither a price year nor a per-capita scale.
                    price_year = None;
                    per_people = None;
                }
                _ => {}
            }
        }
        let mut unit = TrackUnit {
            money,
            price_year,
            per_people,
            words: String::new(),
        };
        unit.words = unit.describe();
        unit
    }

    /// Whether the figures are money (so a price year applies to them).
    fn is_money(&self) -> bool {
        !matches!(
            self.money,
            Money::Income { .. }
                | Money::AsGiven {
                    currency: GivenCurrency::NotMoney
                }
        )
    }

    fn describe(&self) -> String {
        let mut text = match &self.money {
            Money::AsGiven { currency } => match currency {
                GivenCurrency::Local => "local currency as given".to_string(),
                GivenCurrency::Code(code) => format!("{code} as given"),
                GivenCurrency::NotMoney => "figures as given (not money)".to_string(),
                GivenCurrency::PerRow => "each row's own currency as given".to_string(),
            },
            Money::Market { currency } => format!("{currency} at market rates"),
            Money::Ppp => "international dollars (PPP)".to_string(),
            Money::Income { r#as } => {
                return match r#as {
                    IncomeKind::Share => "share of a year's income per capita (0.05 = 5%)".into(),
                    IncomeKind::Days => "days of average income per capita".into(),
                }
            }
        };
        if self.is_money() {
            match self.price_year {
                Some(year) => text.push_str(&format!(", {year} prices")),
                None => text.push_str(", current prices"),
            }
        }
        if let Some(n) = self.per_people {
            text.push_str(", ");
            text.push_str(&per_people_words(n));
        }
        text
    }

    /// What a chart legend calls this track when it is the baseline of `adjusted`.
    pub fn baseline_legend(&self, adjusted: &TrackUnit) -> String {
        match (&self.money, &adjusted.money) {
            (Money::Market { .. }, Money::Ppp) => "baseline, at market rates".into(),
            _ if self == adjusted => "baseline, the same steps (no PPP step)".into(),
            _ => format!("baseline, {}", self.words),
        }
    }
}

/// A per-capita scale in words: "per person", "per 1000 people".
pub fn per_people_words(per: u32) -> String {
    if per == 1 {
        "per person".into()
    } else {
        format!("per {per} people")
    }
}

/// The units of both tracks of a run.
#[derive(Debug, Clone, Default, PartialEq, Eq, serde::Serialize)]
pub struct Units {
    pub baseline: TrackUnit,
    pub adjusted: TrackUnit,
}

impl Units {
    /// The one-line legend under reader tables.
    pub fn line(&self) -> String {
        format!(
            "baseline: {}; adjusted: {}",
            self.baseline.words, self.adjusted.words
        )
    }

    /// What chart legends call the baseline.
    pub fn baseline_legend(&self) -> String {
        self.baseline.baseline_legend(&self.adjusted)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::reference::Basis;

    fn settings() -> StepSettings {
        StepSettings {
            base_year: Some(2023),
            deflator: None,
            per: 1000,
            income_as: IncomeAs::Share,
            income_basis: Basis::Lcu,
            base_currency: "USD".into(),
            proportion: false,
            uncertain_factors: Default::default(),
        }
    }

    fn local() -> InputCurrency {
        InputCurrency {
            code: None,
            column: false,
        }
    }

    #[test]
    fn a_unit_names_only_the_steps_that_ran() {
        let s = settings();
        let deflate = TrackUnit::of(&["deflate"], &s, &local());
        assert_eq!(deflate.words, "local currency as given, 2023 prices");
        assert!(!deflate.words.contains("market"));
        let per = TrackUnit::of(&["per-capita"], &s, &local());
        assert_eq!(
            per.words,
            "local currency as given, current prices, per 1000 people"
        );
        let ppp = TrackUnit::of(&["deflate", "ppp"], &s, &local());
        assert_eq!(ppp.words, "international dollars (PPP), 2023 prices");
        let market = TrackUnit::of(&["deflate", "market"], &s, &local());
        assert_eq!(market.words, "USD at market rates, 2023 prices");
        let units = Units {
            baseline: market,
            adjusted: ppp,
        };
        assert_eq!(units.baseline_legend(), "baseline, at market rates");
        let same = Units {
            baseline: deflate.clone(),
            adjusted: deflate,
        };
        assert_eq!(
            same.baseline_legend(),
            "baseline, the same steps (no PPP step)"
        );
    }

    #[test]
    fn stated_currencies_and_counts_are_named() {
        let s = settings();
        let eur = InputCurrency {
            code: Some("EUR".into()),
            column: false,
        };
        assert_eq!(
            TrackUnit::of(&[], &s, &eur).words,
            "EUR as given, current prices"
        );
        let counts = InputCurrency {
            code: Some("XXX".into()),
            column: false,
        };
        assert_eq!(
            TrackUnit::of(&["per-capita"], &s, &counts).words,
            "figures as given (not money), per 1000 people"
        );
        let days = StepSettings {
            income_as: IncomeAs::Days,
            ..settings()
        };
        assert_eq!(
            TrackUnit::of(&["deflate", "per-income"], &days, &local()).words,
            "days of average income per capita"
        );
    }
}
