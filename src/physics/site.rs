//! Launch site, planet rotation and inclination.
//!
//! Conventions (decided here and stated in the README):
//! - The site is given by geodetic latitude and longitude. For Earth the
//!   geodetic latitude of a surface point is converted to geocentric with the
//!   WGS 84 flattening, tan(lat_c) = (1 - f)^2 tan(lat_g); other catalog
//!   bodies are treated as spheres (geocentric = geodetic). All geometry
//!   below (great circles, inclination) uses geocentric latitude, and the
//!   reported burnout latitude is geocentric.
//! - The ascent ground track from the site to the burnout subpoint is the
//!   great circle on the (rotating) body that leaves the site at the launch
//!   azimuth, followed for the downrange arc. Its azimuth at the burnout
//!   point is the heading of the burnout velocity relative to the rotating
//!   surface ("as flown").
//! - Speeds and flight-path angles given with `--speed` / `--fpa`, and the
//!   core's answers, are inertial. The surface-relative burnout velocity is
//!   the inertial one minus omega x r, whose only component is eastward,
//!   omega r cos(lat_c).
//! - Inclination from the burnout latitude and the inertial azimuth beta:
//!   cos i = cos(lat) sin(beta) (Bate, Mueller & White, *Fundamentals of
//!   Astrodynamics*, 1971, ch. 8; Curtis, *Orbital Mechanics for Engineering
//!   Students*, ch. 4), evaluated as i = atan2(hypot(sin lat, cos lat cos beta),
//!   cos lat sin beta) to keep digits near 0 and 180 deg.

use crate::error::{g, Error};
use crate::physics::body::Body;
use std::f64::consts::{FRAC_PI_2, PI};

/// WGS 84 flattening f.
// Source: NIMA TR8350.2, 3rd ed., Table 3.1 (defining parameter 1/f = 298.257223563).
pub const EARTH_FLATTENING: f64 = 1.0 / 298.257_223_563;

/// Site inputs (SI, radians).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct SiteInputs {
    /// Geodetic latitude of the site, rad.
    pub latitude_geodetic_rad: f64,
    /// Longitude of the site, rad (east positive).
    pub longitude_rad: f64,
    /// Launch azimuth at the site, rad from north through east; `None` to
    /// solve for it from a target inclination.
    pub azimuth_rad: Option<f64>,
    /// Great-circle arc from the site to the burnout subpoint, rad.
    pub downrange_rad: f64,
    /// Target inclination, rad, if any.
    pub inclination_rad: Option<f64>,
}

/// Site-related results for one solution.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SiteState {
    /// Launch azimuth at the site (as flown), rad in [0, 2 pi).
    pub launch_azimuth_rad: f64,
    /// Geocentric latitude of the burnout point, rad.
    pub burnout_latitude_rad: f64,
    /// Longitude of the burnout point, rad in (-pi, pi].
    pub burnout_longitude_rad: f64,
    /// Inertial azimuth of the burnout velocity, rad in [0, 2 pi).
    pub inertial_azimuth_rad: f64,
    /// Surface-relative burnout speed, m/s.
    pub relative_speed_m_s: f64,
    /// Surface-relative flight-path angle, rad.
    pub relative_flight_path_angle_rad: f64,
    /// Surface-relative azimuth (heading), rad in [0, 2 pi).
    pub relative_azimuth_rad: f64,
    /// Inclination of the orbit, rad.
    pub inclination_rad: f64,
    /// Eastward speed of the rotating surface frame at burnout, omega r cos(lat), m/s.
    pub rotation_speed_m_s: f64,
}

/// Geocentric latitude of a surface point from its geodetic latitude.
pub fn geocentric_latitude(body: &Body, latitude_geodetic_rad: f64) -> f64 {
    if body.name == "earth" {
        let k = (1.0 - EARTH_FLATTENING) * (1.0 - EARTH_FLATTENING);
        (k * latitude_geodetic_rad.sin()).atan2(latitude_geodetic_rad.cos())
    } else {
        latitude_geodetic_rad
    }
}

/// Great-circle destination: from (lat1, lon1) leaving at azimuth `az1`
/// along an arc `arc` (all rad) to (lat2, lon2) and the azimuth there.
pub fn great_circle(lat1: f64, lon1: f64, az1: f64, arc: f64) -> (f64, f64, f64) {
    // In vectors (no spherical-trigonometry cancellation near the poles):
    // p2 = p1 cos d + t1 sin d, t2 = -p1 sin d + t1 cos d, with t1 the unit
    // tangent at the site along the launch azimuth.
    let (s1, c1) = lat1.sin_cos();
    let (sl, cl) = lon1.sin_cos();
    let (sa, ca) = az1.sin_cos();
    let (sd, cd) = arc.sin_cos();
    let p1 = [c1 * cl, c1 * sl, s1];
    let north1 = [-s1 * cl, -s1 * sl, c1];
    let east1 = [-sl, cl, 0.0];
    let t1: [f64; 3] = std::array::from_fn(|i| north1[i] * ca + east1[i] * sa);
    let p2: [f64; 3] = std::array::from_fn(|i| p1[i] * cd + t1[i] * sd);
    let t2: [f64; 3] = std::array::from_fn(|i| -p1[i] * sd + t1[i] * cd);
    let horiz = p2[0].hypot(p2[1]);
    let lat2 = p2[2].atan2(horiz);
    // At a pole the longitude is undefined: keep the site's.
    let lon2 = if horiz > 0.0 {
        p2[1].atan2(p2[0])
    } else {
        lon1
    };
    let (s2, c2) = lat2.sin_cos();
    let (sl2, cl2) = lon2.sin_cos();
    let north2 = [-s2 * cl2, -s2 * sl2, c2];
    let east2 = [-sl2, cl2, 0.0];
    let dot = |u: &[f64; 3], v: &[f64; 3]| u[0] * v[0] + u[1] * v[1] + u[2] * v[2];
    let az2 = dot(&t2, &east2).atan2(dot(&t2, &north2));
    (
        lat2,
        (lon2 + PI).rem_euclid(2.0 * PI) - PI,
        az2.rem_euclid(2.0 * PI),
    )
}

/// Inclination, rad, of an orbit passing latitude `lat` (geocentric) with
/// inertial azimuth `beta`.
pub fn inclination_rad(lat: f64, beta: f64) -> f64 {
    let (sl, cl) = lat.sin_cos();
    let (sb, cb) = beta.sin_cos();
    sl.hypot(cl * cb).atan2(cl * sb)
}

/// The two inertial azimuths (northbound, southbound), rad in [0, 2 pi),
/// that reach inclination `i` from geocentric latitude `lat`.
///
/// # Errors
/// [`Error::Infeasible`] when the inclination is below the latitude (or
/// above 180 deg minus it): direct injection cannot reach it.
pub fn azimuths_for_inclination(lat: f64, i: f64) -> Result<(f64, f64), Error> {
    let (si, ci) = i.sin_cos();
    let sl = lat.sin().abs();
    let d = (si - sl) * (si + sl);
    if d < -1e-15 {
        return Err(Error::Infeasible(format!(
            "inclination {} deg is below the burnout latitude {} deg: direct injection cannot reach it (expected between {} and {} deg)",
            g(i.to_degrees()),
            g(lat.to_degrees()),
            g(lat.to_degrees().abs()),
            g(180.0 - lat.to_degrees().abs())
        )));
    }
    let north = ci.atan2(d.max(0.0).sqrt()).rem_euclid(2.0 * PI);
    let south = (PI - north).rem_euclid(2.0 * PI);
    Ok((north, south))
}

/// Eastward speed of the surface frame at radius `r` and geocentric latitude `lat`, m/s.
pub fn rotation_speed_m_s(body: &Body, r: f64, lat: f64) -> f64 {
    body.rotation_rate_rad_s.unwrap_or(0.0) * r * lat.cos()
}

/// (north, east, up) components from speed, flight-path angle and azimuth.
fn components(v: f64, gamma: f64, az: f64) -> (f64, f64, f64) {
    let h = v * gamma.cos();
    (h * az.cos(), h * az.sin(), v * gamma.sin())
}

fn from_components(n: f64, e: f64, u: f64) -> (f64, f64, f64) {
    let h = n.hypot(e);
    (h.hypot(u), u.atan2(h), e.atan2(n).rem_euclid(2.0 * PI))
}

/// Surface-relative (speed, flight-path angle, azimuth) from inertial ones.
pub fn relative_from_inertial(v_rot: f64, v: f64, gamma: f64, az: f64) -> (f64, f64, f64) {
    let (n, e, u) = components(v, gamma, az);
    from_components(n, e - v_rot, u)
}

/// Inertial (speed, flight-path angle, azimuth) from surface-relative ones.
pub fn inertial_from_relative(v_rot: f64, v: f64, gamma: f64, az: f64) -> (f64, f64, f64) {
    let (n, e, u) = components(v, gamma, az);
    from_components(n, e + v_rot, u)
}

/// The inertial azimuth of a burnout velocity with inertial speed `v` and
/// flight-path angle `gamma` whose surface-relative heading is `heading`:
/// with horizontal inertial speed v_h and rotation speed w, the relative
/// horizontal speed is u = -w sin(heading) + sqrt(v_h^2 - w^2 cos^2(heading)).
/// `None` when no such velocity exists (the rotation speed across the
/// heading exceeds the horizontal speed).
pub fn inertial_azimuth_for_heading(v_rot: f64, v: f64, gamma: f64, heading: f64) -> Option<f64> {
    let vh = v * gamma.cos();
    let (sh, ch) = heading.sin_cos();
    let disc = (vh - v_rot * ch) * (vh + v_rot * ch);
    if disc < 0.0 {
        return None;
    }
    let u = -v_rot * sh + disc.sqrt();
    if u < 0.0 {
        return None;
    }
    Some((u * sh + v_rot).atan2(u * ch).rem_euclid(2.0 * PI))
}

/// Checks and converts site inputs.
///
/// # Errors
/// Latitude outside [-90, 90] deg, non-finite values, negative downrange.
pub fn validate(site: &SiteInputs) -> Result<(), Error> {
    let lat = site.latitude_geodetic_rad;
    if !(lat.is_finite() && lat.abs() <= FRAC_PI_2) {
        return Err(Error::OutOfRange {
            quantity: "latitude",
            value: lat.to_degrees(),
            unit: "deg",
            expected: "between -90 and 90 deg".into(),
        });
    }
    if !(site.downrange_rad.is_finite() && site.downrange_rad >= 0.0 && site.downrange_rad < PI) {
        return Err(Error::OutOfRange {
            quantity: "downrange arc",
            value: site.downrange_rad.to_degrees(),
            unit: "deg",
            expected: "0 or more and below 180 deg of arc".into(),
        });
    }
    if let Some(i) = site.inclination_rad {
        if !(0.0..=PI).contains(&i) {
            return Err(Error::OutOfRange {
                quantity: "inclination",
                value: i.to_degrees(),
                unit: "deg",
                expected: "between 0 and 180 deg".into(),
            });
        }
    }
    Ok(())
}

/// Site state for an inertial burnout state flown at launch azimuth `launch_az`.
///
/// # Errors
/// [`Error::Infeasible`] when the relative heading cannot be flown at this
/// speed (rotation faster than the horizontal speed).
pub fn site_state(
    body: &Body,
    site: &SiteInputs,
    launch_az: f64,
    r: f64,
    v: f64,
    gamma: f64,
) -> Result<SiteState, Error> {
    let lat_site = geocentric_latitude(body, site.latitude_geodetic_rad);
    let (lat, lon, heading) =
        great_circle(lat_site, site.longitude_rad, launch_az, site.downrange_rad);
    let w = rotation_speed_m_s(body, r, lat);
    let beta = inertial_azimuth_for_heading(w, v, gamma, heading).ok_or_else(|| {
        Error::Infeasible(format!(
            "heading {} deg at burnout cannot be flown at inertial horizontal speed {} m/s: the surface moves east at {} m/s there",
            g(heading.to_degrees()),
            g(v * gamma.cos()),
            g(w)
        ))
    })?;
    let (vr, gr, ar) = relative_from_inertial(w, v, gamma, beta);
    Ok(SiteState {
        launch_azimuth_rad: launch_az.rem_euclid(2.0 * PI),
        burnout_latitude_rad: lat,
        burnout_longitude_rad: lon,
        inertial_azimuth_rad: beta,
        relative_speed_m_s: vr,
        relative_flight_path_angle_rad: gr,
        relative_azimuth_rad: ar,
        inclination_rad: inclination_rad(lat, beta),
        rotation_speed_m_s: w,
    })
}

/// Which of the two planes through a site an ascent flies: `northbound`
/// when the launch azimuth points north of east-west, `southbound` when
/// south of it, `eastbound` / `westbound` exactly along it (an inclination
/// equal to the site's latitude). Tells apart the two answers of an
/// inclination target, which share their branch (the sign of the radial
/// speed).
pub fn plane_label(launch_azimuth_rad: f64) -> &'static str {
    let (s, c) = launch_azimuth_rad.sin_cos();
    if c.abs() <= 1e-12 {
        if s > 0.0 {
            "eastbound"
        } else {
            "westbound"
        }
    } else if c > 0.0 {
        "northbound"
    } else {
        "southbound"
    }
}

#[cfg(test)]
#[allow(clippy::float_cmp)] // exact symmetric results are asserted on purpose
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn earth() -> Body {
        Body::from_name("earth").unwrap()
    }

    #[test]
    fn due_east_from_a_latitude_gives_that_inclination() {
        // cos i = cos(lat) sin(90 deg) => i = lat (textbook minimum inclination).
        for deg in [0.0f64, 5.2, 28.5, 45.0, 62.0] {
            assert_relative_eq!(
                inclination_rad(deg.to_radians(), FRAC_PI_2),
                deg.to_radians(),
                epsilon = 1e-15
            );
        }
    }

    #[test]
    fn azimuth_for_fifty_one_point_six_from_twenty_eight_point_five() {
        // sin(beta) = cos(51.6)/cos(28.5) = 0.70680 => beta = 44.97 deg; the
        // ~45 deg launch azimuth for this pair is a common textbook figure
        // (from memory); here an identity check of our evaluation.
        let (n, s) = azimuths_for_inclination(28.5f64.to_radians(), 51.6f64.to_radians()).unwrap();
        let want = (51.6f64.to_radians().cos() / 28.5f64.to_radians().cos()).asin();
        assert_relative_eq!(n, want, max_relative = 1e-13);
        assert_relative_eq!(n.to_degrees(), 44.97, max_relative = 1e-3);
        assert_relative_eq!(s, PI - want, max_relative = 1e-13);
    }

    #[test]
    fn inclination_below_latitude_is_infeasible_and_names_both() {
        let e = azimuths_for_inclination(40f64.to_radians(), 30f64.to_radians())
            .unwrap_err()
            .to_string();
        assert!(
            e.contains("inclination 30 deg") && e.contains("latitude 40 deg"),
            "{e}"
        );
    }

    #[test]
    fn geodetic_to_geocentric_matches_wgs84_at_45_deg() {
        // At 45 deg geodetic the geocentric latitude is smaller by about
        // 0.1924 deg (11.5 arcmin), the classic maximum difference (from memory).
        let c = geocentric_latitude(&earth(), 45f64.to_radians());
        assert_relative_eq!(45.0 - c.to_degrees(), 0.19242, max_relative = 1e-3);
        let moon = Body::from_name("moon").unwrap();
        assert_eq!(geocentric_latitude(&moon, 0.5), 0.5);
    }

    #[test]
    fn zero_downrange_puts_burnout_over_the_site() {
        let (lat, lon, az) = great_circle(0.4, 1.0, 1.1, 0.0);
        assert_relative_eq!(lat, 0.4, max_relative = 1e-15);
        assert_relative_eq!(lon, 1.0, max_relative = 1e-15);
        assert_relative_eq!(az, 1.1, max_relative = 1e-15);
    }

    #[test]
    fn great_circle_along_the_equator_and_meridian() {
        let (lat, lon, az) = great_circle(0.0, 0.0, FRAC_PI_2, 0.3);
        assert!(lat.abs() < 1e-15);
        assert_relative_eq!(lon, 0.3, max_relative = 1e-15);
        assert_relative_eq!(az, FRAC_PI_2, max_relative = 1e-15);
        let (lat, _, az) = great_circle(0.2, 0.0, 0.0, 0.3);
        assert_relative_eq!(lat, 0.5, max_relative = 1e-15);
        assert!(az.abs() < 1e-15);
    }

    #[test]
    fn equatorial_site_to_equatorial_orbit_gains_the_full_rotation_speed() {
        let r = earth().radius_m + 200e3;
        let w = rotation_speed_m_s(&earth(), r, 0.0);
        assert_relative_eq!(w, 7.292115e-5 * r, max_relative = 1e-15);
        let (vr, gr, ar) = relative_from_inertial(w, 7800.0, 0.0, FRAC_PI_2);
        assert_relative_eq!(7800.0 - vr, w, max_relative = 1e-12);
        assert_eq!(gr, 0.0);
        assert_relative_eq!(ar, FRAC_PI_2, max_relative = 1e-15);
        // Retrograde (due west) costs it.
        let (vr, _, _) = relative_from_inertial(w, 7800.0, 0.0, 1.5 * PI);
        assert_relative_eq!(vr - 7800.0, w, max_relative = 1e-12);
    }

    #[test]
    fn polar_orbit_gains_nothing_along_track() {
        // Due north: the rotation is across the track; the along-track
        // relative speed equals the inertial one.
        let w = 400.0;
        let (vr, _, ar) = relative_from_inertial(w, 7800.0, 0.0, 0.0);
        assert_relative_eq!(vr * ar.cos(), 7800.0, max_relative = 1e-15);
    }

    #[test]
    fn heading_inversion_round_trips() {
        let w = 450.0;
        let beta = inertial_azimuth_for_heading(w, 7800.0, 0.1, 1.2).unwrap();
        let (_, _, heading) = relative_from_inertial(w, 7800.0, 0.1, beta);
        assert_relative_eq!(heading, 1.2, max_relative = 1e-13);
    }
}

#[cfg(test)]
mod properties {
    use super::*;
    use proptest::prelude::*;

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(2000))]

        #[test]
        fn inertial_relative_round_trip(w in -500.0f64..500.0, v in 100.0f64..20_000.0,
                                        g in -1.5f64..1.5, az in 0.0f64..std::f64::consts::TAU) {
            let (vr, gr, ar) = relative_from_inertial(w, v, g, az);
            let (vi, gi, ai) = inertial_from_relative(w, vr, gr, ar);
            prop_assert!((vi - v).abs() <= 1e-12 * v);
            prop_assert!((gi - g).abs() <= 1e-12);
            let d = (ai - az).rem_euclid(2.0 * PI);
            prop_assert!(d.min(2.0 * PI - d) <= 1e-9 * (v / (v * g.cos()).max(1e-300)));
        }

        #[test]
        fn azimuths_for_inclination_round_trip(lat in -1.5f64..1.5, frac in 0.0f64..1.0) {
            // i between |lat| and 180 - |lat|.
            let i = lat.abs() + frac * (PI - 2.0 * lat.abs());
            let (n, s) = azimuths_for_inclination(lat, i).unwrap();
            prop_assert!((inclination_rad(lat, n) - i).abs() <= 1e-9);
            prop_assert!((inclination_rad(lat, s) - i).abs() <= 1e-9);
        }
    }
}
