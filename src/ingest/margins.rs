//! Reading the uncertainty of each figure: a margin of error at a stated level, a standard
//! error, a confidence interval, or a survey sample size for shares. Everything is turned into a
//! standard error in the figure's own unit (after `--value-multiplier`), which the pipeline then
//! carries through the steps.

use crate::cells::number::{self, Cell, NumberStyle};
use crate::error::{Error, Location, Result};
use crate::flags;
use crate::uncertainty::moe::{self, Level};

/// Where the uncertainty comes from.
#[derive(Debug, Clone, Default, PartialEq)]
pub enum MarginSpec {
    #[default]
    None,
    Moe {
        column: String,
        level: Level,
    },
    Se {
        column: String,
    },
    Ci {
        low: String,
        high: String,
        level: Level,
    },
    /// Shares with a sample size; `percent` says the shares are 0–100.
    SampleSize {
        column: String,
        percent: bool,
    },
}

impl MarginSpec {
    pub fn columns(&self) -> Vec<String> {
        match self {
            MarginSpec::None => vec![],
            MarginSpec::Moe { column, .. }
            | MarginSpec::Se { column }
            | MarginSpec::SampleSize { column, .. } => vec![column.clone()],
            MarginSpec::Ci { low, high, .. } => vec![low.clone(), high.clone()],
        }
    }

    pub fn describe(&self) -> Option<String> {
        match self {
            MarginSpec::None => None,
            MarginSpec::Moe { column, level } => Some(format!(
                "margins of error at {}% from column \"{column}\"",
                level.percent()
            )),
            MarginSpec::Se { column } => Some(format!("standard errors from column \"{column}\"")),
            MarginSpec::Ci { low, high, level } => Some(format!(
                "{}% confidence intervals from columns \"{low}\" and \"{high}\"",
                level.percent()
            )),
            MarginSpec::SampleSize { column, percent } => Some(format!(
                "shares ({}) with sample sizes from column \"{column}\": SE = sqrt(p(1 - p)/n)",
                if *percent { "percent" } else { "fractions" }
            )),
        }
    }
}

/// One row's margin cells: (header, text) in the order of `MarginSpec::columns`.
pub struct MarginCells<'a> {
    pub cells: Vec<(&'a str, &'a str)>,
}

/// The standard error of one figure; pushes `no_margin` or `asymmetric_ci` flags.
pub fn standard_error(
    spec: &MarginSpec,
    value: Option<f64>,
    cells: &MarginCells,
    multiplier: f64,
    file: &str,
    line: usize,
    row_flags: &mut Vec<&'static str>,
) -> Result<Option<f64>> {
    let read = |index: usize| -> Result<Option<f64>> {
        let (header, text) = cells.cells[index];
        match number::parse_cell(text, NumberStyle::default()) {
            Ok(Cell::Number { float, .. }) => Ok(Some(float * multiplier)),
            Ok(Cell::Missing) => Ok(None),
            Err(e) => Err(Error::bad_input(
                Location::cell(file, line, header),
                e.reason,
                e.hint,
                "correct the cell",
            )),
        }
    };
    let non_negative = |index: usize, x: f64| -> Result<f64> {
        if x < 0.0 {
            let (header, text) = cells.cells[index];
            return Err(Error::bad_input(
                Location::cell(file, line, header),
                format!("\"{text}\" is negative"),
                "a margin, standard error or sample size of zero or more",
                "correct the cell",
            ));
        }
        Ok(x)
    };
    let Some(value) = value else {
        return Ok(None);
    };
    let se = match spec {
        MarginSpec::None => return Ok(None),
        MarginSpec::Moe { level, .. } => read(0)?
            .map(|m| non_negative(0, m).map(|m| moe::se_from_moe(m, *level)))
            .transpose()?,
        MarginSpec::Se { .. } => read(0)?.map(|s| non_negative(0, s)).transpose()?,
        MarginSpec::Ci { level, .. } => match (read(0)?, read(1)?) {
            (Some(low), Some(high)) => {
                let below = value - low;
                let above = high - value;
                if below < 0.0 || above < 0.0 {
                    return Err(Error::bad_input(
                        Location::line(file, line),
                        format!("the value {value} lies outside its interval [{low}, {high}]"),
                        "a lower bound at or below the value and an upper bound at or above it",
                        "check that the bound columns are the right way round and in the value's unit",
                    ));
                }
                if (above - below).abs() > 1e-9 * value.abs().max(1.0) {
                    row_flags.push(flags::ASYMMETRIC_CI);
                }
                // The larger half stands for a symmetric margin: conservative, since no margin
                // is understated (common practice; no published source is relied on).
                Some(moe::se_from_moe(below.max(above), *level))
            }
            _ => None,
        },
        MarginSpec::SampleSize { percent, .. } => match read(0)? {
            Some(n) if n > 0.0 => {
                // The sample size is a count: the value multiplier does not apply to it.
                let n = n / multiplier;
                let scale = if *percent { 100.0 } else { 1.0 };
                let p = value / scale;
                if !(0.0..=1.0).contains(&p) {
                    return Err(Error::bad_input(
                        Location::line(file, line),
                        format!("the share {value} is not between 0 and {scale}"),
                        "shares between 0 and 100 (or 0 and 1 with --share-unit fraction)",
                        "check --share-unit, or leave out --sample-size for figures that are not shares",
                    ));
                }
                Some(moe::se_of_share(p, n) * scale)
            }
            Some(_) => {
                return Err(Error::bad_input(
                    Location::cell(file, line, cells.cells[0].0),
                    "a sample size of zero or less",
                    "a positive sample size",
                    "correct the cell",
                ))
            }
            None => None,
        },
    };
    if se.is_none() {
        row_flags.push(flags::NO_MARGIN);
    }
    Ok(se)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn se(
        spec: &MarginSpec,
        value: f64,
        cells: Vec<(&str, &str)>,
    ) -> (Option<f64>, Vec<&'static str>) {
        let mut f = Vec::new();
        let out = standard_error(
            spec,
            Some(value),
            &MarginCells { cells },
            1.0,
            "t.csv",
            2,
            &mut f,
        )
        .unwrap();
        (out, f)
    }

    #[test]
    fn margins_become_standard_errors() {
        let spec = MarginSpec::Moe {
            column: "m".into(),
            level: Level::P90,
        };
        let (s, _) = se(&spec, 25.7, vec![("m", "0.9")]);
        assert!((s.unwrap() - 0.9 / 1.644_853_626_951_472).abs() < 1e-12);
        let (s, f) = se(&spec, 25.7, vec![("m", "..")]);
        assert_eq!(s, None);
        assert_eq!(f, vec!["no_margin".to_string()]);
    }

    #[test]
    fn asymmetric_intervals_keep_the_larger_half_and_are_flagged() {
        let spec = MarginSpec::Ci {
            low: "lo".into(),
            high: "hi".into(),
            level: Level::P95,
        };
        let (s, f) = se(&spec, 10.0, vec![("lo", "8"), ("hi", "13")]);
        assert!((s.unwrap() - 3.0 / 1.959_963_984_540_054).abs() < 1e-12);
        assert_eq!(f, vec!["asymmetric_ci".to_string()]);
        let mut f = Vec::new();
        let cells = MarginCells {
            cells: vec![("lo", "11"), ("hi", "13")],
        };
        assert!(standard_error(&spec, Some(10.0), &cells, 1.0, "t.csv", 2, &mut f).is_err());
    }

    #[test]
    fn shares_with_sample_sizes() {
        // n = 1,000, p = 50%: SE = sqrt(0.25/1000) = 1.58 points (binomial SE; common practice).
        let spec = MarginSpec::SampleSize {
            column: "n".into(),
            percent: true,
        };
        let (s, _) = se(&spec, 50.0, vec![("n", "1,000")]);
        assert!((s.unwrap() - 100.0 * (0.25f64 / 1000.0).sqrt()).abs() < 1e-12);
    }
}
