#![no_main]
// Fuzz target: arbitrary bytes as a .ecsv file through read_table and vetting.
use libfuzzer_sys::fuzz_target;

#[path = "common.rs"]
mod common;

fuzz_target!(|data: &[u8]| common::read_and_vet(data, "ecsv"));
