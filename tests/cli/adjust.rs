//! `levelfield adjust` end to end on tables with real country names.

use crate::{competition_ranks, num, setup};

#[test]
fn wide_table_of_country_names_resolves_adjusts_ranks_and_keeps_every_row() {
    let env = setup();
    let run = env.run(&[
        "adjust",
        &env.data("wide-country-fees.csv"),
        "--refs",
        &env.data("country-refs"),
        "--steps",
        "ppp",
        "--format",
        "csv",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = run.rows();
    // 8 input lines × 2 year columns: rows in = rows out.
    assert_eq!(rows.len(), 16);
    assert!(
        run.stderr.contains("16 row(s) in, 16 row(s) out"),
        "{}",
        run.stderr
    );
    let codes: Vec<&str> = rows
        .iter()
        .step_by(2)
        .map(|r| r["entity_code"].as_str())
        .collect();
    // Publishers' spellings (World Bank and everyday forms) resolve to ISO 3166-1 alpha-3.
    assert_eq!(
        codes,
        vec!["KOR", "TUR", "CZE", "CIV", "VNM", "FRA", "USA", "WLD"]
    );
    assert_eq!(rows[0]["row_id"], "1:2020");
    assert_eq!(rows[1]["row_id"], "1:2023");

    // value_intl = value / ppp (the definition of the conversion; OECD PPP FAQ).
    let korea_2020 = &rows[0];
    assert!((num(korea_2020, "value_intl") - 1_200_000.0 / 848.0).abs() < 1e-9);
    assert!((num(korea_2020, "value_baseline") - 1_200_000.0 / 1180.0).abs() < 1e-9);
    assert!((num(korea_2020, "price_level_index") - 848.0 / 1180.0 * 100.0).abs() < 1e-9);

    // Côte d'Ivoire 2023 is "..": kept, flagged, not ranked.
    let civ_2023 = &rows[7];
    assert_eq!(civ_2023["value_input"], "..");
    assert!(
        civ_2023["flags"].contains("missing_value") && civ_2023["flags"].contains("not_ranked")
    );
    // Viet Nam has no PPP for 2023 in the reference table: strict lookup flags it.
    let vnm_2023 = &rows[9];
    assert_eq!(vnm_2023["value_adjusted"], "");
    assert!(vnm_2023["flags"].contains("no_ppp"), "{:?}", vnm_2023);
    // The world aggregate is kept and adjusted where it can be, but never ranked.
    for world in &rows[14..16] {
        assert_eq!(world["entity_kind"], "aggregate");
        assert!(world["flags"].contains("aggregate"));
        assert_eq!(world["rank_adjusted"], "");
    }

    // Ranks are standard competition ranks of the ranked values, per year.
    for year in ["2020", "2023"] {
        let ranked: Vec<_> = rows
            .iter()
            .filter(|r| r["year"] == year && !r["rank_adjusted"].is_empty())
            .collect();
        for column in ["value_adjusted", "value_baseline"] {
            let values: Vec<f64> = ranked.iter().map(|r| num(r, column)).collect();
            let expected = competition_ranks(&values);
            let rank_column = column.replace("value_", "rank_");
            let actual: Vec<i64> = ranked
                .iter()
                .map(|r| r[&rank_column].parse().unwrap())
                .collect();
            assert_eq!(actual, expected, "{column} {year}");
        }
        for r in &ranked {
            let shift: i64 = r["rank_shift"].parse().unwrap();
            let before: i64 = r["rank_baseline"].parse().unwrap();
            let after: i64 = r["rank_adjusted"].parse().unwrap();
            assert_eq!(shift, before - after);
        }
    }
}

#[test]
fn nearest_year_uses_a_neighbouring_factor_and_says_so() {
    let env = setup();
    let args = [
        "adjust",
        &env.data("wide-country-fees.csv"),
        "--refs",
        &env.data("country-refs"),
        "--steps",
        "ppp",
        "--nearest-year",
        "1",
        "--format",
        "csv",
    ];
    let run = env.run(&args);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let vnm_2023 = &run.rows()[9];
    assert_eq!(vnm_2023["ppp_year"], "2022");
    assert!(
        vnm_2023["flags"].contains("ppp_year_differs:2022"),
        "{:?}",
        vnm_2023
    );
    assert!((num(vnm_2023, "value_intl") - 23_000_000.0 / 7500.0).abs() < 1e-9);
}

#[test]
fn per_capita_divides_by_population_times_multiplier_and_scales() {
    // value / (population × multiplier) × per (common practice for rates per N people).
    let env = setup();
    let input = env.write(
        "budget.csv",
        "country,year,value\nFrance,2020,676\nCzechia,2020,107\n",
    );
    let run = env.run(&[
        "adjust",
        &input,
        "--refs",
        &env.data("country-refs"),
        "--steps",
        "per-capita",
        "--per",
        "1000",
        "--value-multiplier",
        "1000000",
        "--format",
        "csv",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = run.rows();
    assert!((num(&rows[0], "value_per_capita") - 676e6 / 67.6e6 * 1000.0).abs() < 1e-9);
    assert!((num(&rows[1], "value_per_capita") - 107e6 / 10.7e6 * 1000.0).abs() < 1e-9);
    assert!(run.stderr.contains("multiplied by 1000000"));
}

#[test]
fn currency_that_is_neither_local_nor_base_is_flagged_not_converted() {
    let env = setup();
    let input = env.write("mixed.csv", "country,year,value,cur\nFrance,2020,10,EUR\nCzechia,2020,10,EUR\nCzechia,2020,230,CZK\nUnited States,2020,10,USD\n");
    let run = env.run(&[
        "adjust",
        &input,
        "--refs",
        &env.data("country-refs"),
        "--steps",
        "ppp",
        "--currency",
        "cur",
        "--format",
        "csv",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = run.rows();
    assert_eq!(rows.len(), 4);
    assert!(rows[1]["flags"].contains("currency_mismatch"));
    // Once: resolving the entity and converting the figure each used to add it.
    assert_eq!(rows[1]["flags"].matches("currency_mismatch").count(), 1);
    assert_eq!(rows[1]["value_adjusted"], "");
    assert!(!rows[2]["flags"].contains("currency_mismatch"));
    assert!((num(&rows[2], "value_intl") - 230.0 / 12.6).abs() < 1e-9);
}

#[test]
fn stdin_input_json_output_and_atomic_file_output() {
    let env = setup();
    let text = "country,year,value\nFrance,2020,1\nChile,2020,2\n";
    // Figures without a currency (XXX): ranked as given.
    let run = env.run_with_stdin(
        &["adjust", "-", "--format", "json", "--currency-code", "XXX"],
        Some(text),
    );
    assert_eq!(run.code, 0, "{}", run.stderr);
    let json: serde_json::Value = serde_json::from_str(&run.stdout).expect("valid json");
    assert_eq!(json["rows"].as_array().unwrap().len(), 2);
    assert_eq!(json["rows"][1]["entity_code"], "CHL");
    assert_eq!(json["rows"][1]["rank_adjusted"], 1);
    assert_eq!(json["metadata"]["summary"]["rows_in"], 2);
    // ISO 4217's XXX is "no currency": no step converts, so no row is a currency mismatch.
    for row in json["rows"].as_array().unwrap() {
        assert_eq!(row["flags"], "", "{row}");
    }

    let input = env.write("in.csv", text);
    let run = env.run(&["adjust", &input, "-o", "out.csv"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let written = std::fs::read_to_string(env.path("out.csv")).unwrap();
    assert!(written.starts_with("row_id,entity_input,entity_code"));
    assert_eq!(written.lines().count(), 3);

    // The output may not replace the input; the input stays as it was.
    let run = env.run(&["adjust", &input, "-o", &input]);
    assert_eq!(run.code, 2);
    assert!(
        run.stderr.contains("would overwrite an input file"),
        "{}",
        run.stderr
    );
    assert_eq!(std::fs::read_to_string(&input).unwrap(), text);
}

#[test]
fn figures_in_different_currencies_are_not_ranked_against_each_other() {
    // The same fee in twelve currencies would rank 57,400 of one above 620 of another.
    let env = setup();
    let input = env.write(
        "fees.csv",
        "country,year,value\n\"Korea, Rep.\",2023,57400\nFrance,2023,620\nCzechia,2023,31000\n",
    );
    for steps in ["", "per-capita"] {
        let run = env.run(&[
            "adjust",
            &input,
            "--steps",
            steps,
            "--refs",
            &env.data("country-refs"),
            "--format",
            "csv",
        ]);
        assert_eq!(run.code, 0, "{}", run.stderr);
        let rows = run.rows();
        assert!(
            rows.iter()
                .all(|r| r["flags"].contains("mixed_currency") && r["rank_adjusted"].is_empty()),
            "{steps}: {rows:?}"
        );
        assert!(
            run.stderr
                .contains("add market or ppp to --steps, or state the one currency"),
            "{}",
            run.stderr
        );
    }
    // One currency stated, or a conversion: ranked.
    let run = env.run(&[
        "adjust",
        &input,
        "--currency-code",
        "XXX",
        "--format",
        "csv",
    ]);
    assert!(run.rows().iter().all(|r| !r["rank_adjusted"].is_empty()));
}

#[test]
fn user_aliases_add_entities_and_names() {
    let env = setup();
    let aliases = env.write(
        "aliases.csv",
        "name,code\nNorth Province,XNP\nRepublique francaise,FRA\n",
    );
    let input = env.write(
        "in.csv",
        "place,year,value\nNorth Province,2021,5\nRepublique francaise,2021,7\n",
    );
    let run = env.run(&[
        "adjust",
        &input,
        "--entity",
        "place",
        "--aliases",
        &aliases,
        "--format",
        "csv",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = run.rows();
    assert_eq!(rows[0]["entity_code"], "XNP");
    assert_eq!(rows[0]["entity_kind"], "user");
    assert_eq!(rows[1]["entity_code"], "FRA");
}

#[test]
fn per_income_gives_shares_or_days_and_ignores_the_currency_route() {
    // Affordability as a share of income per capita, or days of income = share × 365 (common
    // practice in price-comparison reporting).
    let env = setup();
    let input = env.write(
        "fees.csv",
        "country,year,value\nFrance,2020,340\nCzechia,2020,9400\nUnited States,2020,640\n",
    );
    let refs = env.data("country-refs");
    let share = env.run(&[
        "adjust",
        &input,
        "--refs",
        &refs,
        "--steps",
        "per-income",
        "--format",
        "csv",
    ]);
    assert_eq!(share.code, 0, "{}", share.stderr);
    let rows = share.rows();
    assert!((num(&rows[0], "value_per_income") - 0.01).abs() < 1e-12);
    assert!((num(&rows[1], "value_per_income") - 0.02).abs() < 1e-12);
    let days = env.run(&[
        "adjust",
        &input,
        "--refs",
        &refs,
        "--steps",
        "ppp,per-income",
        "--income-as",
        "days",
        "--format",
        "csv",
    ]);
    assert_eq!(days.code, 0, "{}", days.stderr);
    let rows = days.rows();
    assert!(
        (num(&rows[0], "value_per_income") - 3.65).abs() < 1e-9,
        "{:?}",
        rows[0]
    );
    assert!((num(&rows[2], "value_per_income") - 3.65).abs() < 1e-9);
    // A ratio of income does not depend on the currency it was computed in: no rank shift.
    assert!(rows.iter().all(|r| r["rank_shift"] == "0"));
    let bad = env.run(&[
        "adjust",
        &input,
        "--refs",
        &refs,
        "--steps",
        "per-income,ppp",
    ]);
    assert_eq!(bad.code, 2);
    assert!(
        bad.stderr.contains("per-income must be the last step"),
        "{}",
        bad.stderr
    );
}

#[test]
fn ranks_are_per_group_and_year() {
    let env = setup();
    let input = env.write(
        "items.csv",
        "country,year,item,value\nFrance,2020,bread,3\nCzechia,2020,bread,2\nFrance,2020,milk,1\nCzechia,2020,milk,4\nFrance,2021,bread,1\nCzechia,2021,bread,2\n",
    );
    // Prices in one currency stated for the whole table (invented figures).
    let run = env.run(&[
        "adjust",
        &input,
        "--group",
        "item",
        "--format",
        "csv",
        "--currency-code",
        "EUR",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let ranks: Vec<String> = run
        .rows()
        .iter()
        .map(|r| r["rank_adjusted"].clone())
        .collect();
    assert_eq!(ranks, vec!["1", "2", "2", "1", "2", "1"]);
    let asc = env.run(&[
        "adjust",
        &input,
        "--group",
        "item",
        "--order",
        "asc",
        "--format",
        "csv",
        "--currency-code",
        "EUR",
    ]);
    let ranks: Vec<String> = asc
        .rows()
        .iter()
        .map(|r| r["rank_adjusted"].clone())
        .collect();
    assert_eq!(ranks, vec!["2", "1", "1", "2", "1", "2"]);
}

#[test]
fn legacy_encodings_and_tabs_are_read() {
    let env = setup();
    // Windows-1252: 0xF4 is "ô" (code page as published by WHATWG's Encoding Standard).
    let path = env.path("cp1252.csv");
    std::fs::write(&path, b"country;year;value\nC\xF4te d'Ivoire;2020;1\n").unwrap();
    let run = env.run(&["adjust", &path.display().to_string(), "--format", "csv"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert_eq!(run.rows()[0]["entity_code"], "CIV");
    assert!(run.stderr.contains("windows-1252"), "{}", run.stderr);
    // UTF-16 LE with a byte-order mark, tab-separated, as spreadsheet programs export it.
    let mut bytes = vec![0xFF, 0xFE];
    for unit in "country\tyear\tvalue\nTürkiye\t2020\t5\n".encode_utf16() {
        bytes.extend_from_slice(&unit.to_le_bytes());
    }
    let path = env.path("utf16.txt");
    std::fs::write(&path, bytes).unwrap();
    let run = env.run(&["adjust", &path.display().to_string(), "--format", "csv"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert_eq!(run.rows()[0]["entity_code"], "TUR");
}

#[test]
fn parquet_output_keeps_every_bit_and_parquet_input_reads_like_csv() {
    use polars::prelude::*;
    let env = setup();
    let run = env.run(&["demo", "--format", "parquet", "-o", "demo.parquet"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let csv = env.run(&["demo", "--format", "csv"]).rows();
    let file = std::fs::File::open(env.path("demo.parquet")).unwrap();
    let frame = ParquetReader::new(file).finish().unwrap();
    assert_eq!(frame.height(), csv.len());
    assert_eq!(
        frame.column("year").unwrap().dtype(),
        &DataType::Int32,
        "typed columns"
    );
    for name in [
        "value",
        "value_real",
        "value_intl",
        "value_baseline",
        "value_adjusted",
        "cpi_ratio",
    ] {
        let column: Vec<Option<f64>> = frame.column(name).unwrap().f64().unwrap().iter().collect();
        for (parquet, row) in column.iter().zip(&csv) {
            let text = &row[name];
            match parquet {
                Some(x) => assert_eq!(
                    x.to_bits(),
                    text.parse::<f64>().unwrap().to_bits(),
                    "{name}"
                ),
                None => assert_eq!(text, ""),
            }
        }
    }
    // A Parquet input reads like its CSV twin.
    let mut input = df!("country" => ["France", "Chile"], "year" => [2020i32, 2020], "value" => [1250.5f64, 3400.0]).unwrap();
    let parquet_in = env.path("in.parquet");
    ParquetWriter::new(std::fs::File::create(&parquet_in).unwrap())
        .finish(&mut input)
        .unwrap();
    let twin = env.write(
        "in.csv",
        "country,year,value\nFrance,2020,1250.5\nChile,2020,3400\n",
    );
    let a = env.run(&[
        "adjust",
        &parquet_in.display().to_string(),
        "--format",
        "csv",
    ]);
    let b = env.run(&["adjust", &twin, "--format", "csv"]);
    assert_eq!(a.code, 0, "{}", a.stderr);
    assert_eq!(a.stdout, b.stdout);
    let refused = env.run(&["demo", "--format", "parquet"]);
    assert_eq!(refused.code, 2);
}
