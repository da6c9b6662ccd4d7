//! Fuzz target: the number parser never panics, and every number it accepts is finite and
//! reads back from the writer's full-precision text to the same float.
#![no_main]

use levelfield::ingest::number::{parse_cell, Cell, NumberStyle};
use levelfield::report::format::{format_number, Rounding};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else { return };
    for style in [NumberStyle { decimal_comma: false }, NumberStyle { decimal_comma: true }] {
        if let Ok(Cell::Number { float, .. }) = parse_cell(text, style) {
            assert!(float.is_finite(), "{text:?} gave {float}");
            let written = format_number(float, Rounding::Full, false);
            match parse_cell(&written, NumberStyle::default()) {
                Ok(Cell::Number { float: back, .. }) => assert_eq!(back, float, "{text:?} -> {written:?}"),
                other => panic!("{written:?} (from {text:?}) gave {other:?}"),
            }
        }
    }
});
