//! Independent numerical check of the targeting core: integrate the two-body
//! equations from each solved burnout state with an adaptive Dormand-Prince
//! 5(4) integrator written here (not used by the product), locate the apsides
//! the trajectory actually reaches, and compare them with the targeted ones.
//! Also checks time of flight to apoapsis independently of Kepler's equation.

use approx::assert_relative_eq;
use burnout::physics::body::Body;
use burnout::physics::kepler::coast_times;
use burnout::physics::orbit::Conic;
use burnout::solve::invert::burnout_for_conic;

type State = [f64; 4]; // planar: x, y, vx, vy

fn deriv(mu: f64, s: &State) -> State {
    let r2 = s[0] * s[0] + s[1] * s[1];
    let r3 = r2 * r2.sqrt();
    [s[2], s[3], -mu * s[0] / r3, -mu * s[1] / r3]
}

fn axpy(y: &State, terms: &[(f64, &State)], h: f64) -> State {
    let mut out = *y;
    for (c, k) in terms {
        for i in 0..4 {
            out[i] += h * c * k[i];
        }
    }
    out
}

/// One Dormand-Prince 5(4) step (Dormand & Prince 1980, J. Comp. Appl. Math. 6;
/// tableau as in Hairer, Norsett & Wanner, Solving ODEs I, Table 5.2).
/// Returns the 5th-order solution and the error estimate.
fn dp_step(mu: f64, y: &State, h: f64) -> (State, f64) {
    let k1 = deriv(mu, y);
    let k2 = deriv(mu, &axpy(y, &[(1.0 / 5.0, &k1)], h));
    let k3 = deriv(mu, &axpy(y, &[(3.0 / 40.0, &k1), (9.0 / 40.0, &k2)], h));
    let k4 = deriv(
        mu,
        &axpy(
            y,
            &[(44.0 / 45.0, &k1), (-56.0 / 15.0, &k2), (32.0 / 9.0, &k3)],
            h,
        ),
    );
    let k5 = deriv(
        mu,
        &axpy(
            y,
            &[
                (19372.0 / 6561.0, &k1),
                (-25360.0 / 2187.0, &k2),
                (64448.0 / 6561.0, &k3),
                (-212.0 / 729.0, &k4),
            ],
            h,
        ),
    );
    let k6 = deriv(
        mu,
        &axpy(
            y,
            &[
                (9017.0 / 3168.0, &k1),
                (-355.0 / 33.0, &k2),
                (46732.0 / 5247.0, &k3),
                (49.0 / 176.0, &k4),
                (-5103.0 / 18656.0, &k5),
            ],
            h,
        ),
    );
    let b = [
        35.0 / 384.0,
        0.0,
        500.0 / 1113.0,
        125.0 / 192.0,
        -2187.0 / 6784.0,
        11.0 / 84.0,
    ];
    let y5 = axpy(
        y,
        &[
            (b[0], &k1),
            (b[2], &k3),
            (b[3], &k4),
            (b[4], &k5),
            (b[5], &k6),
        ],
        h,
    );
    let k7 = deriv(mu, &y5);
    // Difference between 5th- and 4th-order weights (FSAL stage k7).
    let e = [
        71.0 / 57600.0,
        0.0,
        -71.0 / 16695.0,
        71.0 / 1920.0,
        -17253.0 / 339200.0,
        22.0 / 525.0,
        -1.0 / 40.0,
    ];
    let ks = [&k1, &k2, &k3, &k4, &k5, &k6, &k7];
    let rscale = (y[0] * y[0] + y[1] * y[1]).sqrt();
    let vscale = (y[2] * y[2] + y[3] * y[3]).sqrt();
    let mut err: f64 = 0.0;
    for i in 0..4 {
        let mut d = 0.0;
        for (j, k) in ks.iter().enumerate() {
            d += e[j] * k[i];
        }
        let scale = if i < 2 { rscale } else { vscale };
        err = err.max((h * d).abs() / scale);
    }
    (y5, err)
}

fn radial_speed(s: &State) -> f64 {
    (s[0] * s[2] + s[1] * s[3]) / (s[0] * s[0] + s[1] * s[1]).sqrt()
}

fn radius(s: &State) -> f64 {
    (s[0] * s[0] + s[1] * s[1]).sqrt()
}

/// Integrates for `duration_s`; returns the final state and every apsis
/// radius crossed (where the radial speed changes sign), each refined by
/// bisection on a sub-step from the last accepted state.
fn propagate(mu: f64, y0: State, duration_s: f64, tol: f64) -> (State, Vec<f64>) {
    let mut y = y0;
    let mut t = 0.0;
    let mut h = duration_s / 1000.0;
    let mut apsides = Vec::new();
    while t < duration_s {
        h = h.min(duration_s - t);
        let (y_new, err) = dp_step(mu, &y, h);
        if err > tol {
            h *= (0.9 * (tol / err).powf(0.2)).max(0.2);
            continue;
        }
        let (vr0, vr1) = (radial_speed(&y), radial_speed(&y_new));
        if vr0 != 0.0 && vr0.signum() != vr1.signum() {
            let (mut lo, mut hi) = (0.0, h);
            for _ in 0..200 {
                let mid = 0.5 * (lo + hi);
                let (ym, _) = dp_step(mu, &y, mid);
                if radial_speed(&ym).signum() == vr0.signum() {
                    lo = mid;
                } else {
                    hi = mid;
                }
                if hi - lo <= 1e-12 * h {
                    break;
                }
            }
            apsides.push(radius(&dp_step(mu, &y, 0.5 * (lo + hi)).0));
        }
        y = y_new;
        t += h;
        h *= (0.9 * (tol / err.max(1e-300)).powf(0.2)).min(4.0);
    }
    (y, apsides)
}

fn burnout_state(r: f64, v: f64, fpa: f64) -> State {
    // Position on the x axis; velocity split into radial (x) and horizontal (y).
    [r, 0.0, v * fpa.sin(), v * fpa.cos()]
}

#[test]
fn integrator_closes_a_circular_orbit_after_one_period() {
    let mu: f64 = 3.986004418e14;
    let r: f64 = 7.0e6;
    let v = (mu / r).sqrt();
    let period = 2.0 * std::f64::consts::PI * (r * r * r / mu).sqrt();
    let (y, _) = propagate(mu, burnout_state(r, v, 0.0), period, 1e-13);
    // Analytic: back at the start point.
    assert!((y[0] - r).abs() / r < 1e-9, "x {}", y[0]);
    assert!(y[1].abs() / r < 1e-9, "y {}", y[1]);
}

/// Cases: (body, periapsis alt m, apoapsis alt m, burnout alt m).
const CASES: &[(&str, f64, f64, f64)] = &[
    ("earth", 200e3, 400e3, 300e3),          // LEO
    ("earth", 185e3, 35_786e3, 185e3),       // GTO, burnout at perigee
    ("earth", 185e3, 35_786e3, 900e3),       // GTO, off-perigee burnout
    ("earth", 600e3, 39_700e3, 5_000e3),     // highly elliptical
    ("earth", 700e3, 700.001e3, 700.0005e3), // near-circular (e ~ 7e-8)
    ("moon", 16e3, 90e3, 18e3),              // lunar ascent
    ("moon", 100e3, 3_000e3, 2_999e3),       // near lunar apoapsis
    ("mars", 250e3, 33_000e3, 400e3),        // Mars capture-like ellipse
    ("jupiter", 1_000e3, 2_000_000e3, 50_000e3),
];

#[test]
fn integrated_trajectories_reach_the_targeted_apsides() {
    let mut worst: f64 = 0.0;
    for &(name, hp, ha, hb) in CASES {
        let body = Body::from_name(name).unwrap();
        let mu = body.mu_m3_s2;
        let rp = body.radius_m + hp;
        let ra = body.radius_m + ha;
        let conic = Conic::from_apsides(rp, ra).unwrap();
        let period = conic.period_s(mu).unwrap();
        for st in burnout_for_conic(mu, &conic, body.radius_m + hb).unwrap() {
            let y0 = burnout_state(st.radius_m, st.speed_m_s, st.flight_path_angle_rad);
            let (_, apsides) = propagate(mu, y0, period, 1e-13);
            let r0 = st.radius_m;
            let lo = apsides.iter().copied().fold(r0, f64::min);
            let hi = apsides.iter().copied().fold(r0, f64::max);
            let e_lo = (lo - rp).abs() / rp;
            let e_hi = (hi - ra).abs() / ra;
            worst = worst.max(e_lo).max(e_hi);
            assert!(
                e_lo < 1e-8,
                "{name} {hp} {ha} {hb} {:?}: periapsis {lo} vs {rp}",
                st.branch
            );
            assert!(
                e_hi < 1e-8,
                "{name} {hp} {ha} {hb} {:?}: apoapsis {hi} vs {ra}",
                st.branch
            );
        }
    }
    eprintln!("largest relative apsis error over the integrated cases: {worst:e}");
}

#[test]
fn integrated_time_to_apoapsis_matches_keplers_equation() {
    // Propagate from burnout for the time Kepler's equation predicts and check
    // that the state is at apoapsis: radial speed ~ 0 and radius = ra.
    let body = Body::from_name("earth").unwrap();
    let mu = body.mu_m3_s2;
    let conic = Conic::from_apsides(body.radius_m + 200e3, body.radius_m + 35_786e3).unwrap();
    for st in burnout_for_conic(mu, &conic, body.radius_m + 1_500e3).unwrap() {
        let tof = coast_times(mu, st.radius_m, st.speed_m_s, st.flight_path_angle_rad)
            .unwrap()
            .to_apoapsis_s
            .unwrap();
        let y0 = burnout_state(st.radius_m, st.speed_m_s, st.flight_path_angle_rad);
        let (y, _) = propagate(mu, y0, tof, 1e-13);
        let ra = conic.apoapsis_radius_m().unwrap();
        assert_relative_eq!(radius(&y), ra, max_relative = 1e-9);
        // Radial speed at apoapsis is zero; compare with the apoapsis speed scale.
        let v_apo = conic.angular_momentum_m2_s(mu) / ra;
        assert!(
            radial_speed(&y).abs() < 1e-6 * v_apo,
            "vr {}",
            radial_speed(&y)
        );
    }
}

#[test]
fn solver_answer_for_a_coast_time_reaches_apoapsis_at_that_time() {
    // Numerically solved (no closed form): burnout at 220 km for a 1200 km
    // apoapsis reached after a 45 min coast. Integrating the two-body
    // equations for 45 min from each solution must end at apoapsis.
    use burnout::solve::target::{Target, TargetQuantity};
    use burnout::{solve, Problem};
    let body = Body::from_name("earth").unwrap();
    let mu = body.mu_m3_s2;
    let surface_m = body.radius_m;
    let ra = body.radius_m + 1_200e3;
    let tof = 45.0 * 60.0;
    let mut problem = Problem {
        burnout_radius_m: Some(body.radius_m + 220e3),
        targets: vec![
            Target::new(TargetQuantity::ApoapsisRadius, ra),
            Target::new(TargetQuantity::TimeToApoapsis, tof),
        ],
        flight_path_angle_rad: None,
        speed_m_s: None,
        min_periapsis_alt_m: None,
        site: None,
        above_alt_m: None,
        body,
    };
    // The two-body conics have two roots, an ascending and a descending one
    // (seen about a body of Earth's mu shrunk to 1 km, which nothing
    // meets). The descending one passes its periapsis on the way: the
    // integration finds that apsis under the Earth's surface before the
    // 45 min are up, so about the real Earth it is no solution and only the
    // ascending root is reported.
    let body = problem.body.clone();
    problem.body = Body::custom(mu, 1e3).unwrap();
    let conics = solve(&problem).unwrap();
    assert_eq!(
        conics.solutions.len(),
        2,
        "one ascending and one descending root"
    );
    let down = conics
        .solutions
        .iter()
        .find(|s| s.state.flight_path_angle_rad < 0.0)
        .unwrap();
    let st = &down.state;
    let y0 = burnout_state(st.radius_m, st.speed_m_s, st.flight_path_angle_rad);
    let (_, apsides) = propagate(mu, y0, tof, 1e-13);
    let lowest = apsides.iter().copied().fold(f64::INFINITY, f64::min);
    assert!(lowest < surface_m, "lowest apsis {lowest} m");
    problem.body = body;
    let solved = solve(&problem).unwrap();
    assert_eq!(solved.solutions.len(), 1, "only the ascending root");
    assert!(solved.solutions[0].state.flight_path_angle_rad > 0.0);
    for s in &solved.solutions {
        let st = &s.state;
        let y0 = burnout_state(st.radius_m, st.speed_m_s, st.flight_path_angle_rad);
        let (y, _) = propagate(mu, y0, tof, 1e-13);
        assert_relative_eq!(radius(&y), ra, max_relative = 1e-9);
        let v_apo = st.conic.angular_momentum_m2_s(mu) / ra;
        assert!(
            radial_speed(&y).abs() < 1e-6 * v_apo,
            "vr {}",
            radial_speed(&y)
        );
    }
}

#[test]
fn integrated_time_to_periapsis_matches_keplers_equation_elliptic_and_hyperbolic() {
    // Descending states approach periapsis: propagate for the time Kepler's
    // equation (elliptic and hyperbolic forms) predicts and check that the
    // state is at periapsis.
    let body = Body::from_name("earth").unwrap();
    let mu = body.mu_m3_s2;
    let rp = body.radius_m + 300e3;
    for conic in [
        Conic::from_apsides(rp, body.radius_m + 20_000e3).unwrap(),
        Conic::from_periapsis_ecc(rp, 1.4).unwrap(),
        Conic::from_periapsis_ecc(rp, 1.0 + 1e-7).unwrap(),
    ] {
        let states = burnout_for_conic(mu, &conic, body.radius_m + 3_000e3).unwrap();
        let st = states
            .iter()
            .find(|s| s.flight_path_angle_rad < 0.0)
            .unwrap();
        let tof = coast_times(mu, st.radius_m, st.speed_m_s, st.flight_path_angle_rad)
            .unwrap()
            .to_periapsis_s
            .unwrap();
        let y0 = burnout_state(st.radius_m, st.speed_m_s, st.flight_path_angle_rad);
        let (y, _) = propagate(mu, y0, tof, 1e-13);
        assert_relative_eq!(radius(&y), rp, max_relative = 1e-9);
        let v_peri = conic.angular_momentum_m2_s(mu) / rp;
        assert!(
            radial_speed(&y).abs() < 1e-6 * v_peri,
            "e {}: vr {}",
            conic.ecc(),
            radial_speed(&y)
        );
    }
}

#[test]
fn integrated_sweep_to_apoapsis_matches_the_angle_to_apoapsis() {
    // The angle the position vector turns through from burnout until the
    // radial speed changes sign at apoapsis, measured on the integrated
    // trajectory, equals 180 deg minus the burnout true anomaly.
    let body = Body::from_name("mars").unwrap();
    let mu = body.mu_m3_s2;
    let conic = Conic::from_apsides(body.radius_m + 250e3, body.radius_m + 8_000e3).unwrap();
    let st = burnout_for_conic(mu, &conic, body.radius_m + 1_000e3).unwrap()[0];
    let tof = coast_times(mu, st.radius_m, st.speed_m_s, st.flight_path_angle_rad)
        .unwrap()
        .to_apoapsis_s
        .unwrap();
    let y0 = burnout_state(st.radius_m, st.speed_m_s, st.flight_path_angle_rad);
    let (y, _) = propagate(mu, y0, tof, 1e-13);
    let swept = y[1].atan2(y[0]).rem_euclid(2.0 * std::f64::consts::PI);
    assert_relative_eq!(
        swept,
        std::f64::consts::PI - st.true_anomaly_rad,
        max_relative = 1e-9
    );
}

#[test]
fn integrated_coast_roots_in_hard_regimes_reach_periapsis_on_time() {
    // Roots the numerical solver returns for a coast-time target near
    // circular with a tiny angle and a free radius, two radii 2% apart
    // (reference roots: scripts/coast_reference.py, seed 1, case 248):
    // integrating the two-body
    // equations for the targeted time from each ends at periapsis (radial
    // speed through zero, radius at its minimum).
    use burnout::solve::target::{Target, TargetQuantity};
    use burnout::{solve, Problem};
    let earth = Body::from_name("earth").unwrap();
    let cases = [Problem {
        burnout_radius_m: None,
        targets: vec![Target::new(
            TargetQuantity::TimeToPeriapsis,
            4_199.312_606_077_78,
        )],
        flight_path_angle_rad: Some((-0.007_680_298_369_656_212f64).to_radians()),
        speed_m_s: Some(6_527.456_784_168_85),
        min_periapsis_alt_m: None,
        site: None,
        above_alt_m: None,
        body: earth,
    }];
    for p in &cases {
        let tof = p.targets.last().unwrap().value;
        let solved = solve(p).unwrap();
        assert!(solved.solutions.len() >= 2);
        let mu = p.body.mu_m3_s2;
        for s in &solved.solutions {
            let st = &s.state;
            let y0 = burnout_state(st.radius_m, st.speed_m_s, st.flight_path_angle_rad);
            let (y, _) = propagate(mu, y0, tof, 1e-13);
            let rp = st.conic.periapsis_radius_m();
            assert!(
                (radius(&y) - rp).abs() < 1e-8 * st.radius_m,
                "r {} vs rp {rp}",
                radius(&y)
            );
            let v_peri = st.conic.angular_momentum_m2_s(mu) / rp;
            assert!(
                radial_speed(&y).abs() < 1e-6 * v_peri,
                "vr {} at v_peri {v_peri}",
                radial_speed(&y)
            );
        }
    }
}
