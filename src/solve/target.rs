//! Target quantities and the closed-form conversion of any valid pair of them
//! into a conic.

use crate::error::{finite, g, mention, positive, Error};
use crate::physics::orbit::{check_ecc, Conic};
use std::f64::consts::PI;

/// A quantity of the target orbit (or of the coast to it) that can be asked for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum TargetQuantity {
    /// Periapsis radius, m.
    PeriapsisRadius,
    /// Apoapsis radius, m.
    ApoapsisRadius,
    /// Semi-major axis, m (negative for hyperbolas).
    Sma,
    /// Eccentricity.
    Ecc,
    /// Orbital period, s.
    Period,
    /// Characteristic energy C3, m^2/s^2.
    C3,
    /// Semi-latus rectum, m.
    SemiLatusRectum,
    /// Specific orbital energy, J/kg.
    SpecificEnergy,
    /// Time of flight from burnout to apoapsis, s.
    TimeToApoapsis,
    /// Time of flight from burnout to periapsis, s.
    TimeToPeriapsis,
    /// Angle travelled from burnout to apoapsis, rad.
    AngleToApoapsis,
}

impl TargetQuantity {
    /// Name in messages and machine output.
    pub fn name(self) -> &'static str {
        match self {
            TargetQuantity::PeriapsisRadius => "periapsis radius",
            TargetQuantity::ApoapsisRadius => "apoapsis radius",
            TargetQuantity::Sma => "semi-major axis",
            TargetQuantity::Ecc => "eccentricity",
            TargetQuantity::Period => "period",
            TargetQuantity::C3 => "c3",
            TargetQuantity::SemiLatusRectum => "semi-latus rectum",
            TargetQuantity::SpecificEnergy => "specific energy",
            TargetQuantity::TimeToApoapsis => "time to apoapsis",
            TargetQuantity::TimeToPeriapsis => "time to periapsis",
            TargetQuantity::AngleToApoapsis => "angle to apoapsis",
        }
    }

    /// Machine key with SI unit, as used for residuals.
    pub fn key(self) -> &'static str {
        match self {
            TargetQuantity::PeriapsisRadius => "periapsis_radius_m",
            TargetQuantity::ApoapsisRadius => "apoapsis_radius_m",
            TargetQuantity::Sma => "sma_m",
            TargetQuantity::Ecc => "ecc",
            TargetQuantity::Period => "period_s",
            TargetQuantity::C3 => "c3_m2_s2",
            TargetQuantity::SemiLatusRectum => "semi_latus_rectum_m",
            TargetQuantity::SpecificEnergy => "specific_energy_j_kg",
            TargetQuantity::TimeToApoapsis => "time_to_apoapsis_s",
            TargetQuantity::TimeToPeriapsis => "time_to_periapsis_s",
            TargetQuantity::AngleToApoapsis => "angle_to_apoapsis_deg",
        }
    }

    /// SI unit of the value.
    pub fn unit(self) -> &'static str {
        match self {
            TargetQuantity::PeriapsisRadius
            | TargetQuantity::ApoapsisRadius
            | TargetQuantity::Sma
            | TargetQuantity::SemiLatusRectum => "m",
            TargetQuantity::Ecc => "",
            TargetQuantity::Period
            | TargetQuantity::TimeToApoapsis
            | TargetQuantity::TimeToPeriapsis => "s",
            TargetQuantity::C3 => "m2/s2",
            TargetQuantity::SpecificEnergy => "J/kg",
            TargetQuantity::AngleToApoapsis => "rad",
        }
    }

    /// Whether the quantity depends only on the orbit (not on where on it
    /// burnout happens), so that a pair of them fixes the conic in closed form.
    pub fn is_orbit_element(self) -> bool {
        !matches!(
            self,
            TargetQuantity::TimeToApoapsis
                | TargetQuantity::TimeToPeriapsis
                | TargetQuantity::AngleToApoapsis
        )
    }
}

/// One target: a quantity and its SI value.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Target {
    /// What is targeted.
    pub quantity: TargetQuantity,
    /// Its value in SI (radii already measured from the body's centre).
    pub value: f64,
    /// Where the value comes from.
    pub source: TargetSource,
}

/// Where a target's value comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum TargetSource {
    /// Given by the caller.
    #[default]
    Given,
    /// Derived from a given burnout speed (the C3 that speed has at the
    /// burnout radius).
    BurnoutSpeed,
}

impl Target {
    /// Makes a target from a given value.
    pub fn new(quantity: TargetQuantity, value: f64) -> Target {
        Target {
            quantity,
            value,
            source: TargetSource::Given,
        }
    }

    /// The energy a given burnout speed fixes, as a C3 target.
    pub fn c3_of_burnout_speed(c3_m2_s2: f64) -> Target {
        Target {
            quantity: TargetQuantity::C3,
            value: c3_m2_s2,
            source: TargetSource::BurnoutSpeed,
        }
    }

    /// The target as a message mentions it (see [`crate::error::mention`]):
    /// by the quantity's key, or `c3-of-speed` for the energy of a burnout
    /// speed.
    pub fn mention(&self) -> String {
        match self.source {
            TargetSource::Given => mention(self.quantity.key(), self.quantity.name()),
            TargetSource::BurnoutSpeed => mention("c3-of-speed", "the c3 of the burnout speed"),
        }
    }

    /// Checks the value is finite and within the quantity's physical domain.
    ///
    /// # Errors
    /// [`Error::NotFinite`], [`Error::NotPositive`] or [`Error::OutOfRange`].
    pub fn validate(&self) -> Result<(), Error> {
        use TargetQuantity as Q;
        let name = self.quantity.name();
        finite(name, self.value)?;
        match self.quantity {
            Q::PeriapsisRadius | Q::ApoapsisRadius | Q::SemiLatusRectum => {
                positive(name, self.value, "m")?;
            }
            Q::Period | Q::TimeToApoapsis | Q::TimeToPeriapsis => {
                positive(name, self.value, "s")?;
            }
            Q::Ecc => {
                check_ecc(self.value)?;
            }
            Q::Sma => {
                if self.value == 0.0 {
                    return Err(Error::OutOfRange {
                        quantity: name,
                        value: 0.0,
                        unit: "m",
                        expected: "a non-zero length (negative for a hyperbola)".into(),
                    });
                }
            }
            Q::AngleToApoapsis => {
                if !(0.0..=2.0 * PI).contains(&self.value) {
                    return Err(Error::OutOfRange {
                        quantity: name,
                        value: self.value.to_degrees(),
                        unit: "deg",
                        expected: "between 0 and 360 deg".into(),
                    });
                }
            }
            Q::C3 | Q::SpecificEnergy => {}
        }
        Ok(())
    }
}

/// The orbit's "size" as the inverse semi-major axis 1/a, 1/m, from a target
/// that fixes it (sma, period, C3 or specific energy).
fn inverse_sma(mu: f64, t: &Target) -> Option<f64> {
    match t.quantity {
        TargetQuantity::Sma => Some(1.0 / t.value),
        TargetQuantity::Period => {
            let n = 2.0 * PI / t.value;
            Some((n * n / mu).cbrt())
        }
        TargetQuantity::C3 => Some(-t.value / mu),
        TargetQuantity::SpecificEnergy => Some(-2.0 * t.value / mu),
        _ => None,
    }
}

/// Builds the conic fixed by two orbit-element targets.
///
/// Pairs: any two of periapsis radius, apoapsis radius, eccentricity and
/// semi-latus rectum, or one of them with one size quantity (sma, period, C3,
/// specific energy). Two size quantities, or the same quantity twice, cannot
/// define an orbit.
///
/// # Errors
/// [`Error::Usage`] for pairs that cannot define an orbit; [`Error::Infeasible`]
/// for values that contradict each other (e.g. an apoapsis with C3 >= 0).
pub fn conic_from_pair(mu_m3_s2: f64, a: &Target, b: &Target) -> Result<Conic, Error> {
    use TargetQuantity as Q;
    a.validate()?;
    b.validate()?;
    if !a.quantity.is_orbit_element() || !b.quantity.is_orbit_element() {
        return Err(Error::Usage(format!(
            "{} and {} have no closed-form orbit",
            a.mention(),
            b.mention()
        )));
    }
    if a.quantity == b.quantity {
        return Err(Error::Usage(format!(
            "{} and {} both give the {}: give it once, with a second target quantity",
            a.mention(),
            b.mention(),
            a.quantity.name()
        )));
    }
    let (sa, sb) = (inverse_sma(mu_m3_s2, a), inverse_sma(mu_m3_s2, b));
    if sa.is_some() && sb.is_some() {
        return Err(Error::Usage(format!(
            "{} and {} both fix only the orbit's size and energy, which cannot define an orbit: pair one of them with a periapsis, apoapsis, eccentricity or semi-latus rectum",
            a.mention(), b.mention()
        )));
    }
    // Order so that a size quantity, if any, is second.
    let (x, y, alpha) = match (sa, sb) {
        (Some(al), None) => (b, a, Some(al)),
        (None, Some(al)) => (a, b, Some(al)),
        _ => (a, b, None),
    };
    if let Some(alpha) = alpha {
        return conic_from_size(mu_m3_s2, x, y, alpha);
    }
    // Two shape quantities; order them canonically.
    let (x, y) = if x.quantity <= y.quantity {
        (x, y)
    } else {
        (y, x)
    };
    let (u, v) = (x.value, y.value);
    match (x.quantity, y.quantity) {
        (Q::PeriapsisRadius, Q::ApoapsisRadius) => Conic::from_apsides(u, v),
        (Q::PeriapsisRadius, Q::Ecc) => Conic::from_periapsis_ecc(u, v),
        (Q::ApoapsisRadius, Q::Ecc) => {
            if v >= 1.0 {
                return Err(Error::Infeasible(format!(
                    "{} {} m needs a closed orbit but {} {} is not below 1",
                    x.mention(),
                    g(u),
                    y.mention(),
                    g(v)
                )));
            }
            Conic::from_apsides_keeping_ecc(u * (1.0 - v) / (1.0 + v), u, v)
        }
        (Q::PeriapsisRadius, Q::SemiLatusRectum) => {
            if v < u {
                return Err(Error::Infeasible(format!(
                    "semi-latus rectum {} m is below periapsis radius {} m: no conic has p < rp",
                    g(v),
                    g(u)
                )));
            }
            let ecc = v / u - 1.0;
            if ecc < 1.0 {
                // ra = p / (1 - e) = p rp / (2 rp - p), exact in the inputs.
                Conic::from_apsides(u, v * u / (2.0 * u - v))
            } else {
                Conic::from_periapsis_ecc(u, ecc)
            }
        }
        (Q::ApoapsisRadius, Q::SemiLatusRectum) => {
            if v > u {
                return Err(Error::Infeasible(format!(
                    "semi-latus rectum {} m is above apoapsis radius {} m: no ellipse has p > ra",
                    g(v),
                    g(u)
                )));
            }
            // rp = p ra / (2 ra - p).
            Conic::from_apsides(v * u / (2.0 * u - v), u)
        }
        (Q::Ecc, Q::SemiLatusRectum) => {
            let rp = v / (1.0 + u);
            if u < 1.0 {
                Conic::from_apsides_keeping_ecc(rp, v / (1.0 - u), u)
            } else {
                Conic::from_periapsis_ecc(rp, u)
            }
        }
        _ => Err(Error::Usage(format!(
            "{} and {} cannot define an orbit together",
            x.mention(),
            y.mention()
        ))),
    }
}

/// Conic from one shape quantity `x` and the inverse semi-major axis `alpha` (1/m) given by `s`.
fn conic_from_size(mu: f64, x: &Target, s: &Target, alpha: f64) -> Result<Conic, Error> {
    use TargetQuantity as Q;
    let u = x.value;
    let describe_s = || format!("{} {} {}", s.mention(), g(s.value), s.quantity.unit());
    match x.quantity {
        Q::PeriapsisRadius => {
            if alpha > 0.0 {
                let a = 1.0 / alpha;
                if u > a {
                    return Err(Error::Infeasible(format!(
                        "periapsis radius {} m is above the semi-major axis {} m set by {}",
                        g(u),
                        g(a),
                        describe_s()
                    )));
                }
                Conic::from_apsides(u, 2.0 * a - u)
            } else {
                // Keep the given size (C3, sma) exact: e = 1 - rp/a derived.
                Conic::open_from_periapsis_inv_sma(u, alpha)
            }
        }
        Q::ApoapsisRadius => {
            if alpha <= 0.0 {
                return Err(Error::Infeasible(format!(
                    "{} {} m needs a closed orbit but {} gives an open one (c3 {} m2/s2 >= 0)",
                    x.mention(),
                    g(u),
                    describe_s(),
                    g(-alpha * mu)
                )));
            }
            let a = 1.0 / alpha;
            let rp = 2.0 * a - u;
            if u < a || rp <= 0.0 {
                return Err(Error::Infeasible(format!(
                    "apoapsis radius {} m is incompatible with the semi-major axis {} m set by {}: expected a <= ra < 2a",
                    g(u),
                    g(a),
                    describe_s()
                )));
            }
            Conic::from_apsides(rp, u)
        }
        Q::Ecc => {
            if alpha == 0.0 {
                if crate::physics::orbit::exactly(u, 1.0) {
                    return Err(Error::Usage(format!(
                        "{} 1 and {} both say 'parabola' and leave its size free: give a periapsis or semi-latus rectum",
                        x.mention(), s.mention()
                    )));
                }
                return Err(Error::Infeasible(format!(
                    "{} {} is not parabolic but {} gives a parabola (c3 0)",
                    x.mention(),
                    g(u),
                    s.mention()
                )));
            }
            if (alpha > 0.0 && u >= 1.0) || (alpha < 0.0 && u <= 1.0) {
                return Err(Error::Infeasible(format!(
                    "eccentricity {} contradicts {} (an {} orbit)",
                    g(u),
                    describe_s(),
                    if alpha > 0.0 { "elliptic" } else { "open" }
                )));
            }
            let a = 1.0 / alpha;
            if alpha > 0.0 {
                Conic::from_apsides_keeping_ecc(a * (1.0 - u), a * (1.0 + u), u)
            } else {
                Conic::open_from_periapsis_inv_sma(a * (1.0 - u), alpha).map(|c| c.with_ecc(u))
            }
        }
        Q::SemiLatusRectum => {
            let e2 = 1.0 - u * alpha;
            if e2 < 0.0 {
                return Err(Error::Infeasible(format!(
                    "semi-latus rectum {} m exceeds the semi-major axis {} m set by {}",
                    g(u),
                    g(1.0 / alpha),
                    describe_s()
                )));
            }
            let ecc = e2.sqrt();
            if ecc < 1.0 {
                // ra = 2a - rp: p / (1 - e) cancels for near-radial orbits.
                let rp = u / (1.0 + ecc);
                Conic::from_apsides(rp, (2.0 / alpha - rp).max(rp))
            } else {
                Conic::open_from_periapsis_inv_sma(u / (1.0 + ecc), alpha)
            }
        }
        _ => Err(Error::Usage(format!(
            "{} and {} cannot define an orbit together",
            x.mention(),
            s.mention()
        ))),
    }
}

#[cfg(test)]
#[allow(clippy::float_cmp)] // exact zeros, exact parabolas and mirror images are asserted on purpose
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use TargetQuantity as Q;

    const MU: f64 = crate::physics::body::EARTH_MU_M3_S2;

    fn t(q: Q, v: f64) -> Target {
        Target::new(q, v)
    }

    fn reference() -> Conic {
        Conic::from_apsides(6_563_137.0, 42_164_137.0).unwrap()
    }

    #[test]
    fn every_closed_form_pair_reproduces_the_same_ellipse() {
        let c = reference();
        let rp = c.periapsis_radius_m();
        let ra = c.apoapsis_radius_m().unwrap();
        let vals = [
            t(Q::PeriapsisRadius, rp),
            t(Q::ApoapsisRadius, ra),
            t(Q::Sma, c.sma_m().unwrap()),
            t(Q::Ecc, c.ecc()),
            t(Q::Period, c.period_s(MU).unwrap()),
            t(Q::C3, c.c3_m2_s2(MU)),
            t(Q::SemiLatusRectum, c.semi_latus_rectum_m()),
            t(Q::SpecificEnergy, c.specific_energy_j_kg(MU)),
        ];
        let size = |q: Q| matches!(q, Q::Sma | Q::Period | Q::C3 | Q::SpecificEnergy);
        for (i, a) in vals.iter().enumerate() {
            for b in &vals[i + 1..] {
                if size(a.quantity) && size(b.quantity) {
                    assert!(matches!(conic_from_pair(MU, a, b), Err(Error::Usage(_))));
                    continue;
                }
                let got = conic_from_pair(MU, a, b).unwrap();
                assert_relative_eq!(got.periapsis_radius_m(), rp, max_relative = 1e-12);
                assert_relative_eq!(got.apoapsis_radius_m().unwrap(), ra, max_relative = 1e-12);
            }
        }
    }

    #[test]
    fn hyperbolic_pairs_agree() {
        let c = Conic::from_periapsis_ecc(6_678_137.0, 1.2).unwrap();
        let c3 = c.c3_m2_s2(MU);
        for (a, b) in [
            (t(Q::PeriapsisRadius, 6_678_137.0), t(Q::C3, c3)),
            (t(Q::Ecc, 1.2), t(Q::C3, c3)),
            (t(Q::Ecc, 1.2), t(Q::Sma, c.sma_m().unwrap())),
            (t(Q::SemiLatusRectum, c.semi_latus_rectum_m()), t(Q::C3, c3)),
            (
                t(Q::PeriapsisRadius, 6_678_137.0),
                t(Q::SemiLatusRectum, c.semi_latus_rectum_m()),
            ),
        ] {
            let got = conic_from_pair(MU, &a, &b).unwrap();
            assert_relative_eq!(got.ecc(), 1.2, max_relative = 1e-12);
            assert_relative_eq!(got.periapsis_radius_m(), 6_678_137.0, max_relative = 1e-12);
        }
    }

    #[test]
    fn parabola_from_periapsis_and_zero_c3() {
        let got = conic_from_pair(MU, &t(Q::PeriapsisRadius, 7e6), &t(Q::C3, 0.0)).unwrap();
        assert_eq!(got.ecc(), 1.0);
    }

    #[test]
    fn contradictions_are_infeasible_and_bad_pairs_are_usage() {
        assert!(matches!(
            conic_from_pair(MU, &t(Q::ApoapsisRadius, 7e6), &t(Q::C3, 1e6)),
            Err(Error::Infeasible(_))
        ));
        assert!(matches!(
            conic_from_pair(MU, &t(Q::Ecc, 1.5), &t(Q::Sma, 7e6)),
            Err(Error::Infeasible(_))
        ));
        assert!(matches!(
            conic_from_pair(MU, &t(Q::Ecc, 1.0), &t(Q::C3, 0.0)),
            Err(Error::Usage(_))
        ));
        assert!(matches!(
            conic_from_pair(MU, &t(Q::PeriapsisRadius, 7e6), &t(Q::PeriapsisRadius, 7e6)),
            Err(Error::Usage(_))
        ));
        assert!(matches!(
            conic_from_pair(MU, &t(Q::PeriapsisRadius, 8e6), &t(Q::ApoapsisRadius, 7e6)),
            Err(Error::Infeasible(_))
        ));
        assert!(
            conic_from_pair(MU, &t(Q::PeriapsisRadius, -1.0), &t(Q::ApoapsisRadius, 7e6)).is_err()
        );
    }

    #[test]
    fn given_size_and_small_ecc_are_echoed_exactly() {
        // Regression: a given C3 or sma on a near-parabolic hyperbola, and a
        // given tiny eccentricity, were recomputed from rounded derived values.
        let c3 = 0.010968584847934663;
        let c = conic_from_pair(MU, &t(Q::PeriapsisRadius, 8e6), &t(Q::C3, c3)).unwrap();
        assert_relative_eq!(c.c3_m2_s2(MU), c3, max_relative = 1e-15);
        let c = conic_from_pair(MU, &t(Q::Sma, -3.2e17), &t(Q::PeriapsisRadius, 3e6)).unwrap();
        assert_relative_eq!(c.sma_m().unwrap(), -3.2e17, max_relative = 1e-15);
        let e = 1.0825215416371034e-12;
        let c = conic_from_pair(MU, &t(Q::ApoapsisRadius, 24_652_674.5), &t(Q::Ecc, e)).unwrap();
        assert_eq!(c.ecc(), e);
    }
}
