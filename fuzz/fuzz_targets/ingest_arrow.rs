//! Fuzz target: arbitrary bytes read as a arrow log, then audited and rendered.
//! Any panic, abort or hang is a bug; errors are the expected outcome for most inputs.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    gapcert::fuzzing::exercise(data, gapcert::ingest::LogFormat::Arrow);
});
