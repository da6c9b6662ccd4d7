//! Real open data in the layouts public sources publish (tests/data/world, see its README):
//! figures of the Penn World Table 7.1 (Heston, Summers and Aten, University of Pennsylvania,
//! 2012) as shipped by Debian's package r-cran-pwt 7.1.1-7 ("no restriction on redistribution"),
//! reshaped by tests/data/world/build.py into a data bank's bulk download, SDMX-CSV 1.0 and 2.0
//! without a format key, and a statistics office's TSV with status letters. The inputs carry a
//! title line with commas. Each check compares the tool's per-capita PPP figure with the figure
//! PWT itself published (`cgdp`, GDP per capita at current PPPs), to PWT's own precision.

use crate::{num, setup, Env, Run};
use std::collections::HashMap;

/// PWT 7.1 stores `cgdp` to about 11 significant digits: a correct route agrees to 1e-9
/// (relative); a wrong population unit (thousands) is off by 1e3, fx for PPP by 10-60%.
const PUBLISHED_TOLERANCE: f64 = 1e-9;

struct Expected {
    value_intl: f64,
    per_capita_published: f64,
    in_estat: bool,
}

fn expected(env: &Env) -> HashMap<(String, String), Expected> {
    let path = env.repo.join("tests/data/world/expected.csv");
    let mut reader = csv::Reader::from_path(path).expect("expected.csv");
    reader
        .deserialize::<HashMap<String, String>>()
        .map(|row| {
            let row = row.expect("expected.csv row");
            let key = (row["iso3"].clone(), row["year"].clone());
            let value = Expected {
                value_intl: row["expected_intl"].parse().unwrap(),
                per_capita_published: row["published_intl_per_capita"].parse().unwrap(),
                in_estat: row["in_estat"] == "yes",
            };
            (key, value)
        })
        .collect()
}

fn adjust(env: &Env, input: &str, refs: &str) -> Run {
    let world = env.repo.join("tests/data/world");
    env.run(&[
        "adjust",
        &world.join(input).display().to_string(),
        "--refs",
        &world.join(refs).display().to_string(),
        "--steps",
        "ppp,per-capita",
        "--format",
        "csv",
    ])
}

/// Checks every row that has a published figure; returns how many were checked.
fn check_against_published(env: &Env, run: &Run, only_estat: bool) -> usize {
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(
        run.stderr.contains("120 row(s) in, 120 row(s) out"),
        "{}",
        run.stderr
    );
    let expected = expected(env);
    let mut checked = 0;
    for row in run.rows() {
        let key = (row["entity_code"].clone(), row["year"].clone());
        let e = &expected[&key];
        if only_estat && !e.in_estat {
            assert!(row["flags"].contains("no_ppp"), "{row:?}");
            continue;
        }
        let intl = num(&row, "value_intl");
        assert!(
            ((intl - e.value_intl) / e.value_intl).abs() < 1e-12,
            "{key:?}: {intl} vs {}",
            e.value_intl
        );
        let per_capita = num(&row, "value_adjusted");
        let gap = (per_capita - e.per_capita_published) / e.per_capita_published;
        assert!(
            gap.abs() < PUBLISHED_TOLERANCE,
            "{key:?}: {per_capita} vs PWT cgdp {}",
            e.per_capita_published
        );
        checked += 1;
    }
    checked
}

#[test]
fn bulk_download_references_and_a_titled_long_table_reproduce_published_per_capita_ppp_figures() {
    let env = setup();
    let run = adjust(&env, "gdp-long-titled.csv", "wb-bulk");
    assert_eq!(check_against_published(&env, &run, false), 120);
    // The title above and the source note below are set aside and listed.
    assert!(
        run.stderr
            .contains("line 1 above the header: \"Gross domestic product, current prices"),
        "{}",
        run.stderr
    );
    assert!(
        run.stderr
            .contains("below the table: \"Source: Penn World Table"),
        "{}",
        run.stderr
    );
    assert!(run.stderr.contains("header: line 2"), "{}", run.stderr);
}

#[test]
fn a_titled_wide_table_gives_the_same_figures() {
    let env = setup();
    let run = adjust(&env, "gdp-wide-titled.csv", "wb-bulk");
    assert_eq!(check_against_published(&env, &run, false), 120);
}

#[test]
fn sdmx_csv_without_a_format_key_is_recognised_and_filtered() {
    let env = setup();
    for refs in ["sdmx", "sdmx/v2"] {
        let run = adjust(&env, "gdp-long-titled.csv", refs);
        assert_eq!(check_against_published(&env, &run, false), 120, "{refs}");
        // These catalogs hold no market rates: the baseline alone stays empty, once said.
        assert!(run.stderr.contains("no fx table"), "{}", run.stderr);
        assert!(run.rows().iter().all(|r| r["flags"] == "no_baseline"
            && r["value_baseline"].is_empty()
            && !r["rank_adjusted"].is_empty()));
    }
}

#[test]
fn statistics_office_tsv_with_status_letters_and_reserved_codes() {
    let env = setup();
    let run = adjust(&env, "gdp-long-titled.csv", "estat");
    // EL (Greece) and UK are read; cells such as `8901.1 p` are figures, `: c` is missing.
    let checked = check_against_published(&env, &run, true);
    assert_eq!(checked, 75, "15 European countries of the input, 5 years");
    let rows = run.rows();
    assert!(rows
        .iter()
        .any(|r| r["entity_code"] == "GRC" && !r["value_adjusted"].is_empty()));
    assert!(rows
        .iter()
        .any(|r| r["entity_code"] == "GBR" && !r["value_adjusted"].is_empty()));
}

#[test]
fn refs_shows_how_each_published_file_was_read() {
    let env = setup();
    for (refs, header) in [
        ("wb-bulk", "header: line 5"),
        ("sdmx", "SDMX-CSV"),
        ("estat", "statistics-office layout"),
    ] {
        let world = env.repo.join("tests/data/world").join(refs);
        let run = env.run(&["refs", &world.display().to_string()]);
        assert_eq!(run.code, 0, "{refs}: {}", run.stdout);
        assert!(run.stdout.contains(header), "{refs}: {}", run.stdout);
    }
    let run = env.run(&[
        "refs",
        &env.repo
            .join("tests/data/world/wb-bulk")
            .display()
            .to_string(),
    ]);
    assert!(run.stdout.contains("set aside 3 line(s)"), "{}", run.stdout);
    assert!(
        run.stdout.contains("entity column \"Country Code\""),
        "{}",
        run.stdout
    );
}

/// A copy of the bulk-download folder whose PPP table is rewritten by `edit`.
fn edited_refs(env: &Env, edit: impl Fn(&str) -> String, catalog: &str) -> String {
    let source = env.repo.join("tests/data/world/wb-bulk");
    let refs = env.path("refs");
    std::fs::create_dir_all(&refs).unwrap();
    for file in ["ppp.csv", "population.csv", "fx.csv"] {
        std::fs::copy(source.join(file), refs.join(file)).unwrap();
    }
    let ppp = std::fs::read_to_string(source.join("ppp.csv")).unwrap();
    std::fs::write(refs.join("ppp.csv"), edit(&ppp)).unwrap();
    std::fs::write(refs.join("datapackage.json"), catalog).unwrap();
    refs.display().to_string()
}

const BULK_CATALOG: &str = r#"{"resources":[{"name":"ppp","path":"ppp.csv","kind":"ppp"},{"name":"population","path":"population.csv","kind":"population"}]}"#;

#[test]
fn a_reference_table_keyed_by_a_code_column_is_read() {
    let env = setup();
    let refs = edited_refs(
        &env,
        |text| {
            text.replace("\"Country Code\"", "\"code\"")
                .replace("\"Country Name\"", "\"label\"")
        },
        BULK_CATALOG,
    );
    let input = env.repo.join("tests/data/world/gdp-long-titled.csv");
    let run = env.run(&[
        "adjust",
        &input.display().to_string(),
        "--refs",
        &refs,
        "--steps",
        "ppp,per-capita",
        "--format",
        "csv",
    ]);
    assert_eq!(check_against_published(&env, &run, false), 120);
}

#[test]
fn reference_errors_name_the_catalog_key_that_fixes_them() {
    let env = setup();
    // No header word and no column of country names: the error names entity_field.
    let refs = edited_refs(
        &env,
        |_| {
            "\"key\",\"label\",\"2006\"\n\"A-1\",\"Row one\",\"1.2\"\n\"B-2\",\"Row two\",\"1.3\"\n"
                .to_string()
        },
        BULK_CATALOG,
    );
    let input = env.repo.join("tests/data/world/gdp-long-titled.csv");
    let run = env.run(&[
        "adjust",
        &input.display().to_string(),
        "--refs",
        &refs,
        "--steps",
        "ppp",
    ]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(run.stderr.contains("\"entity_field\""), "{}", run.stderr);
    assert!(
        run.stderr.contains("catalog resource \"ppp\""),
        "{}",
        run.stderr
    );
    assert!(!run.stderr.contains("--entity"), "{}", run.stderr);

    // A filter on a plain table is an error naming the resource.
    let catalog = r#"{"resources":[{"name":"ppp","path":"ppp.csv","kind":"ppp","filter":{"MEASURE":"PPP"}}]}"#;
    let refs = edited_refs(&env, |t| t.to_string(), catalog);
    let run = env.run(&[
        "adjust",
        &input.display().to_string(),
        "--refs",
        &refs,
        "--steps",
        "ppp",
    ]);
    assert_eq!(run.code, 2, "{}", run.stderr);
    assert!(
        run.stderr.contains("\"filter\"") && run.stderr.contains("\"ppp\""),
        "{}",
        run.stderr
    );
}

#[test]
fn a_drafted_catalog_for_downloaded_files_runs_without_edits_where_the_files_state_their_kind() {
    let env = setup();
    let folder = env.path("downloads");
    std::fs::create_dir(&folder).unwrap();
    let source = env.repo.join("tests/data/world");
    for file in ["ppp.csv", "population.csv", "fx.csv"] {
        std::fs::copy(source.join("wb-bulk").join(file), folder.join(file)).unwrap();
    }
    let dir = folder.display().to_string();
    let run = env.run(&["catalog", &dir]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(
        run.stderr
            .contains("kind ppp, from \"PPP conversion factor"),
        "{}",
        run.stderr
    );
    let catalog = std::fs::read_to_string(folder.join("datapackage.json")).unwrap();
    assert!(catalog.contains("\"vintage\": \"2024-06-28\""), "{catalog}");
    // A second run does not replace the catalog the user may have edited.
    let again = env.run(&["catalog", &dir]);
    assert_eq!(again.code, 2);
    assert!(again.stderr.contains("exists already"), "{}", again.stderr);
    let input = source.join("gdp-long-titled.csv").display().to_string();
    let run = env.run(&[
        "adjust",
        &input,
        "--refs",
        &dir,
        "--steps",
        "ppp,per-capita",
        "--format",
        "csv",
    ]);
    assert_eq!(check_against_published(&env, &run, false), 120);

    // A file that does not say what it measures gets an empty kind, and the summary says so.
    std::fs::copy(source.join("sdmx/ppp-v1.csv"), folder.join("agency.csv")).unwrap();
    let run = env.run(&[
        "catalog",
        &dir,
        "-o",
        &env.path("draft.json").display().to_string(),
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(
        run.stderr
            .contains("agency.csv: header line 1; SDMX-CSV; KIND LEFT EMPTY"),
        "{}",
        run.stderr
    );
    let draft = std::fs::read_to_string(env.path("draft.json")).unwrap();
    assert!(draft.contains("\"kind\": \"\""), "{draft}");
}

#[test]
fn forcing_the_header_line_and_the_layout_gives_the_same_published_figures() {
    // --header-row, --long and --wide-years state what the finder detects on its own; the
    // figures must still be PWT's published per-capita PPP GDP.
    let env = setup();
    let world = env.repo.join("tests/data/world");
    let run_with = |input: &str, extra: &[&str]| {
        let mut argv = vec![
            "adjust".to_string(),
            world.join(input).display().to_string(),
            "--refs".into(),
            world.join("wb-bulk").display().to_string(),
            "--steps".into(),
            "ppp,per-capita".into(),
            "--format".into(),
            "csv".into(),
        ];
        argv.extend(extra.iter().map(|s| s.to_string()));
        let argv: Vec<&str> = argv.iter().map(String::as_str).collect();
        env.run(&argv)
    };
    let long = run_with("gdp-long-titled.csv", &["--header-row", "2", "--long"]);
    assert_eq!(check_against_published(&env, &long, false), 120);
    assert!(long.stderr.contains("header: line 2"), "{}", long.stderr);
    let wide = run_with(
        "gdp-wide-titled.csv",
        &["--header-row", "2", "--wide-years"],
    );
    assert_eq!(check_against_published(&env, &wide, false), 120);
    // The wrong header line is not guessed around: line 1 is the title.
    let wrong = run_with("gdp-long-titled.csv", &["--header-row", "1"]);
    assert_eq!(wrong.code, 2, "{}", wrong.stderr);
}

#[test]
fn income_in_international_or_us_dollars_is_taken_back_to_local_currency() {
    // An income table in international dollars (catalog "basis": "intl") is multiplied by the
    // row year's PPP before dividing. Income = PWT's published cgdp (GDP per capita at current
    // PPPs), figure = GDP in national currency: their ratio is the population PWT used
    // (expected.csv's population column), to PWT's own precision.
    let env = setup();
    let source = env.repo.join("tests/data/world/wb-bulk");
    let refs = env.path("refs");
    std::fs::create_dir_all(&refs).unwrap();
    for file in ["ppp.csv", "population.csv", "fx.csv"] {
        std::fs::copy(source.join(file), refs.join(file)).unwrap();
    }
    let mut reader =
        csv::Reader::from_path(env.repo.join("tests/data/world/expected.csv")).unwrap();
    let mut income = String::from("iso3,year,value\n");
    let mut income_usd = String::from("iso3,year,value\n");
    let mut population = HashMap::new();
    for row in reader.deserialize::<HashMap<String, String>>() {
        let row = row.unwrap();
        income.push_str(&format!(
            "{},{},{}\n",
            row["iso3"], row["year"], row["published_intl_per_capita"]
        ));
        // The same income in US dollars: cgdp × PPP / market rate (PWT's ppp and xrat).
        let usd = row["published_intl_per_capita"].parse::<f64>().unwrap()
            * row["ppp"].parse::<f64>().unwrap()
            / row["fx"].parse::<f64>().unwrap();
        income_usd.push_str(&format!("{},{},{usd}\n", row["iso3"], row["year"]));
        population.insert(
            (row["iso3"].clone(), row["year"].clone()),
            row["population"].parse::<f64>().unwrap(),
        );
    }
    std::fs::write(refs.join("income.csv"), income).unwrap();
    std::fs::write(refs.join("income-usd.csv"), income_usd).unwrap();
    for (file, basis) in [("income.csv", "intl"), ("income-usd.csv", "usd")] {
        let catalog = r#"{"resources":[{"name":"ppp","path":"ppp.csv","kind":"ppp"},{"name":"population","path":"population.csv","kind":"population"},{"name":"fx","path":"fx.csv","kind":"fx"},{"name":"cgdp","path":"FILE","kind":"income","basis":"BASIS","unit":"GDP per capita (PWT 7.1 cgdp)"}]}"#
        .replace("FILE", file)
        .replace("BASIS", basis);
        std::fs::write(refs.join("datapackage.json"), catalog).unwrap();
        let run = env.run(&[
            "adjust",
            &env.repo
                .join("tests/data/world/gdp-long-titled.csv")
                .display()
                .to_string(),
            "--refs",
            &refs.display().to_string(),
            "--steps",
            "per-income",
            "--format",
            "csv",
        ]);
        assert_eq!(run.code, 0, "{}", run.stderr);
        let mut checked = 0;
        for row in run.rows() {
            let key = (row["entity_code"].clone(), row["year"].clone());
            let Some(expected) = population.get(&key) else {
                continue;
            };
            let share = num(&row, "value_per_income");
            assert!(
                ((share - expected) / expected).abs() < PUBLISHED_TOLERANCE,
                "{key:?}: {share} against {expected}"
            );
            checked += 1;
        }
        assert_eq!(checked, 120, "{basis}");
    }
}

#[test]
fn the_same_figures_in_xlsx_with_shared_strings_ods_xls_and_xlsb_give_the_published_values() {
    // tests/data/sheets/pwt-gdp.{xlsx,ods,xls,xlsb}: the wide PWT table written by openpyxl
    // 3.1.5 (strings moved to a shared-strings table), odfpy 1.4.1, xlwt 1.3.0 (PyPI) and a
    // BIFF12 writer after Microsoft's [MS-XLSB] specification, checked with pyxlsb 1.0.10 (see
    // tests/data/sheets/build_pwt_sheets.py), with the title in row 1.
    let env = setup();
    for sheet in ["pwt-gdp.xlsx", "pwt-gdp.ods", "pwt-gdp.xls", "pwt-gdp.xlsb"] {
        let run = env.run(&[
            "adjust",
            &env.data(&format!("sheets/{sheet}")),
            "--refs",
            &env.data("world/wb-bulk"),
            "--steps",
            "ppp,per-capita",
            "--format",
            "csv",
        ]);
        assert_eq!(check_against_published(&env, &run, false), 120, "{sheet}");
        assert!(
            run.rows()
                .iter()
                .any(|r| r["entity_name"] == "United States"),
            "{sheet}: names from the shared strings"
        );
    }
}

#[test]
fn streaming_in_small_pieces_gives_the_published_figures_too() {
    // The streaming path checked against PWT's published cgdp, and against the in-memory run
    // byte for byte. The first piece holds the records the header is chosen among (1,001), so
    // these 120 rows are one piece however small the pieces asked for; the cutting itself is
    // checked on generated tables (tests/cli/streaming.rs). The titles hold commas, so they look
    // like records with cells: a first piece cut right after one took it for the header (exit
    // 2, "no year column" on the wide table).
    let env = setup();
    let world = env.repo.join("tests/data/world");
    for input in ["gdp-long-titled.csv", "gdp-wide-titled.csv"] {
        let whole = adjust(&env, input, "wb-bulk");
        let mut run = env.run(&[
            "adjust",
            &world.join(input).display().to_string(),
            "--refs",
            &world.join("wb-bulk").display().to_string(),
            "--steps",
            "ppp,per-capita",
            "--streaming",
            "--chunk-mb",
            "0.0001",
            "-o",
            "streamed.csv",
        ]);
        assert_eq!(run.code, 0, "{input}: {}", run.stderr);
        run.stdout = std::fs::read_to_string(env.path("streamed.csv")).unwrap();
        assert_eq!(check_against_published(&env, &run, false), 120, "{input}");
        assert!(
            run.stdout == whole.stdout,
            "{input}: streamed output differs"
        );
    }
}
