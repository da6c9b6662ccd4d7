//! Fuzz target: the number parser never panics, and every number it accepts reads back to the same float.
//! The property lives in `levelfield::fuzz_checks`, which `cargo test` also replays over the
//! committed corpus (tests/cli/fuzz_replay.rs).
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| levelfield::fuzz_checks::number_parser(data));
