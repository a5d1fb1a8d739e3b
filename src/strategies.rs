//! Shared proptest strategies with physical ranges (test-only).

use crate::physics::body::Body;
use crate::physics::orbit::Conic;
use proptest::prelude::*;

/// A catalog body.
pub fn body() -> impl Strategy<Value = Body> {
    proptest::sample::select(crate::physics::body::CATALOG.to_vec())
        .prop_map(|n| Body::from_name(n).unwrap())
}

/// Eccentricity over near-circular, elliptic, near-parabolic and hyperbolic ranges.
pub fn ecc() -> impl Strategy<Value = f64> {
    prop_oneof![
        Just(0.0),
        (-12.0f64..-6.0).prop_map(|x| 10f64.powf(x)),
        0.0f64..0.99,
        (-9.0f64..-3.0).prop_map(|x| 1.0 - 10f64.powf(x)),
        (-9.0f64..-3.0).prop_map(|x| 1.0 + 10f64.powf(x)),
        1.0f64..6.0,
    ]
}

/// (body, conic, burnout radius on it) with periapsis 1.0 to 20 body radii.
pub fn targeted() -> impl Strategy<Value = (Body, Conic, f64)> {
    (body(), 1.0f64..20.0, ecc(), 0.0f64..=1.0).prop_map(|(b, k, e, u)| {
        let rp = b.radius_m * k;
        let conic = Conic::from_periapsis_ecc(rp, e).unwrap();
        let r = match conic.apoapsis_radius_m() {
            Some(ra) => rp + u * (ra - rp).min(1e3 * rp),
            None => rp * (1.0 + 10.0 * u),
        };
        (b, conic, r)
    })
}

/// (body, radius, speed as a fraction of escape, flight-path angle rad).
pub fn burnout_state() -> impl Strategy<Value = (Body, f64, f64, f64)> {
    (body(), 1.0f64..20.0, 0.3f64..1.8, -1.5f64..1.5).prop_map(|(b, k, f, g)| {
        let r = b.radius_m * k;
        let v = f * b.escape_speed_m_s(r);
        (b, r, v, g)
    })
}
