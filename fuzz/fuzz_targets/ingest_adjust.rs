//! Fuzz target: arbitrary bytes adjusted with the demo references: never a panic, rows in = rows out.
//! The property lives in `levelfield::fuzz_checks`, which `cargo test` also replays over the
//! committed corpus (tests/cli/fuzz_replay.rs).
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| levelfield::fuzz_checks::ingest_adjust(data));
