//! Bad inputs get a clear error (file, line, column, what was expected, what to do) and exit
//! code 2, or a flagged row when the user asked for leniency. No row is ever dropped.

use crate::setup;

#[test]
fn unresolved_names_are_listed_with_suggestions_and_never_guessed() {
    let env = setup();
    let input = env.write(
        "in.csv",
        "country,year,value\nFrnace,2020,1\nAtlantis,2020,2\nFrance,2020,3\nAtlantis,2021,4\n",
    );
    let run = env.run(&["adjust", &input]);
    assert_eq!(run.code, 2);
    assert!(
        run.stderr
            .contains("\"Frnace\" (line 2): did you mean France"),
        "{}",
        run.stderr
    );
    assert!(
        run.stderr
            .contains("\"Atlantis\" (line 3, 5): no close match"),
        "{}",
        run.stderr
    );
    assert!(run.stderr.contains("--allow-unresolved"));
    assert!(run.stdout.is_empty(), "no half output");

    let run = env.run(&["adjust", &input, "--allow-unresolved", "--format", "csv"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    let rows = run.rows();
    assert_eq!(rows.len(), 4, "rows in = rows out");
    assert_eq!(rows[0]["entity_code"], "");
    assert!(rows[0]["flags"].contains("unresolved"));
    assert_eq!(
        rows[2]["rank_adjusted"], "1",
        "only resolved rows are ranked"
    );
}

#[test]
fn a_bad_number_names_file_line_and_column_unless_lenient() {
    let env = setup();
    let input = env.write("in.csv", "country,2020,2021\nFrance,1,2\nChile,3,three\n");
    let run = env.run(&["adjust", &input]);
    assert_eq!(run.code, 2);
    assert!(
        run.stderr.contains("in.csv, line 3, column \"2021\""),
        "{}",
        run.stderr
    );
    assert!(
        run.stderr.contains("expected:") && run.stderr.contains("what to do:"),
        "{}",
        run.stderr
    );
    let run = env.run(&["adjust", &input, "--lenient", "--format", "csv"]);
    assert_eq!(run.code, 0);
    let rows = run.rows();
    assert_eq!(rows.len(), 4);
    assert!(rows[3]["flags"].contains("unparsed"));
}

#[test]
fn lines_inside_a_runaway_quote_keep_their_numbers_after_a_blank_line() {
    let env = setup();
    // Line 4 opens a quote that is never closed; line 3 is blank. Atlantis is on line 5.
    let input = env.write("in.csv", "country,fee\nChile,1\n\n\"Peru,2\nAtlantis,3\n");
    let run = env.run(&["adjust", &input, "--lenient", "--year-value", "2020"]);
    assert!(
        run.stderr.contains("\"Atlantis\" (line 5)"),
        "{}",
        run.stderr
    );
}

#[test]
fn decimal_comma_tables_need_the_flag() {
    let env = setup();
    let input = env.write("in.csv", "country;year;value\nFrance;2020;1.234,5\n");
    let run = env.run(&["adjust", &input]);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("--decimal-comma"), "{}", run.stderr);
    let run = env.run(&["adjust", &input, "--decimal-comma", "--format", "csv"]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert_eq!(run.rows()[0]["value"], "1234.5");
}

#[test]
fn usage_errors_say_what_to_do() {
    let env = setup();
    let input = env.write("in.csv", "country,year,value\nFrance,2020,1\n");
    let run = env.run(&[
        "adjust",
        &input,
        "--steps",
        "deflate",
        "--refs",
        &env.data("published"),
    ]);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("--base-year"), "{}", run.stderr);
    let run = env.run(&["adjust", &input, "--steps", "ppp"]);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("--refs"), "{}", run.stderr);
    let run = env.run(&["adjust", &input, "--steps", "pp"]);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("unknown step \"pp\""), "{}", run.stderr);
    let run = env.run(&[
        "adjust",
        &input,
        "--steps",
        "per-capita",
        "--refs",
        &env.data("published"),
    ]);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("population"), "{}", run.stderr);
    let run = env.run(&["adjust", "missing.csv"]);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("missing.csv"), "{}", run.stderr);
    let run = env.run(&["adjust", &env.data("published")]);
    assert_eq!(run.code, 2);
    assert!(run.stderr.contains("folder"), "{}", run.stderr);
}

#[test]
fn broken_reference_tables_are_errors_naming_file_and_line() {
    let env = setup();
    let refs = env.path("refs");
    std::fs::create_dir(&refs).unwrap();
    std::fs::write(
        refs.join("datapackage.json"),
        r#"{"resources":[{"name":"p","path":"ppp.csv","kind":"ppp"}]}"#,
    )
    .unwrap();
    std::fs::write(
        refs.join("ppp.csv"),
        "country,year,value\nFrance,2020,0.7\nFrance,2020,0.8\n",
    )
    .unwrap();
    let input = env.write("in.csv", "country,year,value\nFrance,2020,1\n");
    let refs_arg = refs.display().to_string();
    let run = env.run(&["adjust", &input, "--refs", &refs_arg, "--steps", "ppp"]);
    assert_eq!(run.code, 2);
    assert!(
        run.stderr.contains("ppp.csv, line 3") && run.stderr.contains("line 2"),
        "{}",
        run.stderr
    );

    std::fs::write(
        refs.join("ppp.csv"),
        "country,year,value\nFrance,2020,-0.7\n",
    )
    .unwrap();
    let run = env.run(&["adjust", &input, "--refs", &refs_arg, "--steps", "ppp"]);
    assert_eq!(run.code, 2);
    assert!(
        run.stderr.contains("ppp.csv, line 2, column \"value\"")
            && run.stderr.contains("not positive"),
        "{}",
        run.stderr
    );
}
