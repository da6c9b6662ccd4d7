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
    assert_eq!(adjust.stdout, demo.stdout);
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
            "entity_code,entity_name,year,group,value,value_lcu,value_real,value_intl,"
        ),
        "{}",
        chart.stdout
    );
    assert_golden("demo-chart.csv", &chart.stdout);
}
