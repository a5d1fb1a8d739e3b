//! Criterion benchmark of the number text in CSV rows: the `ryu` path the
//! writers used before (`ryu` then strip `.0`) against
//! `burnout::report::float::push_f64` (same bytes), on a mix of numbers
//! like those of a scan with sensitivities: altitudes and radii in metres,
//! speeds, angles in degrees, integers, and tiny partials.
//!
//! Run with `cargo bench --bench float`.

use burnout::report::float::{format_into, push_f64, MAX_LEN};
use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use std::hint::black_box;

/// The numbers: 4096 values in five families, from a fixed SplitMix64 stream.
fn mix() -> Vec<f64> {
    let mut state = 0x2545_f491_4f6c_dd1du64;
    let mut next = move || {
        state = state.wrapping_add(0x9e37_79b9_7f4a_7c15);
        let mut z = state;
        z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
        ((z ^ (z >> 31)) >> 11) as f64 / (1u64 << 53) as f64
    };
    (0..4096)
        .map(|i| {
            let u = next();
            match i % 5 {
                0 => 10238.603248144418 * (1.0 + 0.1 * u), // speeds, m/s
                1 => (6563137.0 + 1e6 * u).round(),        // integer radii, m
                2 => 0.7306175182301394 * u,               // angles, ratios
                3 => -4.5e-16 * (1.0 + u),                 // partials near zero
                _ => 37846.363894695976 * (1.0 + u),       // periods, s
            }
        })
        .collect()
}

fn ryu_strip(buf: &mut Vec<u8>, x: f64) {
    if x.is_finite() {
        let mut b = ryu::Buffer::new();
        let s = b.format_finite(x);
        buf.extend_from_slice(s.strip_suffix(".0").unwrap_or(s).as_bytes());
    }
}

fn float_text(c: &mut Criterion) {
    let xs = mix();
    let mut group = c.benchmark_group("f64 text, scan mix");
    group.throughput(Throughput::Elements(xs.len() as u64));
    let mut buf = Vec::with_capacity(xs.len() * MAX_LEN);
    group.bench_function("ryu + strip .0", |b| {
        b.iter(|| {
            buf.clear();
            for &x in &xs {
                ryu_strip(&mut buf, black_box(x));
            }
            black_box(buf.len())
        })
    });
    group.bench_function("push_f64 (zmij)", |b| {
        b.iter(|| {
            buf.clear();
            for &x in &xs {
                push_f64(&mut buf, black_box(x));
            }
            black_box(buf.len())
        })
    });
    group.bench_function("format_into (zmij)", |b| {
        let mut out = [0u8; MAX_LEN];
        b.iter(|| {
            let mut total = 0;
            for &x in &xs {
                total += format_into(&mut out, black_box(x));
                black_box(&out);
            }
            total
        })
    });
    group.finish();
}

criterion_group!(benches, float_text);
criterion_main!(benches);
