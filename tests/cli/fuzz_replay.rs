//! Every file of the committed fuzz corpora (fuzz/corpus, minimised after 10-minute runs) goes
//! through the same checks the fuzz targets assert (`levelfield::fuzz_checks`), so a change
//! that breaks a property on an input once found interesting fails here, without a fuzzer.

fn replay(target: &str, check: fn(&[u8])) -> usize {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fuzz/corpus")
        .join(target);
    let mut count = 0;
    for entry in std::fs::read_dir(&dir).unwrap_or_else(|e| panic!("{}: {e}", dir.display())) {
        let path = entry.unwrap().path();
        let data = std::fs::read(&path).unwrap();
        let result = std::panic::catch_unwind(|| check(&data));
        assert!(
            result.is_ok(),
            "{target}: {} breaks the property",
            path.display()
        );
        count += 1;
    }
    count
}

#[test]
fn the_number_parser_corpus_replays() {
    assert!(replay("number_parser", levelfield::fuzz_checks::number_parser) > 500);
}

#[test]
fn the_entity_resolver_corpus_replays() {
    assert!(replay("entity_resolver", levelfield::fuzz_checks::entity_resolver) > 300);
}

#[test]
fn the_ingest_adjust_corpus_replays() {
    assert!(replay("ingest_adjust", levelfield::fuzz_checks::ingest_adjust) > 700);
}
