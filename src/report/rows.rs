//! Result rows shared by `scan` and `batch`: which branches to keep, and a
//! CSV record writer that formats straight into a reused byte buffer.
//!
//! The one CSV record writer (solve's CSV, scan and batch rows): it formats
//! straight into a byte buffer, with no `String` per field, which matters
//! when a scan writes millions of rows.

use crate::solve::feasibility::Warning;
use crate::solve::problem::{Solution, SolutionView};

/// A short name for a warning, for compact human tables.
pub fn warning_tag(w: &Warning) -> String {
    match w {
        Warning::Suborbital { .. } => "suborbital".to_string(),
        Warning::PeriapsisBelowSurfaceNotReached { .. } => {
            "periapsis below surface, not reached".to_string()
        }
        Warning::LowPeriapsis { .. } => "low periapsis".to_string(),
        Warning::SearchNotExhaustive { .. } => "search not exhaustive".to_string(),
        Warning::IllConditioned => "ill-conditioned".to_string(),
    }
}

/// Appends the shortest text that reads back as `x` (as
/// `report::float`: no trailing `.0`); nothing for a non-finite value.
pub fn push_float(buf: &mut Vec<u8>, x: f64) {
    super::float::push_f64(buf, x);
}

/// Appends one CSV field, quoted when it holds a comma, quote or line break.
pub fn push_csv_text(buf: &mut Vec<u8>, text: &str) {
    if text
        .bytes()
        .any(|b| matches!(b, b',' | b'"' | b'\n' | b'\r'))
    {
        buf.push(b'"');
        for b in text.bytes() {
            if b == b'"' {
                buf.push(b'"');
            }
            buf.push(b);
        }
        buf.push(b'"');
    } else {
        buf.extend_from_slice(text.as_bytes());
    }
}

/// Number columns a solution row writes (10 results and 15 partials).
const NUMBER_SLOTS: usize = 25;

/// The text of the last number written in each numeric result column, so
/// that a column that repeats from row to row (the orbit's elements in an
/// altitude scan, the speed of the second branch) is formatted once.
#[derive(Debug, Clone)]
pub struct FloatMemo {
    slots: [(u64, u8, [u8; 24]); NUMBER_SLOTS],
}

impl Default for FloatMemo {
    fn default() -> Self {
        FloatMemo::new()
    }
}

impl FloatMemo {
    /// An empty memo.
    pub fn new() -> FloatMemo {
        FloatMemo {
            slots: [(0, 0, [0; 24]); NUMBER_SLOTS],
        }
    }

    /// Appends the text of `x` (as [`push_float`]) for column `slot`.
    fn push(&mut self, buf: &mut Vec<u8>, slot: usize, x: f64) {
        if !x.is_finite() {
            return;
        }
        let entry = &mut self.slots[slot];
        let bits = x.to_bits();
        const SIGN: u64 = 1 << 63;
        if entry.1 != 0 && entry.0 == bits ^ SIGN {
            // The same magnitude with the other sign (a mirrored branch's
            // angle and angle partials): the text gains or loses its '-'.
            let (n, text) = (entry.1 as usize, entry.2);
            if bits & SIGN != 0 {
                entry.2[0] = b'-';
                entry.2[1..=n].copy_from_slice(&text[..n]);
                entry.1 = (n + 1) as u8;
            } else {
                entry.2[..n - 1].copy_from_slice(&text[1..n]);
                entry.1 = (n - 1) as u8;
            }
            entry.0 = bits;
        } else if entry.1 == 0 || entry.0 != bits {
            // At most MAX_LEN (24) bytes: the slot holds any f64's text.
            let n = super::float::format_into(&mut entry.2, x);
            entry.1 = n as u8;
            entry.0 = bits;
        }
        // A fixed-size copy then a cut: the compiler inlines a 24-byte move,
        // where a copy of the exact length would call memmove per number.
        let len = buf.len();
        buf.extend_from_slice(&entry.2);
        buf.truncate(len + entry.1 as usize);
    }
}

/// A CSV record being written into a byte buffer.
pub struct Record<'a> {
    buf: &'a mut Vec<u8>,
    fields: usize,
}

impl<'a> Record<'a> {
    /// Starts a record at the end of `buf`.
    pub fn new(buf: &'a mut Vec<u8>) -> Record<'a> {
        Record { buf, fields: 0 }
    }

    fn sep(&mut self) {
        if self.fields > 0 {
            self.buf.push(b',');
        }
        self.fields += 1;
    }

    /// A number field (shortest round trip), empty if not finite.
    pub fn float(&mut self, x: f64) -> &mut Self {
        self.sep();
        push_float(self.buf, x);
        self
    }

    /// An optional number field; empty for `None`.
    pub fn opt(&mut self, x: Option<f64>) -> &mut Self {
        self.sep();
        if let Some(x) = x {
            push_float(self.buf, x);
        }
        self
    }

    /// A text field, quoted when needed.
    pub fn text(&mut self, text: &str) -> &mut Self {
        self.sep();
        push_csv_text(self.buf, text);
        self
    }

    /// `n` empty fields.
    pub fn blanks(&mut self, n: usize) -> &mut Self {
        for _ in 0..n {
            self.sep();
        }
        self
    }

    /// The result fields of one solution: status `ok`, warnings as the
    /// message, then the numbers of [`crate::columns::RESULT_COLUMNS`] and, if
    /// asked, the 15 partials.
    pub fn solution(&mut self, mu_m3_s2: f64, s: &Solution, sensitivities: bool) -> &mut Self {
        self.solution_memo(mu_m3_s2, s.into(), sensitivities, &mut FloatMemo::new())
    }

    /// As [`Record::solution`], reusing the text of numbers that repeat
    /// from the previous row written with the same `memo`.
    pub fn solution_memo(
        &mut self,
        mu_m3_s2: f64,
        s: SolutionView,
        sensitivities: bool,
        memo: &mut FloatMemo,
    ) -> &mut Self {
        let st = s.state;
        self.text("ok");
        if s.warnings.is_empty() {
            self.sep();
        } else {
            // Warnings are rare: building their text costs nothing overall.
            let joined = s
                .warnings
                .iter()
                .map(|w| w.to_string())
                .collect::<Vec<_>>()
                .join("; ");
            self.text(&super::csv::safe_message(&joined));
        }
        self.text(st.branch.name());
        let numbers = crate::columns::result_values(mu_m3_s2, st);
        for (slot, x) in numbers.into_iter().enumerate() {
            self.sep();
            if let Some(x) = x {
                memo.push(self.buf, slot, x);
            }
        }
        if sensitivities {
            let mut slot = numbers.len();
            for row in s.sensitivity.rows {
                for k in 0..3 {
                    self.sep();
                    if let Some(r) = row {
                        memo.push(self.buf, slot, r[k]);
                    }
                    slot += 1;
                }
            }
        }
        self
    }

    /// The [`super::csv::SITE_COLUMNS`] fields (blank without a site state).
    pub fn site(&mut self, site: Option<&crate::physics::site::SiteState>) -> &mut Self {
        for v in super::csv::site_values(site) {
            self.opt(v);
        }
        self.text(site.map_or("", |x| {
            crate::physics::site::plane_label(x.launch_azimuth_rad)
        }))
    }

    /// The [`crate::columns::FLIGHT_COLUMNS`] fields (blank without numbers).
    pub fn flight(&mut self, f: Option<&crate::solve::flight::FlightNumbers>) -> &mut Self {
        for v in crate::columns::flight_values(f) {
            self.opt(v);
        }
        self
    }

    /// The result fields of a row that did not solve: status, message, blanks.
    pub fn failure(&mut self, status: &str, message: &str, sensitivities: bool) -> &mut Self {
        self.text(status).text(&super::csv::safe_message(message));
        let blanks = crate::columns::RESULT_COLUMNS.len() - 2 + if sensitivities { 15 } else { 0 };
        self.blanks(blanks)
    }

    /// Ends the record with a newline.
    pub fn end(&mut self) {
        self.buf.push(b'\n');
        self.fields = 0;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::input::problem::{problem_from_inputs, Inputs};
    use crate::physics::state::Branch;
    use crate::solve::problem::{BranchChoice, Solved};

    fn solved(pairs: &[(&str, &str)]) -> Solved {
        let inputs: Inputs = pairs
            .iter()
            .map(|(k, v)| (k.to_string(), v.to_string()))
            .collect();
        crate::solve(&problem_from_inputs(&inputs).unwrap()).unwrap()
    }

    fn read_back(bytes: &[u8]) -> Vec<Vec<String>> {
        csv::ReaderBuilder::new()
            .has_headers(false)
            .from_reader(bytes)
            .records()
            .map(|r| r.unwrap().iter().map(str::to_string).collect())
            .collect()
    }

    #[test]
    fn solution_record_reads_back_as_the_solution_bit_for_bit() {
        // A suborbital shot: its warning text holds commas, so quoting is exercised.
        for pairs in [
            &[
                ("burnout-alt", "200"),
                ("periapsis-alt", "185"),
                ("apoapsis-alt", "35786"),
            ][..],
            &[
                ("burnout-alt", "45"),
                ("fpa", "84"),
                ("apoapsis-alt", "250"),
            ][..],
            &[
                ("burnout-alt", "300"),
                ("periapsis-alt", "300"),
                ("c3", "12"),
            ][..],
        ] {
            let s = solved(pairs);
            let mu = s.body.mu_m3_s2;
            for sens in [false, true] {
                let mut buf = Vec::new();
                for sol in &s.solutions {
                    Record::new(&mut buf).solution(mu, sol, sens).end();
                }
                let rows = read_back(&buf);
                assert_eq!(rows.len(), s.solutions.len());
                for (row, sol) in rows.iter().zip(&s.solutions) {
                    assert_eq!(row.len(), 13 + if sens { 15 } else { 0 }, "{pairs:?}");
                    let st = &sol.state;
                    let c = &st.conic;
                    let msg: Vec<String> = sol.warnings.iter().map(|w| w.to_string()).collect();
                    assert_eq!(row[0], "ok");
                    assert_eq!(row[1], crate::report::csv::safe_message(&msg.join("; ")));
                    assert_eq!(row[2], st.branch.name());
                    let want = [
                        Some(st.speed_m_s),
                        Some(st.flight_path_angle_rad.to_degrees()),
                        Some(st.true_anomaly_rad.to_degrees()),
                        Some(c.periapsis_radius_m()),
                        c.apoapsis_radius_m(),
                        c.sma_m(),
                        Some(c.ecc()),
                        c.period_s(mu),
                        Some(c.c3_m2_s2(mu)),
                        Some(st.radius_m),
                    ];
                    for (cell, w) in row[3..13].iter().zip(want) {
                        match w {
                            Some(x) => {
                                assert_eq!(cell.parse::<f64>().unwrap().to_bits(), x.to_bits())
                            }
                            None => assert_eq!(cell, ""),
                        }
                    }
                    if sens {
                        let partials = sol
                            .sensitivity
                            .rows
                            .iter()
                            .flat_map(|r| (0..3).map(move |k| r.map(|x| x[k])));
                        for (cell, w) in row[13..].iter().zip(partials) {
                            match w {
                                Some(x) => {
                                    assert_eq!(cell.parse::<f64>().unwrap().to_bits(), x.to_bits())
                                }
                                None => assert_eq!(cell, ""),
                            }
                        }
                    }
                }
            }
        }
        let sub = solved(&[
            ("burnout-alt", "45"),
            ("fpa", "84"),
            ("apoapsis-alt", "250"),
        ]);
        assert!(!sub.solutions[0].warnings.is_empty(), "the case must warn");
    }

    #[test]
    fn failure_record_is_status_message_and_blanks() {
        let mut buf = Vec::new();
        Record::new(&mut buf)
            .failure("infeasible", "a \"quoted\", message", true)
            .end();
        let mut want = vec![
            "infeasible".to_string(),
            "a \"quoted\", message".to_string(),
        ];
        want.extend(std::iter::repeat_n(String::new(), 11 + 15));
        assert_eq!(read_back(&buf), vec![want]);
    }

    #[test]
    fn branch_choice_reads_names_and_rejects_others() {
        assert_eq!(
            BranchChoice::from_name("--branch", "").unwrap(),
            BranchChoice::Both
        );
        assert_eq!(
            BranchChoice::from_name("--branch", " Descending").unwrap(),
            BranchChoice::Descending
        );
        let e = BranchChoice::from_name("branch", "up")
            .unwrap_err()
            .to_string();
        assert_eq!(
            e,
            "invalid branch 'up' for branch: expected ascending, descending or both"
        );
        assert!(BranchChoice::Ascending.keeps(Branch::Ascending));
        assert!(!BranchChoice::Ascending.keeps(Branch::Descending));
    }

    #[test]
    fn memo_gives_the_formatter_s_text_for_repeats_and_sign_flips() {
        let mut memo = FloatMemo::new();
        // Values and their mirror images in one slot, the longest text
        // (24 bytes with its sign) included; each must read as push_float.
        let xs = [
            2.5147886911818866,
            -2.5147886911818866,
            -2.5147886911818866,
            2.5147886911818866,
            -2.2250738585072014e-308,
            2.2250738585072014e-308,
            -2.2250738585072014e-308,
            0.0,
            -0.0,
            1e16,
            -1e16,
        ];
        for x in xs {
            let (mut got, mut want) = (Vec::new(), Vec::new());
            memo.push(&mut got, 3, x);
            push_float(&mut want, x);
            assert_eq!(got, want, "{x:e}");
        }
    }

    #[test]
    fn floats_drop_the_trailing_point_and_round_trip() {
        let mut buf = Vec::new();
        push_float(&mut buf, 6578137.0);
        buf.push(b' ');
        push_float(&mut buf, 1.0 / 3.0);
        buf.push(b' ');
        push_float(&mut buf, f64::NAN);
        assert_eq!(
            String::from_utf8(buf).unwrap(),
            "6578137 0.3333333333333333 "
        );
    }
}
