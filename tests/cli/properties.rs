//! Properties checked on generated tables through the library API (proptest): rows in = rows
//! out, ranks are a standard competition ranking, exact factors divide back out, a growing value
//! never ranks lower, and numbers written by the writer read back unchanged.

use levelfield::cells::number::{parse_cell, Cell, NumberStyle};
use levelfield::entity::Resolver;
use levelfield::pipeline::{run_adjust, PipelineSettings};
use levelfield::reference::{self, References};
use levelfield::report::format::{format_number, Rounding};
use polars::prelude::*;
use proptest::prelude::*;

const NAMES: &[&str] = &[
    "Azrevny", "Bolqueth", "Celvaran", "Dyrnolva", "Ezvandre", "Fulvessa", "Glumveth", "Mezvarra",
];

fn demo_references() -> (Resolver, References) {
    let mut resolver = Resolver::builtin();
    let references = reference::load(&levelfield::demo::DEMO_REFERENCES, &mut resolver).unwrap();
    (resolver, references)
}

/// The settings of `adjust --steps STEPS --base-year 2023 --allow-unresolved`, parsed by the
/// command line's own definition.
fn settings(steps: &[&str]) -> PipelineSettings {
    let steps = steps.join(",");
    let words = [
        "--steps",
        &steps,
        "--base-year",
        "2023",
        "--allow-unresolved",
    ];
    levelfield::plan::settings_from_words(&words, None).unwrap()
}

fn table(rows: &[(usize, i32, Option<f64>)]) -> String {
    let mut text = String::from("country,year,value\n");
    for (entity, year, value) in rows {
        let cell = value
            .map(|v| format_number(v, Rounding::Full, false))
            .unwrap_or_else(|| "..".into());
        text.push_str(&format!("{},{year},{cell}\n", NAMES[*entity % NAMES.len()]));
    }
    text
}

fn floats(frame: &DataFrame, name: &str) -> Vec<Option<f64>> {
    frame.column(name).unwrap().f64().unwrap().iter().collect()
}

fn ints(frame: &DataFrame, name: &str) -> Vec<Option<i64>> {
    frame.column(name).unwrap().i64().unwrap().iter().collect()
}

fn row_strategy() -> impl Strategy<Value = Vec<(usize, i32, Option<f64>)>> {
    prop::collection::vec(
        (
            // Entities with every factor for 2019-2023 in the demo's tables (Mezvarra lacks a
            // 2019 CPI), and the years those tables cover, so that the checks below run on rows.
            0usize..7,
            2019i32..2024,
            prop::option::weighted(0.9, 1.0f64..1e6),
        ),
        1..30,
    )
}

/// Rows that must be ranked: a figure, and no other row with the same entity and year.
fn rankable(rows: &[(usize, i32, Option<f64>)]) -> usize {
    rows.iter()
        .filter(|(e, y, v)| {
            v.is_some() && rows.iter().filter(|(e2, y2, _)| e2 == e && y2 == y).count() == 1
        })
        .count()
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 48, ..ProptestConfig::default() })]

    #[test]
    fn rows_in_equal_rows_out_and_ranks_are_competition_ranks(rows in row_strategy()) {
        let (resolver, references) = demo_references();
        let text = table(&rows);
        let out = run_adjust(text.as_bytes(), "generated.csv", &settings(&["deflate", "ppp"]), &resolver, Some(&references)).unwrap();
        prop_assert_eq!(out.table.text_frame().unwrap().height(), rows.len());
        let values = floats(&out.table.text_frame().unwrap(), "value_adjusted");
        let ranks = ints(&out.table.text_frame().unwrap(), "rank_adjusted");
        let years: Vec<Option<i32>> = out.table.text_frame().unwrap().column("year").unwrap().i32().unwrap().iter().collect();
        let mut checked = 0;
        for i in 0..rows.len() {
            let Some(rank) = ranks[i] else { continue };
            checked += 1;
            let better = (0..rows.len())
                .filter(|&j| years[j] == years[i] && ranks[j].is_some() && values[j].unwrap() > values[i].unwrap())
                .count() as i64;
            prop_assert_eq!(rank, better + 1);
        }
        // Guard: every row that can be ranked was ranked and checked.
        prop_assert_eq!(checked, rankable(&rows));
    }

    #[test]
    fn an_exact_factor_divides_back_out(rows in row_strategy()) {
        let (resolver, references) = demo_references();
        let out = run_adjust(table(&rows).as_bytes(), "g.csv", &settings(&["ppp"]), &resolver, Some(&references)).unwrap();
        let value = floats(&out.table.text_frame().unwrap(), "value");
        let adjusted = floats(&out.table.text_frame().unwrap(), "value_intl");
        let ppp = floats(&out.table.text_frame().unwrap(), "ppp_used");
        let mut checked = 0;
        for i in 0..rows.len() {
            if let (Some(v), Some(a), Some(p)) = (value[i], adjusted[i], ppp[i]) {
                prop_assert!(((a * p) - v).abs() <= 1e-12 * v.abs());
                checked += 1;
            }
        }
        // Guard: every row with a figure was converted and checked.
        prop_assert_eq!(checked, rows.iter().filter(|r| r.2.is_some()).count());
    }

    #[test]
    fn a_value_that_grows_never_ranks_lower(values in prop::collection::vec(1.0f64..1000.0, 2..8), pick in 0usize..8, growth in 0.0f64..500.0) {
        let (resolver, references) = demo_references();
        let pick = pick % values.len();
        let rows: Vec<(usize, i32, Option<f64>)> = values.iter().enumerate().map(|(i, v)| (i, 2023, Some(*v))).collect();
        let mut grown = rows.clone();
        grown[pick].2 = Some(values[pick] + growth);
        let run = |r: &[(usize, i32, Option<f64>)]| {
            let out = run_adjust(table(r).as_bytes(), "g.csv", &settings(&["ppp"]), &resolver, Some(&references)).unwrap();
            ints(&out.table.text_frame().unwrap(), "rank_adjusted")
        };
        let (before, after) = (run(&rows), run(&grown));
        // One row per entity (at most seven), all with factors: both runs rank the pick.
        let (Some(b), Some(a)) = (before[pick], after[pick]) else {
            return Err(TestCaseError::fail(format!("unranked: {before:?} {after:?}")));
        };
        prop_assert!(a <= b, "rank {} became {}", b, a);
    }

    #[test]
    fn numbers_written_read_back_unchanged(x in prop::num::f64::NORMAL, decimals in 0u32..6) {
        prop_assume!(x.abs() < 1e20 && x.abs() > 1e-20);
        let full = format_number(x, Rounding::Full, false);
        match parse_cell(&full, NumberStyle::default()) {
            Ok(Cell::Number { float, .. }) => prop_assert_eq!(float, x),
            other => prop_assert!(false, "{} gave {:?}", full, other),
        }
        // Rounded and grouped text reads back to the rounded number.
        let rounded = format_number(x, Rounding::Decimals(decimals), true);
        let back = match parse_cell(&rounded, NumberStyle::default()) {
            Ok(Cell::Number { float, .. }) => float,
            other => return Err(TestCaseError::fail(format!("{rounded} gave {other:?}"))),
        };
        prop_assert!((back - x).abs() <= 0.5 * 10f64.powi(-(decimals as i32)) * (1.0 + 1e-9) + x.abs() * 1e-15);
    }
}
