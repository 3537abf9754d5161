//! Fuzz target: arbitrary bytes read as a claims file (`--claims`); the first byte
//! picks the format and the reading options.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    gapcert::fuzzing::exercise_claims(data);
});
