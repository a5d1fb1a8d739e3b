//! The batch's bytes: the CSV rows written through the engine's
//! [`BatchSink`].

use crate::batch::BatchSink;
use crate::report::csv::push_cell_bytes;
use crate::report::rows::Record;
use crate::solve::problem::Solution;

/// Writes a batch as CSV.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct BatchCsv {
    /// Neutralise input cells (and header names) that a spreadsheet would
    /// read as a formula: see [`push_cell_bytes`].
    pub safe_cells: bool,
}

impl BatchSink for BatchCsv {
    fn header(&self, raw: &[Vec<u8>], columns: &[String], head: &mut Vec<u8>) {
        let width = raw.len();
        for (i, c) in columns.iter().enumerate() {
            if i > 0 {
                head.push(b',');
            }
            match raw.get(i) {
                // An input column named like a result column is written as
                // given_<name> (the contract's rule); others exactly as read.
                Some(raw) if i < width && c.as_bytes() == raw.as_slice() => {
                    push_cell_bytes(head, raw, self.safe_cells)
                }
                _ => push_cell_bytes(head, c.as_bytes(), false),
            }
        }
        head.push(b'\n');
    }

    fn prefix(
        &self,
        cells: &mut dyn Iterator<Item = Option<&[u8]>>,
        width: usize,
        buf: &mut Vec<u8>,
    ) {
        for (i, cell) in cells.enumerate() {
            if i > 0 {
                buf.push(b',');
            }
            if let Some(cell) = cell {
                push_cell_bytes(buf, cell, self.safe_cells);
            }
        }
        if width > 0 {
            buf.push(b',');
        }
    }

    fn solution(
        &self,
        mu_m3_s2: f64,
        s: &Solution,
        sensitivities: bool,
        site: bool,
        flight: Option<Option<&crate::solve::flight::FlightNumbers>>,
        buf: &mut Vec<u8>,
    ) {
        let mut rec = Record::new(buf);
        rec.solution(mu_m3_s2, s, sensitivities);
        if site {
            rec.site(s.site.as_ref());
        }
        if let Some(f) = flight {
            rec.flight(f);
        }
        rec.end();
    }

    fn failure(
        &self,
        status: &str,
        message: &str,
        sensitivities: bool,
        site: bool,
        flight: bool,
        buf: &mut Vec<u8>,
    ) {
        let mut rec = Record::new(buf);
        rec.failure(status, message, sensitivities);
        if site {
            rec.site(None);
        }
        if flight {
            rec.flight(None);
        }
        rec.end();
    }
}
