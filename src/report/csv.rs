//! CSV columns and rows for solved problems (shared by `solve --format csv`,
//! `scan` and `batch`).

pub use crate::columns::{sensitivity_columns, RESULT_COLUMNS, SITE_COLUMNS};
use crate::report::rows::Record;
use crate::solve::problem::Solved;
use std::io::Write;

/// The numeric values of [`SITE_COLUMNS`] for a site state (all but the
/// last, `plane`).
pub fn site_values(site: Option<&crate::physics::site::SiteState>) -> [Option<f64>; 8] {
    match site {
        None => [None; 8],
        Some(x) => [
            Some(x.launch_azimuth_rad.to_degrees()),
            Some(x.inertial_azimuth_rad.to_degrees()),
            Some(x.burnout_latitude_rad.to_degrees()),
            Some(x.burnout_longitude_rad.to_degrees()),
            Some(x.relative_speed_m_s),
            Some(x.relative_flight_path_angle_rad.to_degrees()),
            Some(x.relative_azimuth_rad.to_degrees()),
            Some(x.inclination_rad.to_degrees()),
        ],
    }
}

/// Whether a spreadsheet would read a cell starting this way as a formula
/// (`=`, `+`, `-`, `@`, or a tab or carriage return before one).
pub fn starts_like_formula(cell: &[u8]) -> bool {
    matches!(
        cell.first(),
        Some(b'=' | b'+' | b'-' | b'@' | b'\t' | b'\r')
    )
}

/// A message cell the tool writes, made safe for spreadsheets: text that
/// [`starts_like_formula`] gets a leading `'`, which spreadsheets take as
/// "this is text" (and hide). No message the tool writes starts with `=`,
/// `+`, `-` or `@` in any CSV.
pub fn safe_message(text: &str) -> std::borrow::Cow<'_, str> {
    if starts_like_formula(text.as_bytes()) {
        std::borrow::Cow::Owned(format!("'{text}"))
    } else {
        std::borrow::Cow::Borrowed(text)
    }
}

/// Appends one CSV cell of raw bytes (quoted when it holds `,`, `"`, or a
/// line break; bytes kept as read, invalid UTF-8 included). With
/// `neutralise`, a cell that [`starts_like_formula`] and is not a plain
/// number (`-2.5` stays a number) gets a leading `'`, as for
/// [`safe_message`]: the opt-in for inputs that go to a spreadsheet.
pub fn push_cell_bytes(buf: &mut Vec<u8>, cell: &[u8], neutralise: bool) {
    let guard = neutralise
        && starts_like_formula(cell)
        && !std::str::from_utf8(cell).is_ok_and(|t| {
            t.parse::<f64>().is_ok_and(f64::is_finite) && !t.starts_with(['\t', '\r'])
        });
    let quote = cell
        .iter()
        .any(|b| matches!(b, b',' | b'"' | b'\n' | b'\r'));
    if quote {
        buf.push(b'"');
    }
    if guard {
        buf.push(b'\'');
    }
    for &b in cell {
        if b == b'"' {
            buf.push(b'"');
        }
        buf.push(b);
    }
    if quote {
        buf.push(b'"');
    }
}

/// Writes a solved problem as CSV: header, then one row per solution
/// (the same record writer as scan and batch rows).
///
/// # Errors
/// I/O errors of `out`.
pub fn write(
    out: &mut impl Write,
    solved: &Solved,
    sensitivities: bool,
    flight: bool,
) -> std::io::Result<()> {
    let mut buf = Vec::with_capacity(1024);
    let mut header = Record::new(&mut buf);
    for c in RESULT_COLUMNS {
        header.text(c);
    }
    if sensitivities {
        for c in sensitivity_columns() {
            header.text(&c);
        }
    }
    if flight {
        for c in crate::columns::FLIGHT_COLUMNS {
            header.text(c);
        }
    }
    header.end();
    for s in &solved.solutions {
        let mut rec = Record::new(&mut buf);
        rec.solution(solved.body.mu_m3_s2, s, sensitivities);
        if flight {
            let f = crate::solve::flight::flight_numbers(
                &solved.body,
                &s.state,
                solved.problem.above_alt_m,
            );
            rec.flight(Some(&f));
        }
        rec.end();
    }
    out.write_all(&buf)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn messages_never_start_like_a_formula() {
        for bad in ["=1+1", "+x", "--fpa and --zenith", "@sum", "\tx"] {
            let safe = safe_message(bad);
            assert!(!starts_like_formula(safe.as_bytes()), "{safe}");
            assert!(safe.ends_with(bad));
        }
        assert_eq!(safe_message("burnout radius"), "burnout radius");
    }

    #[test]
    fn user_cells_are_kept_unless_neutralising_is_asked() {
        let cell = |c: &[u8], n| {
            let mut b = Vec::new();
            push_cell_bytes(&mut b, c, n);
            b
        };
        assert_eq!(cell(b"=HYPERLINK(1,2)", false), b"\"=HYPERLINK(1,2)\"");
        assert_eq!(cell(b"=HYPERLINK(1,2)", true), b"\"'=HYPERLINK(1,2)\"");
        assert_eq!(cell(b"-2.5", true), b"-2.5");
        assert_eq!(cell(b"-2.5deg", true), b"'-2.5deg");
        assert_eq!(cell(b"\xff@", true), b"\xff@");
    }

    #[test]
    fn sensitivity_columns_follow_contract_names() {
        let c = sensitivity_columns();
        assert_eq!(c.len(), 15);
        assert!(c.contains(&"d_apoapsis_radius_m_d_speed_m_s".to_string()));
    }
}
