//! The text of a number in CSV rows: the shortest decimal that reads back
//! as the same `f64`, in one fixed layout.
//!
//! The layout is the one the CSV reports have always written (`ryu`'s, less
//! a trailing `.0`): plain digits for decimal exponents -5 to 15
//! (`0.00001`, `6563137`, `9007199254740992`, `0.7306175182301394`),
//! otherwise `d.ddde-X` / `d.dddeX` with no `+` and no leading zeros in the
//! exponent (`1e-7`, `-4.5e-16`, `1e16`, `1.7976931348623157e308`);
//! zeros are `0` and `-0`.
//!
//! The digits come from `zmij`, which finds the same shortest, closest
//! digits as `ryu` in about half the time and lays them out the same way
//! except for a `+` in positive exponents (`1e+16`); that `+` is removed
//! here. The unit tests below hold the bytes equal to the `ryu` path over
//! random bit patterns and the layout's switch points.

/// The most bytes [`format_into`] writes (`-2.2250738585072014e-308`).
pub const MAX_LEN: usize = 24;

/// Bits of `1e16` (positive): below it in magnitude no text has an exponent
/// `e+`, so smaller numbers skip the search for the `+`.
const E_PLUS_FROM: u64 = 1e16f64.to_bits();

/// Appends the text of `x` to `buf`; nothing when `x` is not finite.
#[inline]
pub fn push_f64(buf: &mut Vec<u8>, x: f64) {
    if !x.is_finite() {
        return;
    }
    let mut b = zmij::Buffer::new();
    let s = b.format_finite(x).as_bytes();
    let n = s.len();
    if s.ends_with(b".0") {
        buf.extend_from_slice(&s[..n - 2]);
    } else if let Some(p) = plus_at(s, x) {
        buf.extend_from_slice(&s[..p]);
        buf.extend_from_slice(&s[p + 1..]);
    } else {
        buf.extend_from_slice(s);
    }
}

/// Writes the text of `x` (as [`push_f64`]) at the start of `out` and
/// returns its length; 0 (nothing written) when `x` is not finite.
#[inline]
pub fn format_into(out: &mut [u8; MAX_LEN], x: f64) -> usize {
    if !x.is_finite() {
        return 0;
    }
    let mut b = zmij::Buffer::new();
    let s = b.format_finite(x).as_bytes();
    let n = s.len();
    if s.ends_with(b".0") {
        out[..n - 2].copy_from_slice(&s[..n - 2]);
        n - 2
    } else if let Some(p) = plus_at(s, x) {
        out[..p].copy_from_slice(&s[..p]);
        out[p..n - 1].copy_from_slice(&s[p + 1..]);
        n - 1
    } else {
        out[..n].copy_from_slice(s);
        n
    }
}

/// Where the `+` of a positive exponent is in `zmij`'s text `s` of `x`.
#[inline(always)]
fn plus_at(s: &[u8], x: f64) -> Option<usize> {
    // A positive exponent means a shortest text of at least 1e16, and only
    // |x| >= 1e16 has one (1e16 is exact, so no smaller number rounds to it).
    if x.to_bits() & !(1 << 63) < E_PLUS_FROM {
        return None;
    }
    // The `+` follows the `e`: at most 4 bytes from the end (`e+308`).
    let from = s.len().saturating_sub(4);
    s[from..].iter().position(|&c| c == b'+').map(|i| from + i)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The text the CSV writers wrote before this module: `ryu`, less `.0`.
    fn reference(x: f64) -> Vec<u8> {
        if !x.is_finite() {
            return Vec::new();
        }
        let mut b = ryu::Buffer::new();
        let s = b.format_finite(x);
        s.strip_suffix(".0").unwrap_or(s).as_bytes().to_vec()
    }

    fn check(x: f64) {
        let want = reference(x);
        let mut got = Vec::new();
        push_f64(&mut got, x);
        assert_eq!(
            got,
            want,
            "push_f64 of bits {:#018x}: {:?} vs {:?}",
            x.to_bits(),
            String::from_utf8_lossy(&got),
            String::from_utf8_lossy(&want)
        );
        let mut out = [b'#'; MAX_LEN];
        let n = format_into(&mut out, x);
        assert_eq!(
            &out[..n],
            &want[..],
            "format_into of bits {:#018x}",
            x.to_bits()
        );
    }

    /// Both signs, and the neighbours one and two units in the last place away.
    fn check_around(x: f64) {
        let b = x.abs().to_bits();
        for bits in b.saturating_sub(2)..=b.saturating_add(2) {
            let y = f64::from_bits(bits);
            check(y);
            check(-y);
        }
    }

    /// SplitMix64: a fixed, dependency-free stream of bit patterns.
    struct Bits(u64);

    impl Bits {
        fn next(&mut self) -> u64 {
            self.0 = self.0.wrapping_add(0x9e37_79b9_7f4a_7c15);
            let mut z = self.0;
            z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
            z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
            z ^ (z >> 31)
        }
    }

    #[test]
    fn the_threshold_constant_is_1e16() {
        // The first number with a positive exponent, and the last without.
        check(1e16);
        check(f64::from_bits(E_PLUS_FROM - 1));
        assert_eq!(reference(1e16), b"1e16");
        assert_eq!(
            reference(f64::from_bits(E_PLUS_FROM - 1)),
            b"9999999999999998"
        );
    }

    #[test]
    fn layout_examples() {
        for (x, text) in [
            (0.0, "0"),
            (-0.0, "-0"),
            (1.0, "1"),
            (6563137.0, "6563137"),
            (10238.603248144418, "10238.603248144418"),
            (0.7306175182301394, "0.7306175182301394"),
            (-4.5e-16, "-4.5e-16"),
            (1e-5, "0.00001"),
            (1.5e-5, "0.000015"),
            (1e-6, "1e-6"),
            (1e-7, "1e-7"),
            (1e15, "1000000000000000"),
            (1e16, "1e16"),
            (1.5e300, "1.5e300"),
            (123456789012345680000.0, "1.2345678901234568e20"),
            (9007199254740993.0, "9007199254740992"),
            (f64::MAX, "1.7976931348623157e308"),
            (f64::MIN, "-1.7976931348623157e308"),
            (f64::MIN_POSITIVE, "2.2250738585072014e-308"),
            (-f64::MIN_POSITIVE, "-2.2250738585072014e-308"),
            (5e-324, "5e-324"),
        ] {
            let mut got = Vec::new();
            push_f64(&mut got, x);
            assert_eq!(String::from_utf8(got).unwrap(), text, "{x:e}");
            check(x);
        }
        let mut out = [0; MAX_LEN];
        for x in [f64::NAN, f64::INFINITY, f64::NEG_INFINITY, -f64::NAN] {
            let mut got = vec![b'x'];
            push_f64(&mut got, x);
            assert_eq!(got, b"x");
            assert_eq!(format_into(&mut out, x), 0);
        }
        // The longest text fits.
        assert_eq!(reference(-2.2250738585072014e-308).len(), MAX_LEN);
        check(-2.2250738585072014e-308);
    }

    #[test]
    fn random_bit_patterns_match_the_ryu_text() {
        let mut rng = Bits(0x5eed_f10a_7000_0001);
        let mut n = 0;
        while n < 200_000 {
            let x = f64::from_bits(rng.next());
            if x.is_finite() {
                check(x);
                n += 1;
            }
        }
    }

    #[test]
    fn every_binary_exponent_and_subnormals_match() {
        let mut rng = Bits(0x0bad_cafe);
        for exp in 0..0x7ffu64 {
            for k in 0..24 {
                let sig = match k {
                    0 => 0,
                    1 => 1,
                    2 => (1 << 52) - 1,
                    _ => rng.next() >> 12,
                };
                let x = f64::from_bits(exp << 52 | sig);
                check(x);
                check(-x);
            }
        }
        // Small subnormals (few significant bits) and the largest ones.
        for sig in (1..2000u64).chain((1u64 << 52) - 2000..1 << 52) {
            check(f64::from_bits(sig));
        }
    }

    #[test]
    fn powers_of_ten_and_short_decimals_match() {
        // Around every power of ten: the plain/exponent switches at 1e-5 /
        // 1e-6 and 1e15 / 1e16 included.
        for k in -324..=308 {
            let p: f64 = format!("1e{k}").parse().unwrap();
            check_around(p);
        }
        // Short decimals d * 10^k, whose shortest text is short and whose
        // digits end exactly at the layout's edges.
        for k in -330..=310 {
            for d in [1u32, 2, 5, 9, 12, 15, 99, 123, 999, 4321, 99999, 1234567] {
                let x: f64 = format!("{d}e{k}").parse().unwrap();
                check_around(x);
            }
        }
    }

    #[test]
    fn integers_match() {
        for i in 0..20_000u64 {
            check(i as f64);
            check(-(i as f64));
        }
        // Around 2^53 (the last exact integers), 2^54, 1e15..1e17 and beyond.
        for base in [
            (1u64 << 53) as f64,
            (1u64 << 54) as f64,
            1e15,
            1e16,
            1e17,
            u64::MAX as f64,
            1e21,
            1e22,
            1e23,
        ] {
            for i in -1000i64..=1000 {
                check(base + i as f64);
            }
            check_around(base);
        }
        let mut rng = Bits(53);
        for _ in 0..20_000 {
            check((rng.next() >> 11) as f64);
            check(rng.next() as f64);
        }
    }

    proptest::proptest! {
        #[test]
        fn any_bits_match(bits in proptest::prelude::any::<u64>()) {
            check(f64::from_bits(bits));
        }
    }
}
