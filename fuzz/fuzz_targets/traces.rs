//! Fuzz target: see `turnover_tests::fuzz_checks::traces`.
#![no_main]
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| turnover_tests::fuzz_checks::traces(data));
