//! What a received table claims: the roles its columns play (`--claim ROLE=COL`, or suggested by
//! header words), and the tolerance that honest rounding allows a claimed figure.

use crate::error::{Error, Result};

/// The kinds of claimed figures `audit` can recompute. The first five are adjustment steps of
/// the engine (`adjust::STEPS`); share, change and rank are comparisons within the table.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Role {
    Usd,
    Intl,
    Real,
    PerCapita,
    PerIncome,
    Share,
    Change,
    Rank,
}

impl Role {
    pub const ALL: [Role; 8] = [
        Role::Usd,
        Role::Intl,
        Role::Real,
        Role::PerCapita,
        Role::PerIncome,
        Role::Share,
        Role::Change,
        Role::Rank,
    ];

    pub fn name(self) -> &'static str {
        match self {
            Role::Usd => "usd",
            Role::Intl => "intl",
            Role::Real => "real",
            Role::PerCapita => "per-capita",
            Role::PerIncome => "per-income",
            Role::Share => "share",
            Role::Change => "change",
            Role::Rank => "rank",
        }
    }

    pub fn describe(self) -> &'static str {
        match self {
            Role::Usd => "US dollars at market rates",
            Role::Intl => "international dollars (PPP)",
            Role::Real => "base-year prices",
            Role::PerCapita => "per capita",
            Role::PerIncome => "relative to income per capita",
            Role::Share => "percentage share of the group total",
            Role::Change => "percent change from the previous year",
            Role::Rank => "rank",
        }
    }

    /// The adjustment step that makes a figure of this role (the same step `adjust` runs).
    pub fn step(self) -> Option<&'static str> {
        match self {
            Role::Usd => Some("market"),
            Role::Intl => Some("ppp"),
            Role::Real => Some("deflate"),
            Role::PerCapita => Some("per-capita"),
            Role::PerIncome => Some("per-income"),
            Role::Share | Role::Change | Role::Rank => None,
        }
    }

    fn parse(text: &str) -> Option<Role> {
        let text = text.trim().to_lowercase();
        Role::ALL
            .into_iter()
            .find(|r| r.name() == text || r.step() == Some(text.as_str()))
    }
}

/// One claimed column: the route of steps that made it (`intl`, `real+intl+per-capita`), or a
/// comparison role alone (share, change, rank).
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct Claim {
    pub route: Vec<Role>,
    pub column: String,
    /// True when the role was read from the header rather than given with --claim.
    pub assumed: bool,
}

impl Claim {
    /// The route as written: `real+intl`.
    pub fn name(&self) -> String {
        self.route
            .iter()
            .map(|r| r.name())
            .collect::<Vec<_>>()
            .join("+")
    }

    /// The role of the figure: the last step of the route.
    pub fn role(&self) -> Role {
        *self.route.last().unwrap_or(&Role::Rank)
    }

    /// The engine's step names of the route (empty for share, change and rank).
    pub fn steps(&self) -> Vec<&'static str> {
        self.route.iter().filter_map(|r| r.step()).collect()
    }

    pub fn describe(&self) -> String {
        self.route
            .iter()
            .map(|r| r.describe())
            .collect::<Vec<_>>()
            .join(", then ")
    }
}

/// Parses `ROUTE=COL`, where ROUTE is one role or steps joined by `+`.
pub fn parse_claim(text: &str) -> Result<Claim> {
    let (route, column) = text.split_once('=').ok_or_else(|| {
        Error::usage(
            format!("--claim \"{text}\" is not ROLE=COL"),
            "write for example --claim intl=\"Fee (PPP $)\" or --claim real+intl=fee_ppp_2023",
        )
    })?;
    let roles = route
        .split('+')
        .map(|part| {
            Role::parse(part).ok_or_else(|| {
                Error::usage(
                    format!("unknown claim role \"{}\"", part.trim()),
                    format!(
                        "use one of {} (steps may be chained with +, as in real+intl)",
                        Role::ALL.map(Role::name).join(", ")
                    ),
                )
            })
        })
        .collect::<Result<Vec<_>>>()?;
    if roles.len() > 1 && roles.iter().any(|r| r.step().is_none()) {
        return Err(Error::usage(
            format!("--claim \"{route}\" chains share, change or rank with other roles"),
            "chain only the steps usd, intl, real, per-capita and per-income; give share, change and rank on their own",
        ));
    }
    Ok(Claim {
        route: roles,
        column: column.trim().to_string(),
        assumed: false,
    })
}

/// Roles suggested by header words, for columns the user did not declare.
pub fn suggest(headers: &[String], taken: &[String]) -> Vec<Claim> {
    let mut out: Vec<Claim> = Vec::new();
    for header in headers {
        if taken.contains(header) {
            continue;
        }
        let h = header.to_lowercase();
        let role = if h.contains("rank") {
            Some(Role::Rank)
        } else if h.contains("ppp") || h.contains("intl") || h.contains("international") {
            Some(Role::Intl)
        } else if h.contains("per capita")
            || h.contains("per_capita")
            || h.contains("per 1")
            || h.contains("per_1")
        {
            Some(Role::PerCapita)
        } else if h.contains("share") {
            Some(Role::Share)
        } else if h.contains("change") || h.contains("growth") {
            Some(Role::Change)
        } else if h.contains("real") || h.contains("constant") {
            Some(Role::Real)
        } else if h.contains("usd") || h.contains("us$") || h.contains("dollar") {
            Some(Role::Usd)
        } else {
            None
        };
        if let Some(role) = role {
            if !out.iter().any(|c| c.route == [role]) {
                out.push(Claim {
                    route: vec![role],
                    column: header.clone(),
                    assumed: true,
                });
            }
        }
    }
    out
}

/// Half a unit of the last printed digit of a number as written: "12.30" → 0.005, "1,200" → 0.5.
/// Common practice in statistical publishing: a figure rounded for print is exact to half a unit
/// of its last digit.
pub fn half_unit(text: &str) -> f64 {
    let cleaned: String = text
        .trim()
        .chars()
        .filter(|c| c.is_ascii_digit() || *c == '.' || *c == 'e' || *c == 'E' || *c == '-')
        .collect();
    let mantissa = cleaned.split(['e', 'E']).next().unwrap_or("");
    let exponent: i32 = cleaned
        .split(['e', 'E'])
        .nth(1)
        .and_then(|e| e.parse().ok())
        .unwrap_or(0);
    let decimals = mantissa
        .split_once('.')
        .map(|(_, f)| f.len() as i32)
        .unwrap_or(0);
    0.5 * 10f64.powi(exponent - decimals)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn half_unit_of_the_last_printed_digit() {
        // Rounding to the printed digit leaves at most half a unit of it (common practice in
        // statistical publishing, no source).
        assert_eq!(half_unit("12"), 0.5);
        assert_eq!(half_unit("12.3"), 0.05);
        assert!((half_unit("1,234.50") - 0.005).abs() < 1e-15);
        assert_eq!(half_unit("1.5e3"), 50.0);
    }

    #[test]
    fn claims_parse_and_header_words_suggest_roles() {
        assert_eq!(parse_claim("intl=Fee PPP").unwrap().route, vec![Role::Intl]);
        let chained = parse_claim("real+ppp+per-capita=x").unwrap();
        assert_eq!(chained.steps(), vec!["deflate", "ppp", "per-capita"]);
        assert_eq!(chained.name(), "real+intl+per-capita");
        assert!(parse_claim("gdp=x").is_err());
        assert!(parse_claim("intl").is_err());
        assert!(parse_claim("intl+rank=x").is_err());
        let headers: Vec<String> = ["country", "fee", "Fee (PPP $)", "Rank", "Fee, US$"]
            .map(String::from)
            .to_vec();
        let roles: Vec<Role> = suggest(&headers, &["country".into(), "fee".into()])
            .iter()
            .map(|c| c.role())
            .collect();
        assert_eq!(roles, vec![Role::Intl, Role::Rank, Role::Usd]);
    }
}
