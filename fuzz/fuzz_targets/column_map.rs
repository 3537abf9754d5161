//! Fuzz target: the `--map canonical=theirs` and `--map-file` parsers.
#![no_main]

use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    if let Ok(text) = std::str::from_utf8(data) {
        let _ = gapcert::ingest::columns::parse_map_pair(text);
        if let Ok(pairs) = gapcert::ingest::columns::parse_map_file("fuzz.json", text) {
            let _ = gapcert::ingest::columns::check_column_map(&pairs);
        }
    }
});
