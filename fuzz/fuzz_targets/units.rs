//! Value parser: any text, any kind; an error is fine, a panic is not, and
//! an accepted value is finite.
#![no_main]
use burnout::input::units::{parse, Kind};
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
    if let Ok(p) = parse("--fuzz", text, KINDS[k as usize % KINDS.len()]) {
        assert!(p.si.is_finite(), "accepted a non-finite value from {text:?}");
    }
});
