//! Fuzz target: the entity resolver never panics, and what it finds resolves again to the same entity.
//! The property lives in `levelfield::fuzz_checks`, which `cargo test` also replays over the
//! committed corpus (tests/cli/fuzz_replay.rs).
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| levelfield::fuzz_checks::entity_resolver(data));
