//! Fuzz target: the entity resolver never panics, and whatever it finds resolves again from the
//! entity's own code and name to the same entity (no name means two things).
#![no_main]

use levelfield::entity::{Resolution, Resolver};
use libfuzzer_sys::fuzz_target;
use std::sync::OnceLock;

static RESOLVER: OnceLock<Resolver> = OnceLock::new();

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    let resolver = RESOLVER.get_or_init(Resolver::builtin);
    if let Resolution::Found(entity) = resolver.resolve(text) {
        for again in [entity.code.as_str(), entity.name.as_str()] {
            match resolver.resolve(again) {
                Resolution::Found(other) => assert_eq!(other.code, entity.code, "{text:?} -> {again:?}"),
                Resolution::Unresolved { .. } => panic!("{text:?} found {} but {again:?} does not resolve", entity.code),
            }
        }
    }
    let mut with_aliases = resolver.clone();
    let _ = with_aliases.add_alias_text(text, "fuzz.csv");
});
