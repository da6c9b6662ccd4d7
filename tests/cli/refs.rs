//! `levelfield refs`: coverage, gaps and validation errors of a catalog.

use crate::setup;

#[test]
fn lists_tables_with_coverage_and_gaps() {
    let env = setup();
    let run = env.run(&["refs", &env.data("country-refs")]);
    assert_eq!(run.code, 0, "{}", run.stderr);
    assert!(run.stdout.contains("fixture-ppp"));
    assert!(run.stdout.contains("2020-2023"));
    assert!(
        run.stdout.contains("gaps in fixture-ppp: VNM 2023"),
        "{}",
        run.stdout
    );
}

#[test]
fn a_broken_table_is_reported_and_the_exit_code_is_one() {
    let env = setup();
    let refs = env.path("refs");
    std::fs::create_dir(&refs).unwrap();
    std::fs::write(refs.join("datapackage.json"), r#"{"resources":[{"name":"p","path":"ppp.csv","kind":"ppp"},{"name":"c","path":"cpi.csv","kind":"cpi"}]}"#).unwrap();
    std::fs::write(refs.join("ppp.csv"), "country,2020\nFrance,0\n").unwrap();
    std::fs::write(refs.join("cpi.csv"), "country,2020\nFrance,100\n").unwrap();
    let run = env.run(&["refs", &refs.display().to_string()]);
    assert_eq!(run.code, 1);
    assert!(run.stdout.contains("ERROR in p"), "{}", run.stdout);
    assert!(run.stdout.contains("not positive"), "{}", run.stdout);
}
