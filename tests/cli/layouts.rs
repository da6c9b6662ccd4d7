//! Reading layouts with hand-made figures: SDMX-CSV references in both versions and
//! spreadsheets (title rows, notes, text numbers, formulas). These check how a file is read,
//! not a published figure; the figures in them are made up, and said so beside each test.

use crate::{num, setup};

#[test]
fn sdmx_csv_references_in_both_layouts() {
    // Hand-written fixtures in the SDMX-CSV 1.0 and 2.0 layouts (ISO 17369), with UNIT_MULT 3
    // and 6 and a filter on the measure and frequency; the figures are made up.
    let env = setup();
    let input = env.write(
        "in.csv",
        "country,year,value\nFrance,2021,73\nChile,2021,42000\n",
    );
    let run = env.run(&[
        "adjust",
        &input,
        "--refs",
        &env.data("sdmx"),
        "--steps",
        "ppp,per-capita",
        "--per",
        "1000000",
        "--format",
        "csv",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = run.rows();
    assert!(
        run.stderr
            .contains("SDMX series filtered on FREQ=A, MEASURE=PPP"),
        "{}",
        run.stderr
    );
    assert_eq!(num(&rows[0], "ppp_used"), 0.73);
    assert_eq!(num(&rows[1], "ppp_used"), 420.0);
    assert_eq!(num(&rows[0], "population_used"), 67_700_000.0);
    assert!((num(&rows[0], "value_adjusted") - 73.0 / 0.73 / 67.7).abs() < 1e-9);
    assert!((num(&rows[1], "value_adjusted") - 42000.0 / 420.0 / 19.493).abs() < 1e-9);
}

#[test]
fn an_xlsx_sheet_with_title_rows_notes_and_text_numbers_equals_its_csv_twin() {
    let env = setup();
    let sheet = env.run(&[
        "adjust",
        &env.data("sheets/fees.xlsx"),
        "--sheet",
        "Fees",
        "--format",
        "csv",
    ]);
    assert_eq!(sheet.code, 0, "{}", sheet.stderr);
    assert!(
        sheet.stderr.contains("sheet \"Fees\" of 2"),
        "{}",
        sheet.stderr
    );
    assert!(
        sheet.stderr.contains("line 1 above the header"),
        "{}",
        sheet.stderr
    );
    assert!(
        sheet
            .stderr
            .contains("below the table: \"Source: made up for the test\""),
        "{}",
        sheet.stderr
    );
    let twin = env.run(&[
        "adjust",
        &env.data("sheets/fees-twin.csv"),
        "--format",
        "csv",
    ]);
    let strip = |run: &crate::Run| -> Vec<Vec<(String, String)>> {
        run.rows()
            .into_iter()
            .map(|r| {
                let mut cells: Vec<(String, String)> =
                    r.into_iter().filter(|(k, _)| k != "value_input").collect();
                cells.sort();
                cells
            })
            .collect()
    };
    assert_eq!(strip(&sheet), strip(&twin));
    let missing = env.run(&["adjust", &env.data("sheets/fees.xlsx"), "--sheet", "Prices"]);
    assert_eq!(missing.code, 2);
    assert!(missing.stderr.contains("Notes, Fees"), "{}", missing.stderr);
}

#[test]
fn spreadsheet_formulas_are_flagged_never_evaluated() {
    // The fixture was written without a stored result for its formula (as some generators do),
    // so the cell has no value: the row is kept, flagged, and the formula is not computed.
    let env = setup();
    let run = env.run(&[
        "adjust",
        &env.data("sheets/formula.xlsx"),
        "--format",
        "csv",
    ]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = run.rows();
    assert_eq!(rows.len(), 2);
    assert!(rows[0]["flags"].contains("formula_cell"), "{:?}", rows[0]);
    assert_eq!(rows[0]["value"], "", "a formula is never evaluated");
    assert!(!rows[1]["flags"].contains("formula_cell"));
}
