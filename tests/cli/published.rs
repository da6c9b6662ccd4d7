//! Checks against published figures and worked examples, each source named beside it.

use crate::{num, setup};

#[test]
fn cpi_rebasing_matches_bls_cpi_u() {
    // Source: U.S. Bureau of Labor Statistics, CPI-U, U.S. city average, all items,
    // 1982-84 = 100, annual averages (values recalled from memory): 2000 = 172.2,
    // 2015 = 237.017, 2020 = 258.811, 2023 = 304.702. 100 dollars of 2015 are 128.56 dollars
    // of 2023 (same source, from memory).
    let env = setup();
    let input = env.write("usd.csv", "country,year,value\nUnited States,2015,100\nUnited States,2000,100\nUSA,2020,100\nUS,2023,100\n");
    let run = env.run(&[
        "adjust",
        &input,
        "--refs",
        &env.data("published"),
        "--steps",
        "deflate",
        "--base-year",
        "2023",
        "--format",
        "csv",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = run.rows();
    assert_eq!(rows.len(), 4);
    assert!(
        (num(&rows[0], "value_real") - 128.56).abs() < 0.005,
        "{}",
        rows[0]["value_real"]
    );
    assert!((num(&rows[1], "value_real") - 100.0 * 304.702 / 172.2).abs() < 1e-9);
    assert!((num(&rows[2], "value_real") - 100.0 * 304.702 / 258.811).abs() < 1e-9);
    assert_eq!(
        num(&rows[3], "value_real"),
        100.0,
        "the base year maps to itself"
    );
    assert_eq!(rows[0]["cpi_year"], "2015");
    assert_eq!(rows[0]["cpi_base_year"], "2023");
    assert!(rows.iter().all(|r| r["entity_code"] == "USA"));
}

#[test]
fn ppp_conversion_matches_the_oecd_worked_example() {
    // Source: OECD, "Purchasing power parities - frequently asked questions": a good priced
    // 2.30 euros in France and 2.00 dollars in the United States gives a PPP of 1.15 euros per
    // dollar, so 2.30 euros are 2.00 international dollars.
    // The price level index of the base country is 100 by construction (World Bank, price level
    // ratio of PPP conversion factor to market exchange rate).
    let env = setup();
    let input = env.write(
        "prices.csv",
        "country,year,price\nFrance,2020,2.30\nUnited States,2020,2.00\n",
    );
    let run = env.run(&[
        "adjust",
        &input,
        "--refs",
        &env.data("published"),
        "--steps",
        "ppp",
        "--format",
        "csv",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = run.rows();
    assert!((num(&rows[0], "value_intl") - 2.00).abs() < 1e-12);
    assert!((num(&rows[1], "value_intl") - 2.00).abs() < 1e-12);
    assert_eq!(num(&rows[1], "price_level_index"), 100.0);
    // France: PPP 1.15 over the fixture market rate 0.92, times 100 = 125 (the World Bank's
    // price level ratio definition); an inverted ratio would give 80.
    assert!((num(&rows[0], "price_level_index") - 1.15 / 0.92 * 100.0).abs() < 1e-9);
    assert!((num(&rows[0], "price_level_index") - 125.0).abs() < 1e-9);
    // Equal in international dollars: a tie, and ties share the lowest rank (common practice).
    assert_eq!(rows[0]["rank_adjusted"], "1");
    assert_eq!(rows[1]["rank_adjusted"], "1");
    // At the fixture market rate (0.92, not from a source) France looks dearer than the US.
    assert_eq!(rows[0]["rank_baseline"], "1");
    assert_eq!(rows[1]["rank_baseline"], "2");
    assert_eq!(rows[0]["rank_shift"], "0");
    assert_eq!(rows[1]["rank_shift"], "1");
}

#[test]
fn usd_input_is_taken_back_to_local_currency_before_ppp() {
    // A figure in USD converts to local currency at the same year's market rate, then at the
    // PPP (the method the World Bank describes for converting USD series to PPP terms; common
    // practice). 2.50 USD in France at 0.92 EUR/USD = 2.30 EUR = 2.00 international dollars
    // with the OECD worked example's PPP.
    let env = setup();
    let input = env.write("usd.csv", "country,year,price\nFrance,2020,2.5\n");
    let run = env.run(&[
        "adjust",
        &input,
        "--refs",
        &env.data("published"),
        "--steps",
        "ppp",
        "--currency-code",
        "USD",
        "--format",
        "csv",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = run.rows();
    assert!(
        (num(&rows[0], "value_intl") - 2.0).abs() < 1e-12,
        "{:?}",
        rows[0]
    );
    assert!(
        (num(&rows[0], "value_baseline") - 2.5).abs() < 1e-12,
        "market conversion of USD is the identity"
    );
}
