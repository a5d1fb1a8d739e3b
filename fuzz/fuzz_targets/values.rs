//! Value and range parsers: any text, any kind. The first byte picks the
//! kind and the parser (its low bit: a value or a range); an error is fine,
//! a panic is not. An accepted value is finite; an accepted grid has at
//! least one point and finite points at both ends.
#![no_main]
use burnout::input::range::parse_range;
use burnout::input::units::{parse, Kind};
use libfuzzer_sys::fuzz_target;

fuzz_target!(|data: &[u8]| {
    let Some((&k, rest)) = data.split_first() else {
        return;
    };
    let Ok(text) = std::str::from_utf8(rest) else {
        return;
    };
    let kind = Kind::ALL[(k >> 1) as usize % Kind::ALL.len()];
    if k & 1 == 0 {
        if let Ok(p) = parse("--fuzz", text, kind) {
            assert!(p.si.is_finite(), "accepted a non-finite value from {text:?}");
        }
    } else if let Ok(g) = parse_range("--fuzz", text, kind) {
        assert!(!g.is_empty());
        assert!(g.si(0).is_finite(), "{text:?}");
        assert!(g.si(g.len() - 1).is_finite(), "{text:?}");
    }
});
