//! Case-file reader: any text parses to inputs or a one-line error.
#![no_main]
use burnout::input::case::parse_case;
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Ok(text) = std::str::from_utf8(data) else {
        return;
    };
    if let Err(e) = parse_case(text, "fuzz.toml") {
        let msg = e.to_string();
        assert!(!msg.is_empty());
    }
});
