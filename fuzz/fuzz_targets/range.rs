//! Range parser: any text, any kind; an accepted grid has at least one
//! point and finite points at both ends.
#![no_main]
use burnout::input::range::parse_range;
use burnout::input::units::Kind;
use libfuzzer_sys::fuzz_target;

const KINDS: [Kind; 8] = [
    Kind::Length,
    Kind::Speed,
    Kind::Angle,
    Kind::AngleOrLength,
    Kind::Time,
    Kind::C3,
    Kind::Mu,
    Kind::Ratio,
];

fuzz_target!(|data: &[u8]| {
    let Some((&k, rest)) = data.split_first() else {
        return;
    };
    let Ok(text) = std::str::from_utf8(rest) else {
        return;
    };
    if let Ok(g) = parse_range("--fuzz", text, KINDS[k as usize % KINDS.len()]) {
        assert!(!g.is_empty());
        assert!(g.si(0).is_finite(), "{text:?}");
        assert!(g.si(g.len() - 1).is_finite(), "{text:?}");
    }
});
