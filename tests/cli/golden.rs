//! Golden files: the demo's table and the help texts. The demo also checks that it labels its
//! data as invented and tells how to reproduce the run.

use crate::{assert_golden, setup};

#[test]
fn demo_prints_the_comparison_table() {
    let env = setup();
    let run = env.run(&["demo"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(run.stdout.starts_with("INVENTED DATA"));
    assert!(run
        .stderr
        .contains("reproduce with: levelfield demo --extract"));
    assert_golden("demo-table.txt", &run.stdout);
}

#[test]
fn demo_extract_reproduces_the_same_result_with_adjust() {
    let env = setup();
    let run = env.run(&["demo", "--extract", "files"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let demo = env.run(&["demo", "--format", "csv"]);
    let mut argv = vec!["adjust"];
    argv.extend_from_slice(levelfield::demo::DEMO_ARGS);
    argv.extend(["--format", "csv"]);
    let adjust = env.run_in("files", &argv);
    assert_eq!(adjust.code, 0, "{}", adjust.stderr);
    // The demo's files carry its INVENTED DATA notice as their first column; the rest is the same.
    let mut demo_rows = demo.rows();
    for row in &mut demo_rows {
        assert!(row
            .remove("data_notice")
            .unwrap()
            .starts_with("INVENTED DATA"));
    }
    assert_eq!(adjust.rows(), demo_rows);
}

#[test]
fn help_texts() {
    let env = setup();
    assert_golden("help.txt", &env.run(&["--help"]).stdout);
    assert_golden("adjust-help.txt", &env.run(&["adjust", "--help"]).stdout);
}

#[test]
fn readme_methods_list_every_step_formula() {
    let readme =
        std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/README.md")).unwrap();
    for step in levelfield::adjust::STEPS {
        assert!(
            readme.contains(step.formula()),
            "README lacks the formula of {}: {}",
            step.name(),
            step.formula()
        );
        assert!(
            readme.contains(&format!("`{}`", step.name())),
            "README lacks step {}",
            step.name()
        );
    }
}

#[test]
fn demo_methods_note_and_chart_csv() {
    let env = setup();
    let methods = env.run(&["demo", "--format", "methods"]);
    assert_eq!(methods.code, 0, "{}", methods.stderr);
    for expected in [
        "# Methods",
        "## Steps, in order",
        "`value_real = value * cpi[base_year] / cpi[year]",
        "## Files read",
        "sha256",
        "## Cautions",
    ] {
        assert!(methods.stdout.contains(expected), "{expected} missing");
    }
    assert_golden("demo-methods.md", &methods.stdout);
    let chart = env.run(&["demo", "--format", "chart-csv"]);
    assert_eq!(chart.code, 0, "{}", chart.stderr);
    assert!(
        chart.stdout.starts_with(
            "data_notice,entity_code,entity_name,year,group,value,value_lcu,value_real,value_intl,"
        ),
        "{}",
        chart.stdout
    );
    // Deflate, then convert at the constant 2023 PPP, worked by hand from the demo's
    // (invented) tables for XAA 2019: CPI 105.0 (2019) and 119.7 (2023), PPP 0.95 (2023),
    // market rate 1.0 (2023): 528 × 119.7 / 105 = 601.92; 601.92 / 0.95 = 633.6.
    let rows = chart.rows();
    let xaa = rows
        .iter()
        .find(|r| r["entity_code"] == "XAA" && r["year"] == "2019")
        .unwrap();
    let num = |c: &str| xaa[c].parse::<f64>().unwrap();
    assert!((num("value_real") - 528.0 * 119.7 / 105.0).abs() < 1e-9);
    assert!((num("value_real") - 601.92).abs() < 1e-9);
    assert!((num("value_intl") - 633.6).abs() < 1e-9);
    assert!((num("value_baseline") - 601.92 / 1.0).abs() < 1e-9);
    assert_golden("demo-chart.csv", &chart.stdout);
}
