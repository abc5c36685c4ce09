#![no_main]
// Fuzz target: loopwright::fuzzing::touchstone must return, never panic, whatever the bytes.
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| loopwright::fuzzing::touchstone(data));
