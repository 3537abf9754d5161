//! Fuzz target: arbitrary bytes parsed as a certificate (the reader of `verify`),
//! without re-auditing the files a certificate names.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    gapcert::fuzzing::exercise_certificate(data);
});
